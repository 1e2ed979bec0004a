"""The flow sweep: what one case plan consumes, costs and emits across maintenance fresh gas flows.

The flow runs from metabolic to very high flow; the sweep names the cost-lowest and
emission-lowest flows that keep inspired O2 above the floor.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from model.base.errors import InputError
from model.base.jsonable import to_json_value
from model.case import simulate_plan, simulation_totals
from model.freshgas import flow_band
from model.plan import CasePlan
from model.reference import DEFAULT_REFERENCE, Reference

#: Flows of the sweep, spanning Baker's bands from metabolic (0.25) to very high (> 4). [L/min]
#: Source of the bands: Baker AB. Anaesth Intensive Care 1994;22:341-2.
DEFAULT_SWEEP_FLOWS = (0.25, 0.35, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0)
#: A target counts as held when the vaporizer sits at its maximum with the end-tidal under
#: target for at most this share of the phase. [1]  Common practice, no source.
TARGET_HELD_SHARE = 0.05


@dataclass
class SweepResult:
    """One row per flow (``table``), the chosen phase, and the best flows (None if none)."""

    plan: CasePlan
    phase_index: int
    target_mac: float
    table: pd.DataFrame
    cost_lowest_flow_l_min: float | None
    emission_lowest_flow_l_min: float | None
    currency: str
    inspired_o2_floor_pct: float
    #: Which MAC values at age 40 were used (``Reference.mac_label``).
    mac_label: str = ""

    def to_dict(self) -> dict:
        """Machine-readable form with stable keys (units in the key names)."""
        return {
            "plan": self.plan.name,
            "agent": self.plan.agent,
            "phase": self.plan.phases[self.phase_index].name,
            "phase_number": self.phase_index + 1,
            "end_tidal_target_mac": to_json_value(self.target_mac),
            "mac_set_label": self.mac_label,
            "currency": self.currency,
            "inspired_o2_floor_pct": to_json_value(self.inspired_o2_floor_pct),
            "cost_lowest_flow_l_min": to_json_value(self.cost_lowest_flow_l_min),
            "emission_lowest_flow_l_min": to_json_value(self.emission_lowest_flow_l_min),
            "rows": to_json_value(self.table.to_dict("records")),
        }


def flow_sweep(
    plan: CasePlan,
    reference: Reference = DEFAULT_REFERENCE,
    flows_l_min=None,
    phase: int | None = None,
    *,
    physiology=None,
) -> SweepResult:
    """Consumption, cost and CO2e of a plan as functions of one phase's fresh gas flow.

    Parameters
    ----------
    plan : CasePlan
        The case plan.
    reference : Reference
        Reference data and prices.
    flows_l_min : sequence of float, optional
        Total fresh gas flows to try [L/min]; default :data:`DEFAULT_SWEEP_FLOWS`.
    phase : int, optional
        Index (0-based) of the phase whose flow varies; default the longest phase
        (maintenance).
    physiology : mapping of float, optional
        Multipliers of the model's uncertain physiology, one value each
        (:mod:`model.physiology`); None is the central model.

    Returns
    -------
    SweepResult
        ``table`` columns: ``requested_fgf_l_min``, ``fgf_l_min`` (delivered, after the
        workstation's O2/N2O ratio limit), ``flow_band``, ``liquid_agent_ml``,
        ``agent_mass_g``, ``oxygen_l``, ``air_l``, ``nitrous_oxide_l``, ``absorbent_g``,
        ``cost_agent``, ``cost_gases``, ``cost_absorbent``, ``cost_total``,
        ``co2e_total_kg``, ``mean_dial_pct``, ``min_inspired_o2_pct``,
        ``lowest_safe_fd_o2_pct``, ``fd_o2_pct``, ``o2_safe``, ``target_held``,
        ``sevoflurane_caution``, ``feasible`` (O2 safe and target held), ``safety`` ("ok", or
        "UNSAFE: ..." where O2 is not safe: the point is marked as such wherever it is shown).

    Notes
    -----
    The phase keeps its gas mix (the shares of O2, air and N2O in its flow) and holds its
    end-tidal level: a "target" phase keeps its target; a "dial" phase is given as target
    the end-tidal MAC multiple the plan reaches at the end of that phase, so that every
    flow delivers the same depth and only the flow changes. All flows run at once through
    the vectorised circle simulation.
    """
    if plan.prices:
        reference = reference.with_overrides({"prices": plan.prices}, f"plan '{plan.name}'")
    n_phases = len(plan.phases)
    if phase is None:
        phase = int(np.argmax([p.minutes for p in plan.phases]))
    if not 0 <= phase < n_phases:
        raise InputError("phase", phase + 1, f"the plan has phases 1 to {n_phases}")
    flows = np.asarray(DEFAULT_SWEEP_FLOWS if flows_l_min is None else flows_l_min, dtype=float)
    if flows.ndim != 1 or flows.size == 0 or not np.all(np.isfinite(flows)) or np.any(flows <= 0) or np.any(flows > 30):
        raise InputError("flows", [float(x) for x in np.atleast_1d(flows)], "give one or more flows in (0, 30] L/min")
    s = plan.settings
    agent = reference.volatile(plan.agent)
    p = plan.phases[phase]
    if p.target_mac is not None:
        target = float(p.target_mac)
    else:
        base = simulate_plan(plan, reference, physiology=physiology)
        target = float(base["phase_end_tidal_mac"][phase, 0])
    n = flows.size

    def table(attr):
        values = np.array([[getattr(q, attr) or 0.0] for q in plan.phases], dtype=float)
        return np.repeat(values, n, axis=1)

    fgf0 = p.fgf_l_min
    o2, air, n2o = table("oxygen_l_min"), table("air_l_min"), table("nitrous_oxide_l_min")
    o2[phase], air[phase], n2o[phase] = (
        flows * p.oxygen_l_min / fgf0,
        flows * p.air_l_min / fgf0,
        flows * p.nitrous_oxide_l_min / fgf0,
    )
    dial = np.array([[np.nan if q.dial_pct is None else q.dial_pct] for q in plan.phases]).repeat(n, axis=1)
    tgt = np.array([[np.nan if q.target_mac is None else q.target_mac] for q in plan.phases]).repeat(n, axis=1)
    dial[phase], tgt[phase] = np.nan, target
    sim = simulate_plan(
        plan,
        reference,
        oxygen_l_min=o2,
        air_l_min=air,
        nitrous_oxide_l_min=n2o,
        dial_pct=dial,
        target_mac=tgt,
        physiology=physiology,
    )
    totals, _ = simulation_totals(
        sim,
        agent,
        reference.prices,
        gwp_agent=reference.gwp(agent.name, s.gwp_source),
        gwp_n2o=reference.gwp("nitrous_oxide", s.gwp_source, used=bool(np.any(n2o > 0))),
        capture_efficiency=s.capture_efficiency,
        temperature_c=s.temperature_c,
        pressure_kpa=s.pressure_kpa,
        nitrous_oxide=reference.agents["nitrous_oxide"],
    )
    fgf = sim["phase_fgf_l_min"][phase]
    min_o2 = sim["phase_min_inspired_o2"][phase]
    o2_safe = (min_o2 >= s.inspired_o2_floor) & (totals["o2_shortfall_l"] <= 1e-6)
    held = sim["phase_time_at_max_below_target_min"][phase] <= TARGET_HELD_SHARE * p.minutes
    sevo = (agent.name == "sevoflurane") & (fgf < s.sevoflurane_min_flow_l_min)
    df = pd.DataFrame(
        {
            "requested_fgf_l_min": flows,
            "fgf_l_min": fgf,
            "flow_band": flow_band(fgf),
            "liquid_agent_ml": totals["liquid_agent_ml"],
            "agent_mass_g": totals["agent_mass_g"],
            "oxygen_l": totals["oxygen_l"],
            "air_l": totals["air_l"],
            "nitrous_oxide_l": totals["nitrous_oxide_l"],
            "absorbent_g": totals["absorbent_g"],
            "cost_agent": totals["cost_agent"],
            "cost_gases": totals["cost_oxygen"] + totals["cost_air"] + totals["cost_nitrous_oxide"],
            "cost_absorbent": totals["cost_absorbent"],
            "cost_total": totals["cost_total"],
            "co2e_total_kg": totals["co2e_total_kg"],
            "mean_dial_pct": sim["phase_mean_dial_pct"][phase],
            "min_inspired_o2_pct": min_o2 * 100.0,
            "lowest_safe_fd_o2_pct": sim["phase_lowest_safe_fd_o2"][phase] * 100.0,
            "fd_o2_pct": sim["phase_fd_o2"][phase] * 100.0,
            "o2_safe": o2_safe,
            # A hazard as in model.cautions.case_cautions: hypoxic mixture predicted or O2 running out.
            "safety": np.where(o2_safe, "ok", "UNSAFE: hypoxic mixture or O2 runs out"),
            "target_held": held,
            "sevoflurane_caution": sevo,
            "feasible": o2_safe & held,
        }
    )

    def best(column):
        ok = df[df["feasible"]]
        if ok.empty:
            return None
        return float(ok.loc[ok[column].idxmin(), "fgf_l_min"])

    return SweepResult(
        plan,
        phase,
        target,
        df,
        best("cost_total"),
        best("co2e_total_kg"),
        reference.prices.currency,
        s.inspired_o2_floor * 100.0,
        reference.mac_label,
    )
