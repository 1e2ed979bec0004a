"""Numbers and names for people: headings in words with units, figures sensibly rounded.

Column headings in words with their units, figures rounded to sensible significant
figures, problem kinds and GWP sources in words.

One module for every page, report and spreadsheet: the pages show tables through
``ui.tables`` (which builds on this), and ``model.present.exports`` writes its HTML tables with
:func:`number_text`. Data keep their machine names inside the model; only what a person reads
is renamed.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping

import numpy as np
import pandas as pd

from model.reference import AGENTS, GWP_SOURCES, VOLATILES

#: Column headings in words, with the unit in brackets. "{cur}" is the currency label.
_LABELS: dict[str, str] = {
    # case plan: phases, time course, flow sweep
    "phase": "phase",
    "duration_min": "duration (min)",
    "mode": "control",
    "oxygen_l_min": "O2 flow (L/min)",
    "air_l_min": "air flow (L/min)",
    "nitrous_oxide_l_min": "N2O flow (L/min)",
    "fgf_l_min": "fresh gas flow (L/min)",
    "requested_fgf_l_min": "requested fresh gas flow (L/min)",
    "flow_band": "flow band",
    "fd_o2_pct": "fresh gas O2 (%)",
    "fd_n2o_pct": "fresh gas N2O (%)",
    "dial_pct": "vaporizer dial (%)",
    "mean_dial_pct": "mean vaporizer dial (%)",
    "target_mac": "end-tidal target (x MAC)",
    "liquid_agent_ml": "liquid agent (mL)",
    "agent_mass_g": "agent delivered (g)",
    "oxygen_l": "oxygen (L)",
    "air_l": "medical air (L)",
    "nitrous_oxide_l": "nitrous oxide (L)",
    "co2e_kg": "CO2e (kg)",
    "co2e_total_kg": "CO2e, total (kg)",
    "co2e_agent_kg": "CO2e, agent (kg)",
    "co2e_nitrous_oxide_kg": "CO2e, nitrous oxide (kg)",
    "cost_total": "cost, total ({cur})",
    "cost_agent": "cost, agent ({cur})",
    "cost_gases": "cost, gases ({cur})",
    "cost_absorbent": "cost, absorbent ({cur})",
    "cost_oxygen": "cost, oxygen ({cur})",
    "cost_air": "cost, medical air ({cur})",
    "cost_nitrous_oxide": "cost, nitrous oxide ({cur})",
    "cost_pro_rata": "cost, pro rata ({cur})",
    "mac_multiple": "MAC multiple",
    "mac_hours": "MAC-hours, dial-based",
    "flows_altered": "mix altered by the ratio limit",
    "agent_uptake_g": "agent taken up (g)",
    "agent_vented_g": "agent vented (g)",
    "agent_emitted_g": "agent emitted (g)",
    "end_tidal_agent_pct": "end-tidal agent (%)",
    "inspired_agent_pct": "inspired agent (%)",
    "end_tidal_mac": "end-tidal (x MAC)",
    "time_to_target_min": "time to target (min)",
    "time_at_max_below_target_min": "time at the dial maximum below target (min)",
    "min_inspired_o2_pct": "lowest inspired O2 (%)",
    "steady_inspired_o2_pct": "steady inspired O2 (%)",
    "lowest_safe_fd_o2_pct": "lowest safe fresh gas O2 (%)",
    "rebreathed_pct": "rebreathed (%)",
    "co2_absorbed_l": "CO2 absorbed (L)",
    "absorbent_g": "CO2 absorbent (g)",
    "absorbent_kg": "CO2 absorbent (kg)",
    "time_min": "time (min)",
    "inspired_o2_pct": "inspired O2 (%)",
    "end_tidal_o2_pct": "end-tidal O2 (%)",
    "inspired_n2o_pct": "inspired N2O (%)",
    "end_tidal_n2o_pct": "end-tidal N2O (%)",
    "agent_uptake_ml_min": "agent uptake (mL vapour/min)",
    "agent_vented_ml_min": "agent vented (mL vapour/min)",
    "liquid_agent_cumulative_ml": "liquid agent, cumulative (mL)",
    "co2_absorbed_cumulative_l": "CO2 absorbed, cumulative (L)",
    "absorbent_used_cumulative_g": "CO2 absorbent used, cumulative (g)",
    "o2_safe": "inspired O2 above the floor",
    "target_held": "depth held",
    "sevoflurane_caution": "under the sevoflurane flow caution",
    "feasible": "candidate",
    "agent_g": "agent (g)",
    "where": "where it went",
    "item": "item",
    # year
    "case_type": "case type",
    "cases": "cases",
    "mean_duration_min": "mean duration (min)",
    "liquid_ml": "liquid agent (mL)",
    "co2e_t": "CO2e (t)",
    "co2e_total_t": "CO2e, total (t)",
    "deterministic": "expected",
    "p5": "P5",
    "p50": "P50",
    "p95": "P95",
    "month": "month",
    "figure": "figure",
    "unit": "unit",
    # record audit
    "case_id": "case",
    "agent": "agent",
    "theatre": "theatre",
    "start": "start",
    "samples": "samples",
    "minutes": "minutes",
    "gaps": "gaps",
    "gap_min": "gap time not counted (min)",
    "end_tidal_basis_min": "time from end-tidal only (min)",
    "longest_high_flow_min": "longest high-flow run (min)",
    "bottles": "bottles",
    "nitrous_oxide_g": "nitrous oxide (g)",
    "nitrous_oxide_emitted_g": "nitrous oxide emitted (g)",
    "high_flow_flag": "long high-flow run",
    "high_flow_cases": "cases with a long high-flow run",
    "mean_fgf_l_min": "mean fresh gas flow (L/min)",
    "liquid_agent_ml_per_case": "liquid agent per case (mL)",
    "co2e_kg_per_case": "CO2e per case (kg)",
    "row": "line or row",
    "kind": "problem",
    "column": "column",
    "value": "value",
    "message": "message",
    "file": "file",
    "purchased": "purchased",
    "recorded": "recorded",
    "unexplained": "unexplained",
    "unexplained_share": "unexplained share (%)",
    "unexplained_co2e_kg": "CO2e unexplained (kg)",
    "apparent_loss": "apparent loss",
    "has_records": "month has records",
    "purchased_with_records": "purchased, months with records",
    "recorded_with_records": "recorded, months with records",
    "unexplained_share_with_records": "unexplained share, months with records (%)",
    "purchased_cost": "purchased cost",
    "recorded_cost": "recorded cost",
    "unexplained_cost": "unexplained cost",
    "time_weighted_fgf_l_min": "time-weighted fresh gas flow (L/min)",
    "safety": "safety",
    "end_tidal_mac_hours": "MAC-hours, end-tidal",
    # reference
    "basis": "basis",
    "source": "source",
    "default": "default (before your value)",
    "default_source": "source of the default",
    # emissions report: by month and site, use against purchases
    "t_co2e_agent": "volatile agents (t CO2e)",
    "t_co2e_n2o": "nitrous oxide (t CO2e)",
    "t_co2e": "total (t CO2e)",
    "kg_co2e_per_case": "per case (kg CO2e)",
    "kg_co2e_per_hour": "per anaesthetic hour (kg CO2e)",
    "emitted_kg": "emitted (kg)",
    "use_kg": "used (kg)",
    "purchase_kg": "purchased (kg)",
    "gap_kg": "gap (kg)",
    "gap_share": "gap, share of purchased (%)",
    "use_t_co2e": "use-based (t CO2e)",
    "purchase_t_co2e": "purchase-based (t CO2e)",
    "gap_t_co2e": "gap (t CO2e)",
    "use_based_t_co2e": "use-based (t CO2e)",
    "purchase_based_t_co2e": "purchase-based (t CO2e)",
    "co2e_share": "share of CO2e (%)",
    "hours": "anaesthetic hours (h)",
}
for _a in VOLATILES:
    _name = AGENTS[_a].label
    _LABELS[f"liquid_ml_{_a}"] = f"{_name} liquid (mL)"
    _LABELS[f"bottles_{_a}"] = f"{_name} bottles"
    _LABELS[f"co2e_{_a}_t"] = f"{_name} CO2e (t)"
for _band in ("metabolic", "minimal", "low", "medium", "high", "very_high"):
    _LABELS[f"band_{_band}_min"] = f"{_band.replace('_', ' ')} flow band (min)"
COLUMN_LABELS: Mapping[str, str] = _LABELS

#: Columns of money (two decimals) and of whole counts.
_MONEY = re.compile(r"^cost(_|,| \(|$)", re.IGNORECASE)
_PERCENT_SHARES = ("unexplained_share", "unexplained_share_with_records", "gap_share", "co2e_share")

#: Problem kinds of the records check (``model.io.record_reading.ISSUE_KINDS``) in words.
PROBLEM_WORDS: Mapping[str, str] = {
    "encoding": "not UTF-8 text",
    "field_count": "wrong number of fields",
    "unreadable": "unreadable line",
    "text_in_number": "text in a number column",
    "bad_time": "time not readable",
    "missing_value": "required value missing",
    "unknown_agent": "unknown agent",
    "negative_flow": "negative flow",
    "absurd_flow": "flow out of range",
    "absurd_setting": "dial or end-tidal out of range",
    "duplicate_time": "time repeated",
    "time_backwards": "time goes backwards",
}

_WORDS = {
    "co2e": "CO2e",
    "co2": "CO2",
    "o2": "O2",
    "n2o": "N2O",
    "fgf": "fresh gas flow",
    "mac": "MAC",
    "fd": "fresh gas",
    "pct": "%",
    "gwp": "GWP",
}
_UNITS = (
    ("_l_min", "L/min"),
    ("_ml_min", "mL/min"),
    ("_ml", "mL"),
    ("_kg", "kg"),
    ("_g", "g"),
    ("_l", "L"),
    ("_min", "min"),
    ("_pct", "%"),
    ("_t", "t"),
    ("_h", "h"),
)


def column_label(name, currency: str = "") -> str:
    """The heading of a column for people: words, with the unit in brackets.

    Known result columns have a label of their own (``COLUMN_LABELS``); any other snake_case
    name is turned into words with its unit suffix (``_ml`` -> "(mL)"). Text that is already
    words (has a space or a capital) is returned as it is.
    """
    text = str(name)
    cur = currency or "currency"
    if text in COLUMN_LABELS:
        return COLUMN_LABELS[text].replace("{cur}", cur)
    if not re.fullmatch(r"[a-z0-9_]+", text) or "_" not in text:
        return text
    unit = ""
    for suffix, u in _UNITS:
        if text.endswith(suffix) and len(text) > len(suffix):
            text, unit = text[: -len(suffix)], u
            break
    if _MONEY.match(str(name)):
        unit = cur
    words = " ".join(_WORDS.get(w, w) for w in text.split("_"))
    return f"{words} ({unit})" if unit else words


def problem_words(kind) -> str:
    """A records problem kind in words ("text_in_number" -> "text in a number column")."""
    k = str(kind)
    return PROBLEM_WORDS.get(k, k.replace("_", " "))


def gwp_label(key) -> str:
    """A GWP source by its label ("ar6_gwp100" -> "IPCC AR6 GWP100")."""
    k = str(key)
    return GWP_SOURCES[k].label if k in GWP_SOURCES else k


def decimals(value: float, money: bool = False) -> int:
    """Decimals that show a figure to sensible precision.

    Four significant figures from 1 to 1000, three under 1, whole numbers from 1000, two
    decimals for money.
    """
    if money:
        return 2
    v = abs(float(value))
    if v == 0 or not math.isfinite(v) or v >= 1000:
        return 0
    if v >= 1:
        return max(0, 3 - int(math.floor(math.log10(v))))
    return min(2 - int(math.floor(math.log10(v))), 12)


def round_figure(value, money: bool = False):
    """A number rounded as :func:`decimals` says (non-numbers and non-finite values unchanged)."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, float, np.integer, np.floating)):
        return value
    v = float(value)
    if not math.isfinite(v):
        return value
    if isinstance(value, (int, np.integer)):
        return int(value)
    return round(v, decimals(v, money)) + 0.0  # + 0.0: no "-0.0"


def round_figures(values, money: bool = False) -> np.ndarray:
    """:func:`round_figure` over an array at once (NaN and infinities kept)."""
    v = np.asarray(values, dtype=float)
    if money:
        return np.round(v, 2) + 0.0
    a = np.abs(v)
    with np.errstate(divide="ignore", invalid="ignore"):
        mag = np.floor(np.log10(np.where(a > 0, a, 1.0)))
    d = np.where(a >= 1000, 0, np.where(a >= 1, np.maximum(0, 3 - mag), np.minimum(2 - mag, 12)))
    d = np.where(np.isfinite(v) & (a > 0), d, 0).astype(int)
    scale = 10.0**d
    out = np.round(v * scale) / scale
    return np.where(np.isfinite(v), out, v) + 0.0


def number_text(value, money: bool = False) -> str:
    """A figure as text with thousands separators, to sensible precision.

    ``3080.0`` -> "3,080", ``23.799988848217595`` -> "23.8", ``5.999999999999997`` -> "6",
    money with two decimals.
    """
    if value is None or isinstance(value, (bool, np.bool_)):
        return "" if value is None else ("yes" if value else "no")
    v = float(value)
    if not math.isfinite(v):
        return ""
    if float(v).is_integer() and not money:
        return f"{int(v):,}"
    d = decimals(v, money)
    text = f"{v:,.{d}f}"
    if not money and "." in text:
        text = text.rstrip("0").rstrip(".")
    if text.startswith("-") and not text.strip("-0.,"):
        text = text[1:]  # no "-0" or "-0.00"
    return text or "0"


def is_share(column) -> bool:
    """Whether a column holds a share (a fraction of 1) that people read as per cent."""
    return str(column) in _PERCENT_SHARES


def is_money(column) -> bool:
    """Whether a column name is a money figure (shown with two decimals)."""
    return bool(_MONEY.match(str(column)))


def readable_frame(df: pd.DataFrame, currency: str = "", *, rename: bool = True) -> pd.DataFrame:
    """A copy of a result table for people.

    Headings in words with units, figures rounded (numbers stay numbers), whole-number float
    columns as integers, problem kinds and GWP sources in words, shares as per cent. Values
    of a table with a ``source`` column (the reference values) are kept exact.
    """
    out = df.copy()
    # A table of sourced values (the reference table) shows each value exactly as its source
    # gives it: only results are rounded.
    exact = {"value", "default", "default (before your value)"} if "source" in out.columns else set()
    for col in out.columns:
        s = out[col]
        if str(col) in exact:
            continue
        if str(col) in _PERCENT_SHARES and pd.api.types.is_numeric_dtype(s):
            s = s * 100.0
        if pd.api.types.is_bool_dtype(s):
            pass
        elif pd.api.types.is_float_dtype(s):
            finite = s[np.isfinite(s.to_numpy(dtype=float, na_value=np.nan))]
            if (
                len(finite)
                and (finite == finite.round()).all()
                and s.notna().all()
                and not is_money(col)
                and finite.abs().max() < 2**53
            ):
                s = s.round().astype("int64")
            else:
                s = pd.Series(
                    round_figures(s.to_numpy(dtype=float, na_value=np.nan), is_money(col)), index=s.index, name=s.name
                )
        elif str(col) == "kind":
            s = s.map(problem_words)
        elif str(col) in ("gwp_source", "gwp"):
            s = s.map(gwp_label)
        elif str(col) == "unit":
            s = s.map(lambda u: "°C" if u == "degC" else u)
        elif str(col) in ("item", "agent") and (pd.api.types.is_object_dtype(s) or pd.api.types.is_string_dtype(s)):
            s = s.map(lambda v: v.replace("_", " ") if isinstance(v, str) and re.fullmatch(r"[a-z_]+", v) else v)
        if (pd.api.types.is_object_dtype(s) or pd.api.types.is_string_dtype(s)) and s.isna().any():
            # No "None" or "nan" cell in a text column: a missing value is left blank.
            s = s.astype(object).where(s.notna(), "")
        out[col] = s
    if rename:
        out.columns = [column_label(c, currency) for c in out.columns]
    return out


def signed_text(value, money: bool = False, digits: int | None = None) -> str:
    """A change with its sign, for people: "+1.2", "-17,172", and "0" (never "+0.00" or "-0").

    ``digits`` fixes the decimals (default: :func:`decimals`); a change that rounds to zero
    at those decimals is "0", with no sign.
    """
    v = float(value)
    if not math.isfinite(v):
        return ""
    d = decimals(v, money) if digits is None else digits
    if money and abs(v) >= 1000:
        d = 0
    text = f"{abs(v):,.{d}f}"
    if not text.strip("0.,"):
        return "0"
    return ("+" if v > 0 else "-") + text


def money_text(amount, currency: str, signed: bool = False) -> str:
    """An amount of money for people: two decimals under 1,000 ("512.40 GBP"), whole from it ("17,172 GBP").

    With ``signed`` the amount carries its sign ("+12.50 GBP", "-17,172 GBP"); no "-0.00".
    """
    v = float(amount)
    if signed:
        return f"{signed_text(v, money=True)} {currency}".strip()
    d = 0 if abs(v) >= 1000 else 2
    text = f"{v:,.{d}f}"
    if text.startswith("-") and not text.strip("-0.,"):
        text = text[1:]
    return f"{text} {currency}".strip()


def percent_change_text(new, old) -> str:
    """The change from ``old`` to ``new`` in per cent, for people: "+12 %", "-3 %", "0 %"; "" when ``old`` is 0."""
    if abs(float(old)) < 1e-12:
        return ""
    pct = (float(new) - float(old)) / float(old) * 100.0
    text = signed_text(pct, digits=0)
    return f"{text} %"


def when_text(iso: str) -> str:
    """A stored time ("2026-12-04T21:30:05+00:00") for people: "4 Dec 2026, 21:30 UTC"."""
    from datetime import UTC, datetime

    try:
        when = datetime.fromisoformat(str(iso))
    except ValueError:
        return str(iso)
    when = when.astimezone(UTC) if when.tzinfo else when.replace(tzinfo=UTC)
    return f"{when.day} {when:%b %Y, %H:%M} UTC"


#: File keys and table columns as the pages name them (messages on a page use these words).
FIELD_WORDS: Mapping[str, str] = {
    "cases_per_year": "cases / year",
    "median_duration": "median min",
    "duration_spread": "spread",
    "n2o_share": "N2O share",
    "case_type": "case type",
    "inspired_o2_floor": "inspired O2 floor",
    "sevoflurane_min_flow_l_min": "sevoflurane minimum flow",
    "sevoflurane_min_flow_long_l_min": "sevoflurane minimum flow beyond 1 MAC-hour",
    "capture_efficiency": "capture of exhaled agent",
    "temperature_c": "room temperature",
    "weight_kg": "weight",
    "age_years": "age",
    "target": "end-tidal target",
    "dial": "dial setting",
    "o2": "O2 flow",
    "air": "air flow",
    "n2o": "N2O flow",
    "minutes": "duration",
    "gwp_source": "GWP source",
}
_PHASE_KEY = re.compile(r"\bphases\[(\d+)\]\.?([a-z_0-9/]*)")
_DOTTED = re.compile(r"\b(?:settings|patient|practice|uncertainty)\.([a-z_0-9]+)")


def _field(key: str) -> str:
    if key in FIELD_WORDS:
        return FIELD_WORDS[key]
    return column_label(key) if "_" in key else key


def field_words(message: str) -> str:
    """A message with the program's field names in the words the page shows.

    "phases[2].target: ..." -> "phase 2, end-tidal target: ...";
    "settings.inspired_o2_floor: ..." -> "inspired O2 floor: ..."; a table column such as
    ``cases_per_year`` -> "cases a year". Values quoted in the message are left as typed.
    """
    text = str(message)
    text = _PHASE_KEY.sub(lambda m: f"phase {m.group(1)}" + (f", {_field(m.group(2))}" if m.group(2) else ""), text)
    text = _DOTTED.sub(lambda m: _field(m.group(1)), text)
    for key in sorted(FIELD_WORDS, key=len, reverse=True):
        if "_" in key:
            text = re.sub(rf"(?<![\w'])({re.escape(key)})(?=:)", FIELD_WORDS[key], text)
    return text
