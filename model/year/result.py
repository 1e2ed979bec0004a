"""The year of a scenario: central figures, P5/P50/P95 ranges, months, per-type table and notes."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from model.base.errors import InputError
from model.base.jsonable import to_json_value
from model.cautions import STANDING_CAUTION, cautions_as_records, is_unsafe
from model.physiology import draw_physiology
from model.reference import DEFAULT_REFERENCE, GWP_SOURCES, VOLATILES, Reference
from model.year.inputs import MONTHS, Scenario
from model.year.nodes import NODE_Z
from model.year.sampling import (
    PHYSIOLOGY_STREAM,
    PHYSIOLOGY_YEAR_DRAWS,
    RANGE_LABEL,
    Draws,
    _central,
    _percentiles,
    _sampled,
    _sampled_physiology,
    make_draws,
    range_label,
)
from model.year.simulate import _EMIT, _LIQ, _Q, GASES, YearInputs, _year_inputs_many, year_inputs

#: How a year counts bottles (shown beside the figures and in every year's notes).
BOTTLES_COUNTED = (
    "Bottles are counted as opened: each month opens the whole bottles its liquid needs beyond what "
    "is left in the bottle opened before, so a part-used bottle is carried into the next month and "
    "the year's bottles are its liquid in whole bottles, rounded up once; agent cost is those bottles."
)


def _label(agent: str) -> str:
    return DEFAULT_REFERENCE.agents[agent].label


def headline_figures(currency: str) -> list[tuple[str, str, str]]:
    """(key, label, unit) of every headline figure of a year, in report order."""
    rows = [("cases", "Cases", "cases")]
    for a in VOLATILES:
        rows.append((f"liquid_ml_{a}", f"{_label(a)} liquid", "mL"))
    for a in VOLATILES:
        rows.append((f"bottles_{a}", f"{_label(a)} bottles bought", "bottles"))
    rows += [
        ("bottles_total", "Bottles bought, all agents", "bottles"),
        ("oxygen_l", "Oxygen", "L"),
        ("air_l", "Medical air", "L"),
        ("nitrous_oxide_l", "Nitrous oxide", "L"),
        ("absorbent_kg", "CO2 absorbent", "kg"),
    ]
    for a in VOLATILES:
        rows.append((f"cost_{a}", f"Cost of {_label(a).lower()}", currency))
    rows += [
        ("cost_oxygen", "Cost of oxygen", currency),
        ("cost_air", "Cost of medical air", currency),
        ("cost_nitrous_oxide", "Cost of nitrous oxide", currency),
        ("cost_absorbent", "Cost of absorbent", currency),
        ("cost_total", "Cost, total", currency),
    ]
    for a in VOLATILES:
        rows.append((f"co2e_{a}_t", f"CO2e from {_label(a).lower()}", "t CO2e"))
    rows += [
        ("co2e_nitrous_oxide_t", "CO2e from nitrous oxide", "t CO2e"),
        ("co2e_total_t", "CO2e, total", "t CO2e"),
        ("car_km", "Same CO2e as driving an average car", "km"),
    ]
    return rows


@dataclass
class YearResult:
    """A scenario's year: deterministic totals, months, types, and Monte Carlo P5-P95 ranges."""

    scenario: Scenario
    inputs: YearInputs
    totals: dict  # key -> float (deterministic: central values, the scenario's GWP source)
    per_case: dict  # key -> float, totals / cases
    summary: pd.DataFrame  # key, figure, unit, deterministic, p5, p50, p95
    monthly: pd.DataFrame  # deterministic figures per month
    by_type: pd.DataFrame  # deterministic figures per case type
    fan: pd.DataFrame  # month, figure, p5, p50, p95 of cumulative cost and CO2e
    draws: dict  # key -> (D,) per-draw figures
    n_draws: int
    seed: int
    notes: list[str] = field(default_factory=list)
    #: What the P5-P95 ranges hold (:data:`model.year.sampling.RANGE_LABEL` or its
    #: ``RANGE_LABEL_PHYSIOLOGY``).
    range_label: str = RANGE_LABEL
    #: Per-draw use by month: ``liquid_ml`` (D, 12, agents) and ``nitrous_oxide_l`` (D, 12).
    month_draws: dict = field(default_factory=dict)

    @property
    def currency(self) -> str:
        """Currency of the year's costs."""
        return self.inputs.currency

    @property
    def warnings(self) -> list[str]:
        """Cautions of the year's case types, most severe first."""
        return self.inputs.warnings

    @property
    def lowest_inspired_o2_pct(self) -> float:
        """Lowest predicted inspired O2 of any of the year's case types, as simulated [%]."""
        return self.inputs.lowest_inspired_o2_pct

    @property
    def unsafe(self) -> bool:
        """Whether the practice of this year is unsafe as written.

        Some of its cases are predicted a hypoxic mixture or run the circle out of O2 (a
        ``"hazard"`` warning).
        """
        return is_unsafe(self.warnings)

    def to_dict(self) -> dict:
        """Machine-readable form with stable keys (units in the key names or columns)."""
        return {
            "scenario": self.scenario.name,
            "currency": self.currency,
            "gwp_source": self.scenario.gwp_source,
            "gwp_source_label": self.inputs.gwp_label,
            "mac_set_label": self.inputs.mac_label,
            "gwp_sources_sampled": list(self.scenario.sampling.gwp_sources),
            "draws": self.n_draws,
            "seed": self.seed,
            "car_kg_co2e_per_km": self.scenario.car_kg_per_km,
            "car_factor_source": self.scenario.car_source,
            "totals": to_json_value(self.totals),
            "per_case": to_json_value(self.per_case),
            "range_label": self.range_label,
            "ranges": {
                r["key"]: to_json_value({"p5": r["p5"], "p50": r["p50"], "p95": r["p95"]})
                for r in self.summary.to_dict("records")
            },
            "monthly": [to_json_value(r) for r in self.monthly.to_dict("records")],
            "by_type": [to_json_value(r) for r in self.by_type.to_dict("records")],
            "warnings": list(self.warnings),
            "warnings_by_severity": cautions_as_records(self.warnings),
            "unsafe": self.unsafe,
            "lowest_inspired_o2_pct": to_json_value(self.lowest_inspired_o2_pct),
            "notes": list(self.notes),
            "caution": STANDING_CAUTION,
        }


def _summary(keys, central: dict, draws: dict) -> pd.DataFrame:
    rows = []
    for key, label, unit in keys:
        p = _percentiles(draws[key])
        rows.append(
            {
                "key": key,
                "figure": label,
                "unit": unit,
                "deterministic": float(central[key][0]),
                "p5": float(p[0]),
                "p50": float(p[1]),
                "p95": float(p[2]),
            }
        )
    return pd.DataFrame(rows)


def _monthly_table(inp: YearInputs, months: dict) -> pd.DataFrame:
    table = {"month": list(MONTHS)}
    for a_i, a in enumerate(VOLATILES):
        table[f"liquid_ml_{a}"] = months["liquid_ml"][0, :, a_i]
    for a_i, a in enumerate(VOLATILES):
        table[f"bottles_{a}"] = months["bottles"][0, :, a_i]
    q = months["q"][0]
    w = inp.month_weights
    for g in GASES:
        table[f"{g}_l"] = q[_Q[f"{g}_l"]] * w
    table["absorbent_kg"] = q[_Q["absorbent_g"]] / 1000.0 * w
    table["cost_total"] = months["cost"][0]
    table["co2e_total_t"] = months["co2e_t"][0]
    return pd.DataFrame(table)


def _by_type(inp: YearInputs, central_minutes_share: float) -> pd.DataFrame:
    a = central_minutes_share
    per_case = (1 - a) * (inp.fixed[0] + inp.rate[0] * inp.stretch_mean[:, None]) + a * (
        inp.fixed[1] + inp.rate[1] * inp.stretch_mean[:, None]
    )  # (I, Q)
    year = per_case * inp.counts[:, None]
    gwp = inp.gwp[0]
    co2e_kg = (year[:, _EMIT] / 1000.0 * gwp[:-1]).sum(axis=1) + year[:, _Q["nitrous_oxide_emitted_g"]] / 1000.0 * gwp[
        -1
    ]
    n_a = len(VOLATILES)
    cost = (
        (year[:, _LIQ] / inp.bottle_ml * inp.prices[:n_a]).sum(axis=1)
        + (year[:, [_Q[f"{g}_l"] for g in GASES]] / 1000.0 * inp.prices[n_a : n_a + 3]).sum(axis=1)
        + year[:, _Q["absorbent_g"]] / 1000.0 * inp.prices[n_a + 3]
    )
    return pd.DataFrame(
        {
            "case_type": list(inp.names),
            "cases": inp.counts,
            "mean_duration_min": per_case[:, _Q["minutes"]],
            "liquid_ml": year[:, _LIQ].sum(axis=1),
            **{f"liquid_ml_{v}": year[:, _Q[f"liquid_ml:{v}"]] for v in VOLATILES},
            "oxygen_l": year[:, _Q["oxygen_l"]],
            "air_l": year[:, _Q["air_l"]],
            "nitrous_oxide_l": year[:, _Q["nitrous_oxide_l"]],
            "absorbent_kg": year[:, _Q["absorbent_g"]] / 1000.0,
            "co2e_t": co2e_kg / 1000.0,
            "cost_pro_rata": cost,
        }
    )


def _fan(months: dict) -> pd.DataFrame:
    rows = []
    for key, label in (("cost", "cumulative cost"), ("co2e_t", "cumulative t CO2e")):
        cum = np.cumsum(months[key], axis=1)
        p = _percentiles(cum)
        for m in range(12):
            rows.append({"month": MONTHS[m], "figure": label, "p5": p[0, m], "p50": p[1, m], "p95": p[2, m]})
    return pd.DataFrame(rows)


def _notes(inp: YearInputs, scenario: Scenario) -> list[str]:
    models = sorted({sp.plan.settings.uptake_model for sp in inp.subplans}) or ["compartment"]
    notes = [
        "Each case type runs through the circle-system model, as a single case plan does: liquid agent "
        "from the dial settings, or from the dial the model finds to hold an end-tidal target; patient "
        f"uptake ({' and '.join(models)} model); emitted agent is the delivered agent less the metabolised "
        "share of the patient's uptake (less any capture); CO2 absorbent from the rebreathed share of the "
        "patient's CO2; predicted inspired O2 checked against the floor.",
        f"Each type is simulated at up to {len(NODE_Z)} durations spanning its duration distribution "
        "(median x exp(spread x z), z from "
        f"{min(NODE_Z):g} to {max(NODE_Z):g}); per-case totals in between are interpolated linearly in "
        "the maintenance minutes (within 1 % of direct simulation) and summed over the year with the "
        f"exact mean; the sampled year minutes carry at least {inp.variance_explained * 100:.1f} % of "
        "each sub-plan's per-case variance.",
        BOTTLES_COUNTED + " Gases and absorbent are priced pro rata.",
        f"Equivalence: {scenario.car_kg_per_km:g} kg CO2e per km by an average car ({scenario.car_source}).",
    ]
    if scenario.practice.changes_anything:
        pr = scenario.practice
        notes.append(
            f"Practice change followed by {pr.adherence * 100:.0f} % of cases "
            f"(sampled {pr.adherence_low * 100:.0f}-{pr.adherence_high * 100:.0f} %); "
            f"the others keep the plan as written."
        )
    sampled = scenario.sampling.gwp_sources
    if sampled and set(sampled) != {scenario.gwp_source}:

        def label(k):
            return GWP_SOURCES[k].label if k in GWP_SOURCES else k

        notes.append(
            f"The expected column uses {label(scenario.gwp_source)}; the P5-P95 ranges also sample the "
            f"GWP sources {', '.join(map(label, sampled))} (the uncertainty of the GWP choice), so an expected "
            "CO2e can sit near one end of its range."
        )
    return notes


def compute_year(
    scenario: Scenario,
    reference: Reference = DEFAULT_REFERENCE,
    *,
    draws: int | None = None,
    seed: int | None = None,
    shared: Draws | None = None,
    model_uncertainty: bool = False,
) -> YearResult:
    """A scenario's year with Monte Carlo P5-P95 ranges.

    Parameters
    ----------
    scenario : Scenario
        Case mix, practice change, prices and sampling settings.
    reference : Reference
        Reference data (with any user overrides from a settings file).
    draws, seed : int, optional
        Override the scenario's number of draws and seed.
    shared : Draws, optional
        Use these draws (paired comparisons); overrides ``draws`` and ``seed``.
    model_uncertainty : bool
        Let the P5-P95 ranges include the uncertain physiology of the uptake model as well
        (:func:`physiology_year_inputs`); the deterministic totals stay the central model's.
        Default False: P5-P95 ranges of case mix and prices only, as before.

    Returns
    -------
    YearResult
        Deterministic totals (central adherence, given prices, the scenario's GWP source,
        mean durations) and P5/P50/P95 of every headline figure over the draws, with
        ``range_label`` saying what the P5-P95 ranges hold.
    """
    inp = year_inputs(scenario, reference)
    if shared is None:
        n = scenario.sampling.draws if draws is None else int(draws)
        s = scenario.sampling.seed if seed is None else int(seed)
        shared = make_draws(inp.names, n, s)
    missing = [name for name in inp.names if name not in shared.z_types]
    if missing:
        raise InputError("draws", missing[0], "the shared draws lack this case type")
    central, central_months = _central(inp)
    if model_uncertainty:
        inputs = [ins[0] for ins in physiology_year_inputs([scenario], reference, shared.seed)]
        sampled, sampled_months = _sampled_physiology(inputs, shared, scenario.sampling.price_spread)
    else:
        sampled, sampled_months = _sampled(inp, shared, scenario.sampling.price_spread)
    res = _result(scenario, inp, central, central_months, sampled, sampled_months, shared)
    res.range_label = range_label(model_uncertainty)
    return res


def physiology_year_inputs(scenarios, reference: Reference, seed: int, n: int = PHYSIOLOGY_YEAR_DRAWS) -> list:
    """Year inputs of scenarios under ``n`` seeded draws of the model's physiology.

    Parameters
    ----------
    scenarios : sequence of Scenario
        Scenarios computed with the same physiology draws (a baseline and its proposal).
    reference : Reference
        Reference data.
    seed : int
        The year's seed; the physiology draws are seeded by it and
        :data:`model.year.sampling.PHYSIOLOGY_STREAM`.
    n : int
        Number of physiology draws.

    Returns
    -------
    list of list of YearInputs
        ``n`` entries, each the scenarios' year inputs under one draw of
        :func:`model.physiology.draw_physiology` (spreads and sources in
        :data:`model.physiology.PHYSIOLOGY_SPREAD`).
    """
    phys = draw_physiology(n, [int(seed), PHYSIOLOGY_STREAM])
    return [_year_inputs_many(list(scenarios), reference, {k: float(v[m]) for k, v in phys.items()}) for m in range(n)]


def _result(scenario, inp, central, central_months, sampled, sampled_months, shared) -> YearResult:
    keys = headline_figures(inp.currency)
    totals = {k: float(v[0]) for k, v in central.items()}
    cases = totals["cases"]
    per_case = {k: (v / cases if cases else 0.0) for k, v in totals.items() if k != "cases"}
    return YearResult(
        scenario=scenario,
        inputs=inp,
        totals=totals,
        per_case=per_case,
        summary=_summary(keys, central, sampled),
        monthly=_monthly_table(inp, central_months),
        by_type=_by_type(inp, inp.adherence[1]),
        fan=_fan(sampled_months),
        draws=sampled,
        n_draws=shared.n,
        seed=shared.seed,
        notes=_notes(inp, scenario),
        month_draws={
            "liquid_ml": sampled_months["liquid_ml"],
            "nitrous_oxide_l": sampled_months["q"][:, _Q["nitrous_oxide_l"]][:, None] * inp.month_weights[None, :],
        },
    )
