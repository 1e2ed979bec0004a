"""How much the figures that decide practice depend on the uncertain physiology of the uptake model.

Three figures: the liquid agent of a case held at an end-tidal target at low flow, the flow
sweep's lowest-cost flow, and a year's saving from a change of practice. Each is worked out
under seeded draws of the model's physiology (:mod:`model.physiology`: every parameter a
log-normal multiplier with median 1 and its stated, sourced spread), giving its P5, P50 and
P95; a one-at-a-time table says which parameter moves each figure most. The method is on
docs/methods.md, "Uncertainty of the model's physiology".
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from model.case import simulate_plan
from model.circle import simulate_cases
from model.physiology import PHYSIOLOGY_SPREAD, draw_physiology
from model.plan import CasePlan
from model.reference import DEFAULT_REFERENCE, Reference
from model.sweep import flow_sweep
from model.year.inputs import Scenario
from model.year.sampling import _central
from model.year.simulate import _year_inputs_many

#: The maintenance flow of the low-flow case in target mode. [L/min]  Baker's low-flow band
#: (0.5-1 L/min; Baker AB, Anaesth Intensive Care 1994;22:341-2), at its lower edge.
LOW_FLOW_L_MIN = 0.5
#: O2 share of that flow, as the demo proposal's (invented; at 0.5 L/min the patient's O2
#: uptake needs a rich mix). [1]
LOW_FLOW_O2_SHARE = 0.8
#: The late-uptake figure: agent taken up between these times at a constant end-tidal
#: 1.0 MAC (age 40, 70 kg), the period of the closed-circuit studies on the validation page. [min]
LATE_UPTAKE_FROM_MIN, LATE_UPTAKE_TO_MIN = 60.0, 180.0

FIGURES = (
    ("liquid_ml", "liquid agent of a case, end-tidal target at 0.5 L/min", "mL"),
    ("lowest_cost_flow_l_min", "flow sweep's lowest-cost flow", "L/min"),
    ("year_saving", "a year's saving from the change of practice", "currency"),
    ("year_liquid_saved_ml", "liquid agent the change of practice saves in a year", "mL"),
)
LATE_UPTAKE_FIGURES = (
    ("late_uptake_sevoflurane_l", "sevoflurane uptake 60-180 min at 1.0 MAC", "L vapour"),
    ("late_uptake_desflurane_l", "desflurane uptake 60-180 min at 1.0 MAC", "L vapour"),
)


def _column(physiology: dict, m: int) -> dict:
    return {k: float(v[m]) for k, v in physiology.items()}


def _n_draws(physiology: dict) -> int:
    return int(np.size(next(iter(physiology.values())))) if physiology else 1


def low_flow_target_plan(plan: CasePlan, flow_l_min=LOW_FLOW_L_MIN, o2_share=LOW_FLOW_O2_SHARE) -> CasePlan:
    """The plan with its longest phase at a low flow, held at an end-tidal target.

    The phase keeps its target (or, in a dial phase, 1.0 MAC); its flow is ``flow_l_min``,
    ``o2_share`` of it O2 and the rest air (N2O kept at its share of the old flow).
    """
    i = int(np.argmax([p.minutes for p in plan.phases]))
    p = plan.phases[i]
    n2o = p.nitrous_oxide_l_min / p.fgf_l_min * flow_l_min if p.fgf_l_min > 0 else 0.0
    rest = flow_l_min - n2o
    phase = replace(
        p,
        oxygen_l_min=o2_share * rest,
        air_l_min=(1.0 - o2_share) * rest,
        nitrous_oxide_l_min=n2o,
        dial_pct=None,
        target_mac=1.0 if p.target_mac is None else p.target_mac,
    )
    return replace(plan, phases=plan.phases[:i] + (phase,) + plan.phases[i + 1 :])


def case_liquid_ml(plan: CasePlan, physiology: dict, reference: Reference = DEFAULT_REFERENCE) -> np.ndarray:
    """Liquid agent of one case plan under draws of the model's physiology [mL].

    Parameters
    ----------
    plan : CasePlan
        The case plan (e.g. :func:`low_flow_target_plan` of a demo plan).
    physiology : dict
        Key -> multipliers, shape (m,) (:func:`model.physiology.draw_physiology`).
    reference : Reference
        Reference data.

    Returns
    -------
    ndarray, shape (m,)
        Liquid agent used by the case, one value per draw (one vectorised simulation). [mL]
    """
    sim = simulate_plan(plan, reference, physiology=physiology)
    return np.broadcast_to(sim["liquid_ml"], (_n_draws(physiology),)).astype(float)


def lowest_cost_flows(plan: CasePlan, physiology: dict, reference: Reference = DEFAULT_REFERENCE) -> np.ndarray:
    """The flow sweep's lowest-cost flow under each draw of the model's physiology [L/min].

    Parameters
    ----------
    plan : CasePlan
        The plan whose longest phase the sweep varies (:func:`model.sweep.flow_sweep`).
    physiology : dict
        Key -> multipliers, shape (m,).
    reference : Reference
        Reference data and prices.

    Returns
    -------
    ndarray, shape (m,)
        The cost-lowest feasible flow per draw, NaN where no flow is feasible. [L/min]

    Notes
    -----
    One sweep (every flow in one vectorised simulation) per draw.
    """
    out = np.full(_n_draws(physiology), np.nan)
    for m in range(out.size):
        best = flow_sweep(plan, reference, physiology=_column(physiology, m)).cost_lowest_flow_l_min
        out[m] = np.nan if best is None else best
    return out


def year_savings(
    baseline: Scenario, proposal: Scenario, physiology: dict, reference: Reference = DEFAULT_REFERENCE
) -> np.ndarray:
    """A year's cost saving of a proposal over its baseline under each physiology draw [currency].

    Parameters
    ----------
    baseline, proposal : Scenario
        The two years (the proposal priced and sampled as the baseline, as in
        :func:`model.year.compare_years`).
    physiology : dict
        Key -> multipliers, shape (m,); each draw applies to every case of both years.
    reference : Reference
        Reference data.

    Returns
    -------
    ndarray, shape (m,)
        Baseline cost minus proposal cost of the central year (mean durations, central
        adherence and prices), positive where the proposal saves. [currency]

    Notes
    -----
    Agent is bought in whole bottles a month, so the cost moves in steps of a bottle's
    price; the liquid saved (in :func:`physiology_spread`) moves smoothly.
    """
    return _year_differences(baseline, proposal, physiology, reference)["year_saving"]


def _year_differences(baseline: Scenario, proposal: Scenario, physiology: dict, reference: Reference) -> dict:
    """Cost saved [currency] and liquid agent saved [mL] (all agents) of the central year, per draw."""
    proposal = replace(proposal, gwp_source=baseline.gwp_source, sampling=baseline.sampling)
    n = _n_draws(physiology)
    out = {"year_saving": np.zeros(n), "year_liquid_saved_ml": np.zeros(n)}
    for m in range(n):
        b_inp, p_inp = _year_inputs_many([baseline, proposal], reference, _column(physiology, m))
        b, p = _central(b_inp)[0], _central(p_inp)[0]
        out["year_saving"][m] = float(b["cost_total"][0] - p["cost_total"][0])
        out["year_liquid_saved_ml"][m] = float(sum(b[k][0] - p[k][0] for k in b if k.startswith("liquid_ml_")))
    return out


def late_uptake_l(agent: str, physiology: dict, reference: Reference = DEFAULT_REFERENCE) -> np.ndarray:
    """Agent taken up from 60 to 180 min at a constant end-tidal 1.0 MAC [L vapour].

    Parameters
    ----------
    agent : str
        Volatile agent key.
    physiology : dict
        Key -> multipliers, shape (m,).
    reference : Reference
        Reference data.

    Returns
    -------
    ndarray, shape (m,)
        Net uptake of the second and third hour of a 70 kg, 40-year-old patient at 2 L/min
        (end-tidal held by the dial the model finds), one value per draw. [L vapour]
    """
    minutes = np.array([[LATE_UPTAKE_FROM_MIN], [LATE_UPTAKE_TO_MIN - LATE_UPTAKE_FROM_MIN]])
    sim = simulate_cases(
        reference.volatile(agent),
        minutes,
        [[1.0], [1.0]],
        [[1.0], [1.0]],
        target_mac=[[1.0], [1.0]],
        physiology=physiology,
        nitrous_oxide=reference.agents["nitrous_oxide"],
    )
    return np.broadcast_to(sim["phase_agent_uptake_l"][1], (_n_draws(physiology),)).astype(float)


@dataclass
class PhysiologySpread:
    """The spread of the figures that decide practice over draws of the model's physiology.

    ``table``: one row per figure (``key``, ``figure``, ``unit``, ``central``, ``p5``,
    ``p50``, ``p95``); ``sensitivity``: one row per parameter and figure (``parameter``,
    ``label``, ``basis``, ``figure``, ``at_p5``, ``at_p95``, ``swing``, ``rank``), the figure
    with that parameter alone at its P5 and P95 multiplier; ``draws``: key -> (m,) values.
    """

    table: pd.DataFrame
    sensitivity: pd.DataFrame
    draws: dict
    n_draws: int
    seed: int
    spread_scale: float
    currency: str

    def to_dict(self) -> dict:
        """Plain-dict form with stable keys (for JSON)."""
        return {
            "n_draws": self.n_draws,
            "seed": self.seed,
            "spread_scale": self.spread_scale,
            "currency": self.currency,
            "figures": self.table.to_dict("records"),
            "sensitivity": self.sensitivity.to_dict("records"),
        }


def _figures(plan, sweep_plan, baseline, proposal, physiology, reference, late_uptake: bool, loops=True) -> dict:
    """Every figure per draw; ``loops=False`` leaves out the two run draw by draw."""
    out = {"liquid_ml": case_liquid_ml(plan, physiology, reference)}
    if loops:
        out["lowest_cost_flow_l_min"] = lowest_cost_flows(sweep_plan, physiology, reference)
        out.update(_year_differences(baseline, proposal, physiology, reference))
    if late_uptake:
        out["late_uptake_sevoflurane_l"] = late_uptake_l("sevoflurane", physiology, reference)
        out["late_uptake_desflurane_l"] = late_uptake_l("desflurane", physiology, reference)
    return out


def _central_figures(plan, sweep_plan, baseline, proposal, reference, late_uptake: bool, width: int) -> dict:
    """The central model's figures.

    The vectorised ones are run as wide as the draws, so that a zero spread reproduces them
    to the last bit (numpy's sums may round differently at another width).
    """
    ones = {p.key: np.ones(1) for p in PHYSIOLOGY_SPREAD}
    out = _figures(plan, sweep_plan, baseline, proposal, ones, reference, late_uptake)
    wide = {p.key: np.ones(width) for p in PHYSIOLOGY_SPREAD}
    for k, v in _figures(plan, sweep_plan, baseline, proposal, wide, reference, late_uptake, loops=False).items():
        out[k] = v[:1]
    return out


def physiology_spread(
    plan: CasePlan,
    sweep_plan: CasePlan,
    baseline: Scenario,
    proposal: Scenario,
    reference: Reference = DEFAULT_REFERENCE,
    *,
    draws: int = 64,
    seed: int = 2026,
    spread_scale: float = 1.0,
    sigmas: dict | None = None,
    sensitivity: bool = True,
    late_uptake: bool = True,
) -> PhysiologySpread:
    """P5, P50 and P95 of the figures that decide practice over draws of the model's physiology.

    Parameters
    ----------
    plan : CasePlan
        The case of the liquid figure, as run (e.g. :func:`low_flow_target_plan`).
    sweep_plan : CasePlan
        The plan of the flow sweep.
    baseline, proposal : Scenario
        The year's change of practice.
    reference : Reference
        Reference data and prices.
    draws, seed : int
        Number of physiology draws and their seed.
    spread_scale : float
        Multiplies every parameter's spread (0: every draw the central model exactly). [1]
    sigmas : dict, optional
        Replace some parameters' SD of ln. [1]
    sensitivity : bool
        Also the one-at-a-time table (two runs per parameter).
    late_uptake : bool
        Also the late uptake of sevoflurane and desflurane (:func:`late_uptake_l`), the
        figures the clinical studies find too low.

    Returns
    -------
    PhysiologySpread
        ``central`` is each figure of the central model; ``p5``, ``p50``, ``p95`` its
        percentiles over the draws (linear interpolation, numpy's default).

    Notes
    -----
    Each draw is one systematic set of multipliers: the uncertainty of the model's values,
    applied to every case alike, not the variation between patients (which would average
    out over a year). Spreads and sources: :data:`model.physiology.PHYSIOLOGY_SPREAD`.
    """
    currency = baseline.reference(reference).prices.currency
    phys = draw_physiology(draws, seed, spread_scale, sigmas)
    central = _central_figures(plan, sweep_plan, baseline, proposal, reference, late_uptake, draws)
    values = _figures(plan, sweep_plan, baseline, proposal, phys, reference, late_uptake)
    figures = FIGURES + (LATE_UPTAKE_FIGURES if late_uptake else ())
    rows = []
    for key, label, unit in figures:
        p5, p50, p95 = np.nanpercentile(values[key], (5.0, 50.0, 95.0))
        rows.append(
            {
                "key": key,
                "figure": label,
                "unit": currency if unit == "currency" else unit,
                "central": float(central[key][0]),
                "p5": float(p5),
                "p50": float(p50),
                "p95": float(p95),
            }
        )
    sens = sensitivity_table(plan, sweep_plan, baseline, proposal, reference, late_uptake) if sensitivity else None
    return PhysiologySpread(
        pd.DataFrame(rows),
        sens if sens is not None else pd.DataFrame(),
        values,
        draws,
        seed,
        float(spread_scale),
        currency,
    )


def sensitivity_table(
    plan: CasePlan,
    sweep_plan: CasePlan,
    baseline: Scenario,
    proposal: Scenario,
    reference: Reference = DEFAULT_REFERENCE,
    late_uptake: bool = True,
) -> pd.DataFrame:
    """One at a time: each figure with one parameter at its P5 and at its P95, the others central.

    Returns
    -------
    DataFrame
        ``parameter``, ``label``, ``basis`` (published or from memory), ``figure`` (key),
        ``at_p5``, ``at_p95`` (the figure), ``swing`` (``at_p95 - at_p5``) and ``rank``
        (1 = the parameter that moves this figure most, by ``|swing|``).

    Notes
    -----
    All 2 x (number of parameters) settings run at once in each figure's vectorised call.
    """
    n = len(PHYSIOLOGY_SPREAD)
    phys = {p.key: np.ones(2 * n) for p in PHYSIOLOGY_SPREAD}
    for i, p in enumerate(PHYSIOLOGY_SPREAD):
        phys[p.key][2 * i], phys[p.key][2 * i + 1] = p.p5_p95
    values = _figures(plan, sweep_plan, baseline, proposal, phys, reference, late_uptake)
    figures = FIGURES + (LATE_UPTAKE_FIGURES if late_uptake else ())
    rows = []
    for key, _label, _unit in figures:
        for i, p in enumerate(PHYSIOLOGY_SPREAD):
            lo, hi = float(values[key][2 * i]), float(values[key][2 * i + 1])
            rows.append(
                {
                    "parameter": p.key,
                    "label": p.label,
                    "basis": p.basis,
                    "figure": key,
                    "at_p5": lo,
                    "at_p95": hi,
                    "swing": hi - lo,
                }
            )
    df = pd.DataFrame(rows)
    df["rank"] = df.groupby("figure")["swing"].transform(lambda s: s.abs().rank(ascending=False, method="min"))
    df["rank"] = df["rank"].astype(int)
    return df


__all__ = [
    "FIGURES",
    "LATE_UPTAKE_FIGURES",
    "PhysiologySpread",
    "case_liquid_ml",
    "late_uptake_l",
    "low_flow_target_plan",
    "lowest_cost_flows",
    "physiology_spread",
    "sensitivity_table",
    "year_savings",
]
