"""Which prices and GWP values a page uses and where they come from, for the page and its exports.

The prices rule of the dashboard: your saved values (Reference page) apply on every page,
over the built-in invented example prices. A plan's or a scenario's own ``[prices]`` table
is used only where you choose it (a switch beside the plan or scenario), and then only for
the items it names.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import replace
from datetime import UTC, datetime

import pandas as pd
import streamlit as st

from model.cautions import is_unsafe
from model.io.case_mix import case_mix_to_csv
from model.present.provenance import InputFile, Provenance, program_version, provenance
from model.present.readable import when_text
from model.reference import Reference

from .common import ViewSettings, get_store, md

_PRICE_NAMES = {
    "oxygen_per_1000_l": "oxygen",
    "air_per_1000_l": "medical air",
    "nitrous_oxide_per_1000_l": "nitrous oxide",
    "absorbent_per_kg": "CO2 absorbent",
}


def price_items(prices: Mapping) -> list[str]:
    """Plain names of the items a price table sets ("sevoflurane bottle", "oxygen", ...)."""
    out = [f"{a} bottle" for a in (prices.get("bottle") or {})]
    out += [name for key, name in _PRICE_NAMES.items() if key in prices]
    return out


def _saved_version() -> tuple[dict, str]:
    """The saved values in use and "version N, saved <UTC time>" ("" when none were saved)."""
    store = get_store()
    history = store.history("overrides", "dashboard")
    if not history:
        return {}, ""
    try:
        saved = store.load_overrides()
    except Exception:  # an unreadable set: ui.common.reference() says so and uses the defaults
        saved = {}
    return saved, f"version {history[0].version}, saved {when_text(history[0].saved_at)}"


def prices_text(own: tuple[str, Mapping] | None = None) -> str:
    """Where the prices in use come from, in one sentence.

    ``own``: (what, price table) when the user chose a file's own prices, e.g.
    ``("the scenario 'Fernhollow baseline'", scenario.prices)``.
    """
    saved, version = _saved_version()
    mine = price_items(saved.get("prices") or {})
    parts = []
    if own is not None and own[1] is None:
        parts.append(f"the own prices of {own[0]} where it gives them (chosen on this page)")
    elif own is not None and price_items(own[1]):
        parts.append(f"the own prices of {own[0]} for {', '.join(price_items(own[1]))} (chosen on this page)")
    if mine:
        parts.append(f"your values from the Reference page ({version}) for {', '.join(mine)}")
    parts.append("built-in invented example prices" + (" for the rest" if parts else ""))
    return "; ".join(parts)


def gwp_text(view: ViewSettings, ref: Reference) -> str:
    """Which GWP values are in use and where they come from."""
    label = ref.gwp_sources[view.gwp_source].label
    if view.gwp_source == "user":
        return f"{label} (your values from the Reference page), chosen in the sidebar"
    return f"{label}, chosen in the sidebar"


def in_use(view: ViewSettings, ref: Reference, own: tuple[str, Mapping] | None = None) -> dict:
    """The rows every export carries: prices and GWP values in use with their origin, the program."""
    return {
        "prices in use": prices_text(own),
        "GWP values": gwp_text(view, ref),
        "MAC at age 40": ref.mac_label,
        "currency": ref.prices.currency,
        "program": f"fresh-gas-ledger {program_version()}",
    }


def block(
    view: ViewSettings,
    ref: Reference,
    what: str,
    *,
    warnings: Iterable[str] | None = None,
    lowest_inspired_o2_pct: float | None = None,
    files: Iterable[InputFile] = (),
    own: tuple[str, Mapping] | None = None,
    settings: Mapping[str, object] | None = None,
    not_assessed_because: str | None = None,
) -> Provenance:
    """A page's export provenance (:func:`model.present.provenance.provenance`, the one block).

    ``warnings`` None: case records, where no inspired O2 is predicted (or
    ``not_assessed_because`` says why no safety state is given).
    """
    from .cautions import grouped

    hazards = [] if warnings is None else [t for sev, t, _ in grouped(warnings) if sev == "hazard"]
    return provenance(
        what,
        unsafe=None if warnings is None else is_unsafe(warnings),
        lowest_inspired_o2_pct=lowest_inspired_o2_pct,
        hazards=hazards,
        files=files,
        prices=prices_text(own),
        gwp_source=gwp_text(view, ref),
        settings={
            "currency": ref.prices.currency,
            "room temperature": f"{view.temperature_c:g} °C",
            **(settings or {}),
        },
        **({"not_assessed_because": not_assessed_because} if not_assessed_because else {}),
    )


def made_now(prov: Provenance) -> Provenance:
    """The block with the time it is written (a download is built when it is asked for)."""
    return replace(prov, made_at=datetime.now(UTC))


def inputs_table(inputs: dict) -> pd.DataFrame:
    """An export's inputs as a two-column table (every value as text)."""
    return pd.DataFrame({"input": list(inputs), "value": [str(v) for v in inputs.values()]})


def show(view: ViewSettings, ref: Reference, own: tuple[str, Mapping] | None = None) -> None:
    """One caption on the page: the prices and GWP values in use and where they come from."""
    st.caption(
        f":material/sell: **Prices in use:** {md(prices_text(own))}. **GWP values:** {md(gwp_text(view, ref))}. "
        f"**MAC at age 40:** {md(ref.mac_label)}."
    )


def practice_rows(practice) -> dict:
    """The practice a year ran under, as export rows (field -> plain text)."""
    p = practice
    rows = {
        "maintenance flow": f"{p.maintenance_flow_l_min:g} L/min"
        if p.maintenance_flow_l_min is not None
        else "as each plan gives it",
        "maintenance O2 share": f"{p.maintenance_o2_share:.0%} on the O2 flowmeter"
        if p.maintenance_o2_share is not None
        else "as each plan gives it",
        "dial factor in maintenance": f"{p.dial_factor:g}",
        "agent switch": f"{p.switch_from} -> {p.switch_to}" if p.switch_from else "none",
    }
    if p.changes_anything:
        rows["adherence (low, likely, high)"] = f"{p.adherence_low:.0%}, {p.adherence:.0%}, {p.adherence_high:.0%}"
    return rows


def year_edits(base, scenario, mix) -> list[str]:
    """What the page changed from the scenario as opened: "practice", "case mix", "sampling", ..."""
    out = []
    if scenario.practice != base.practice:
        out.append("practice")
    if case_mix_to_csv(mix) != case_mix_to_csv(base.case_mix):
        out.append("case mix")
    if (scenario.sampling.draws, scenario.sampling.seed, scenario.sampling.price_spread) != (
        base.sampling.draws,
        base.sampling.seed,
        base.sampling.price_spread,
    ):
        out.append("sampling")
    if (scenario.car_kg_per_km, scenario.car_source) != (base.car_kg_per_km, base.car_source):
        out.append("car factor")
    return out
