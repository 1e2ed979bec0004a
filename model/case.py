"""What one case (or many phase rows at once) consumes, costs and emits."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .emissions import co2e_kg, emitted_mass_g, gas_mass_g
from .errors import InputError
from .freshgas import apply_ratio_limit, delivered_fractions, flow_band
from .mac import mac_at_age, mac_multiple
from .plan import CasePlan
from .reference import DEFAULT_REFERENCE, Reference
from .vapour import liquid_used_ml


def phase_consumption(minutes, o2_l_min, air_l_min, n2o_l_min, dial_pct, agent, *,
                      temperature_c=20.0, pressure_kpa=101.325, min_o2_share=0.25,
                      min_o2_flow_l_min=0.2, ratio_behaviour="cap_n2o"):
    """Consumption of many phase rows at once, vectorised.

    Parameters
    ----------
    minutes : array_like, shape (n,)
        Phase durations. [min]
    o2_l_min, air_l_min, n2o_l_min : array_like, shape (n,)
        Requested flowmeter settings. [L/min]
    dial_pct : array_like, shape (n,)
        Vaporizer dial settings. [%]
    agent : Agent
        The volatile agent of all rows.
    temperature_c, pressure_kpa : float
        Room conditions. [°C], [kPa]
    min_o2_share, min_o2_flow_l_min, ratio_behaviour
        The workstation's O2/N2O ratio limit; see :func:`model.freshgas.apply_ratio_limit`.

    Returns
    -------
    dict of ndarray
        ``o2_l_min``, ``n2o_l_min`` (delivered), ``altered`` (bool), ``fgf_l_min``,
        ``fd_o2``, ``fd_n2o`` [1], ``liquid_ml`` [mL], ``agent_g`` [g], ``oxygen_l``,
        ``air_l``, ``nitrous_oxide_l`` [L], ``nitrous_oxide_g`` [g].

    Notes
    -----
    Liquid agent by Dion's formula at the delivered total flow (see
    :func:`model.vapour.liquid_used_ml`); gas volumes are flow x time at room conditions.

    References
    ----------
    .. [1] Dion P. Can J Anaesth 1992;39:633-4.
    """
    t = np.asarray(minutes, dtype=float)
    air = np.asarray(air_l_min, dtype=float)
    o2, n2o, altered = apply_ratio_limit(o2_l_min, n2o_l_min, min_o2_share, min_o2_flow_l_min,
                                         ratio_behaviour)
    fgf, fd_o2, fd_n2o = delivered_fractions(o2, air, n2o)
    liquid = liquid_used_ml(fgf, dial_pct, t, agent, temperature_c, pressure_kpa)
    n2o_l = n2o * t
    return {
        "o2_l_min": o2, "n2o_l_min": n2o, "altered": altered, "fgf_l_min": fgf,
        "fd_o2": fd_o2, "fd_n2o": fd_n2o, "liquid_ml": liquid,
        "agent_g": liquid * agent.liquid_density,
        "oxygen_l": o2 * t, "air_l": air * t, "nitrous_oxide_l": n2o_l,
        "nitrous_oxide_g": gas_mass_g(n2o_l, DEFAULT_REFERENCE.agents["nitrous_oxide"].molar_mass,
                                      temperature_c, pressure_kpa),
    }


def case_costs(liquid_ml, oxygen_l, air_l, nitrous_oxide_l, absorbent_g, agent, prices):
    """Cost of each item.

    Parameters
    ----------
    liquid_ml : array_like
        Liquid agent. [mL]
    oxygen_l, air_l, nitrous_oxide_l : array_like
        Gas volumes at room conditions. [L]
    absorbent_g : array_like
        CO2 absorbent used. [g]
    agent : Agent
        The volatile agent (bottle volume).
    prices : Prices
        Unit prices.

    Returns
    -------
    dict of ndarray
        ``agent``, ``oxygen``, ``air``, ``nitrous_oxide``, ``absorbent`` and ``total``, in
        the currency of ``prices``.

    Notes
    -----
    Agent cost is pro rata by volume (part bottles count; whole bottles are a purchasing
    question answered by the year model).
    """
    costs = {
        "agent": np.asarray(liquid_ml, dtype=float) / agent.bottle_volume * prices.bottle.get(agent.name, 0.0),
        "oxygen": np.asarray(oxygen_l, dtype=float) / 1000.0 * prices.oxygen_per_1000_l,
        "air": np.asarray(air_l, dtype=float) / 1000.0 * prices.air_per_1000_l,
        "nitrous_oxide": np.asarray(nitrous_oxide_l, dtype=float) / 1000.0 * prices.nitrous_oxide_per_1000_l,
        "absorbent": np.asarray(absorbent_g, dtype=float) / 1000.0 * prices.absorbent_per_kg,
    }
    costs["total"] = sum(costs.values())
    return costs


@dataclass
class CaseResult:
    """Per-case result: phase table, totals with units in the keys, and warnings."""

    plan: CasePlan
    phases: pd.DataFrame
    totals: dict
    currency: str
    gwp_source: str
    gwp_label: str
    warnings: list[str] = field(default_factory=list)
    #: Minute-by-minute time course (from the physiology model, when it ran).
    timecourse: pd.DataFrame | None = None

    def to_dict(self) -> dict:
        """Machine-readable form with stable keys (units in the key names)."""
        def clean(v):
            if isinstance(v, (np.floating, float)):
                v = float(v)
                return v if math.isfinite(v) else None
            if isinstance(v, (np.integer,)):
                return int(v)
            if isinstance(v, np.bool_):
                return bool(v)
            return v
        phases = [{k: clean(v) for k, v in row.items()} for row in self.phases.to_dict("records")]
        return {
            "plan": self.plan.name,
            "agent": self.plan.agent,
            "currency": self.currency,
            "gwp_source": self.gwp_source,
            "gwp_source_label": self.gwp_label,
            "totals": {k: clean(v) for k, v in self.totals.items()},
            "phases": phases,
            "warnings": list(self.warnings),
        }


def compute_case(plan: CasePlan, reference: Reference = DEFAULT_REFERENCE) -> CaseResult:
    """What a case plan consumes, costs and emits.

    Parameters
    ----------
    plan : CasePlan
        Patient, agent, phases and settings.
    reference : Reference
        Reference data and prices (with any user overrides).

    Returns
    -------
    CaseResult
        Totals: ``duration_min``, ``liquid_agent_ml``, ``bottles``, ``agent_mass_g``,
        ``oxygen_l``, ``air_l``, ``nitrous_oxide_l``, ``absorbent_g``, ``agent_emitted_g``,
        ``nitrous_oxide_emitted_g``, ``co2e_agent_kg``, ``co2e_nitrous_oxide_kg``,
        ``co2e_total_kg``, ``cost_agent`` ... ``cost_total`` (in ``currency``),
        ``mac_hours`` and ``min_fd_o2``.

    Notes
    -----
    Without an uptake model every delivered gram counts as emitted (an upper bound), less
    the capture efficiency. MAC-hours count the dial setting and the delivered N2O
    fraction against the age-adjusted MAC (Mapleson 1996).
    """
    if plan.prices:
        reference = reference.with_overrides({"prices": plan.prices}, f"plan '{plan.name}'")
    s = plan.settings
    agent = reference.volatile(plan.agent)
    n2o_agent = reference.agents["nitrous_oxide"]
    gwp_agent = reference.gwp(agent.name, s.gwp_source)
    gwp_n2o = reference.gwp("nitrous_oxide", s.gwp_source)
    for i, p in enumerate(plan.phases, start=1):
        if p.dial_pct is None:
            raise InputError(f"phases[{i}].target", p.target_mac,
                             "end-tidal targets need the physiology model; give a dial setting")
    minutes = np.array([p.minutes for p in plan.phases])
    dial = np.array([p.dial_pct for p in plan.phases], dtype=float)
    c = phase_consumption(minutes, [p.o2_l_min for p in plan.phases],
                          [p.air_l_min for p in plan.phases], [p.n2o_l_min for p in plan.phases],
                          dial, agent, temperature_c=s.temperature_c, pressure_kpa=s.pressure_kpa,
                          min_o2_share=s.min_o2_share, min_o2_flow_l_min=s.min_o2_flow_l_min,
                          ratio_behaviour=s.ratio_behaviour)
    uptake_g = np.zeros_like(minutes)
    absorbent_g = np.zeros_like(minutes)
    agent_emitted = emitted_mass_g(c["agent_g"], uptake_g, agent.metabolised_fraction, s.capture_efficiency)
    n2o_emitted = emitted_mass_g(c["nitrous_oxide_g"], 0.0, n2o_agent.metabolised_fraction, 0.0)
    mac_agent = mac_at_age(agent.mac40, plan.patient.age_years)
    mac_n2o = mac_at_age(n2o_agent.mac40, plan.patient.age_years)
    mac_mult = mac_multiple(dial, mac_agent, c["fd_n2o"] * 100.0, mac_n2o)
    costs = case_costs(c["liquid_ml"], c["oxygen_l"], c["air_l"], c["nitrous_oxide_l"], absorbent_g,
                       agent, reference.prices)
    phases = pd.DataFrame({
        "phase": [p.name for p in plan.phases],
        "duration_min": minutes,
        "o2_l_min": c["o2_l_min"],
        "air_l_min": np.array([p.air_l_min for p in plan.phases], dtype=float),
        "n2o_l_min": c["n2o_l_min"],
        "fgf_l_min": c["fgf_l_min"],
        "flow_band": flow_band(c["fgf_l_min"]),
        "fd_o2_pct": c["fd_o2"] * 100.0,
        "fd_n2o_pct": c["fd_n2o"] * 100.0,
        "dial_pct": dial,
        "liquid_agent_ml": c["liquid_ml"],
        "agent_mass_g": c["agent_g"],
        "oxygen_l": c["oxygen_l"],
        "air_l": c["air_l"],
        "nitrous_oxide_l": c["nitrous_oxide_l"],
        "co2e_kg": co2e_kg(agent_emitted, gwp_agent) + co2e_kg(n2o_emitted, gwp_n2o),
        "cost_total": costs["total"],
        "mac_multiple": mac_mult,
        "mac_hours": mac_mult * minutes / 60.0,
        "flows_altered": c["altered"],
    })
    co2e_agent = float(co2e_kg(agent_emitted.sum(), gwp_agent))
    co2e_n2o = float(co2e_kg(n2o_emitted.sum(), gwp_n2o))
    totals = {
        "duration_min": float(minutes.sum()),
        "liquid_agent_ml": float(c["liquid_ml"].sum()),
        "bottles": float(c["liquid_ml"].sum() / agent.bottle_volume),
        "agent_mass_g": float(c["agent_g"].sum()),
        "oxygen_l": float(c["oxygen_l"].sum()),
        "air_l": float(c["air_l"].sum()),
        "nitrous_oxide_l": float(c["nitrous_oxide_l"].sum()),
        "absorbent_g": float(absorbent_g.sum()),
        "agent_uptake_g": float(uptake_g.sum()),
        "agent_emitted_g": float(agent_emitted.sum()),
        "nitrous_oxide_emitted_g": float(n2o_emitted.sum()),
        "co2e_agent_kg": co2e_agent,
        "co2e_nitrous_oxide_kg": co2e_n2o,
        "co2e_total_kg": co2e_agent + co2e_n2o,
        **{f"cost_{k}": float(np.sum(v)) for k, v in costs.items()},
        "mac_hours": float(phases["mac_hours"].sum()),
        "min_fd_o2_pct": float(phases["fd_o2_pct"].min()),
    }
    warnings = case_warnings(plan, phases, agent)
    return CaseResult(plan, phases, totals, reference.prices.currency, s.gwp_source,
                      reference.gwp_source(s.gwp_source).label, warnings)


def case_warnings(plan: CasePlan, phases: pd.DataFrame, agent) -> list[str]:
    """Cautions for a computed plan (altered mixes, low sevoflurane flow, low fresh gas O2)."""
    s = plan.settings
    out = []
    for i, row in enumerate(phases.itertuples(index=False), start=1):
        p = plan.phases[i - 1]
        label = f"phase {i} ({row.phase})"
        if row.flows_altered:
            out.append(
                f"{label}: the O2/N2O ratio limit altered the requested mix "
                f"(O2 {p.o2_l_min:g} -> {row.o2_l_min:.2f} L/min, N2O {p.n2o_l_min:g} -> "
                f"{row.n2o_l_min:.2f} L/min)")
        if agent.name == "sevoflurane" and row.fgf_l_min < s.sevoflurane_min_flow_l_min:
            out.append(f"{label}: sevoflurane at {row.fgf_l_min:.2f} L/min is under the set minimum of "
                       f"{s.sevoflurane_min_flow_l_min:g} L/min; follow local protocol and labelling")
        if row.fd_o2_pct / 100.0 < s.inspired_o2_floor:
            out.append(f"{label}: fresh gas O2 {row.fd_o2_pct:.0f} % is under the inspired O2 floor of "
                       f"{s.inspired_o2_floor * 100:.0f} %; inspired O2 in a circle is lower still")
    return out
