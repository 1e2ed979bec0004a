"""Pieces of the year views (Department year page, year tab of Compare).

Scenario choice, cached year runs and plotly figures. Presentation only; the year is
computed in model.year.
"""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import streamlit as st

from model.io.plans import load_plan
from model.io.scenario import load_scenario
from model.reference import GWP_SOURCES, Reference
from model.year.compare import compare_years
from model.year.inputs import CaseMix, Scenario
from model.year.result import compute_year

ROOT = Path(__file__).resolve().parents[1]
YEAR_DIR = ROOT / "demo_data" / "year"


def scenario_files() -> dict[str, Path]:
    """Demo scenario files by their scenario name (file order)."""
    out = {}
    for path in sorted(YEAR_DIR.glob("*.toml")):
        try:
            out[load_scenario(path).name] = path
        except Exception:  # a broken demo file is skipped, not shown as a choice
            continue
    return out


@st.cache_resource(show_spinner=False)
def plan_library() -> dict:
    """Plans a case type may use, by the name the case-mix file gives (relative path)."""
    lib = {}
    for folder, prefix in ((YEAR_DIR / "plans", "plans/"), (ROOT / "demo_data" / "plans", "../plans/")):
        for path in sorted(folder.glob("*.toml")):
            try:
                lib[prefix + path.name] = load_plan(path)
            except Exception:
                continue
    return lib


def scenario_for_view(scenario: Scenario, view, mix: CaseMix | None = None, own_prices: bool = False) -> Scenario:
    """The scenario with the sidebar's GWP source, room temperature and currency label.

    And an edited mix, when given.

    Prices: the values in use on every page (the Reference page's saved values over the
    defaults, given to the year as its ``Reference``); the scenario's own ``[prices]`` only
    with ``own_prices`` (the user chose them on the page). The P5-P95 ranges sample only the
    scenario's GWP sources of the sidebar's horizon: a 20-year expected CO2e never sits
    beside a range drawn from 100-year values.
    """
    prices = dict(scenario.prices) if own_prices else {}
    prices["currency"] = view.currency
    sources = tuple(k for k in scenario.sampling.gwp_sources if GWP_SOURCES[k].horizon_years == view.gwp_horizon_years)
    mix = mix if mix is not None else scenario.case_mix
    # Every case type's plan at the sidebar's room temperature, as on the Case plan page.
    mix = replace(
        mix,
        types=tuple(
            replace(t, plan=replace(t.plan, settings=replace(t.plan.settings, temperature_c=view.temperature_c)))
            for t in mix.types
        ),
    )
    return replace(
        scenario,
        gwp_source=view.gwp_source,
        prices=prices,
        case_mix=mix,
        sampling=replace(scenario.sampling, gwp_sources=sources),
    )


def _key(*parts) -> str:
    return json.dumps([repr(p) for p in parts])


@st.cache_resource(show_spinner=False, max_entries=16)
def year_cached(key: str, _scenario: Scenario, _ref: Reference, model_uncertainty: bool = False):
    """The year of a scenario, cached under ``key`` (the arguments with ``_`` are not hashed)."""
    return compute_year(_scenario, _ref, model_uncertainty=model_uncertainty)


@st.cache_resource(show_spinner=False, max_entries=16)
def compare_cached(key: str, _baseline: Scenario, _proposal: Scenario, _ref: Reference):
    """The comparison of two years, cached under ``key`` (the arguments with ``_`` are not hashed)."""
    return compare_years(_baseline, _proposal, _ref)


def run_year(scenario: Scenario, ref: Reference, ref_key: str, model_uncertainty: bool = False):
    """The year of a scenario under the reference values in use, computed once per scenario and reference.

    ``model_uncertainty``: the P5-P95 ranges also draw the uptake model's physiology (slower).
    """
    return year_cached(_key(scenario, ref_key, model_uncertainty), scenario, ref, model_uncertainty)


def run_compare(baseline: Scenario, proposal: Scenario, ref: Reference, ref_key: str):
    """A proposal year against a baseline, computed once per pair and reference."""
    return compare_cached(_key(baseline, proposal, ref_key), baseline, proposal, ref)


def range_text(row, digits: int = 0) -> str:
    """A P5-P95 range as text, from a summary row's ``p5`` and ``p95``."""
    return f"P5-P95: {row['p5']:,.{digits}f} to {row['p95']:,.{digits}f}"
