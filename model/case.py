"""What one case (or many phase rows at once) consumes, costs and emits."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from model.base.jsonable import to_json_value
from model.cautions import SEVOFLURANE_LOW_FLOW_CODES, Caution, case_cautions, cautions_as_records, code_of, is_unsafe
from model.circle import simulate_cases
from model.emissions import co2e_kg, emitted_mass_g, gas_mass_g
from model.freshgas import apply_ratio_limit, delivered_fractions, flow_band
from model.mac import mac_multiple
from model.plan import CasePlan, check_dials
from model.reference import DEFAULT_REFERENCE, Reference
from model.vapour import liquid_used_ml


def phase_consumption(
    minutes,
    oxygen_l_min,
    air_l_min,
    nitrous_oxide_l_min,
    dial_pct,
    agent,
    *,
    temperature_c=20.0,
    pressure_kpa=101.325,
    min_o2_share=0.25,
    min_o2_flow_l_min=0.2,
    ratio_behaviour="cap_n2o",
):
    """Consumption of many phase rows at once, vectorised.

    Parameters
    ----------
    minutes : array_like, shape (n,)
        Phase durations. [min]
    oxygen_l_min, air_l_min, nitrous_oxide_l_min : array_like, shape (n,)
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
        ``oxygen_l_min``, ``nitrous_oxide_l_min`` (delivered), ``altered`` (bool), ``fgf_l_min``,
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
    o2, n2o, altered = apply_ratio_limit(
        oxygen_l_min, nitrous_oxide_l_min, min_o2_share, min_o2_flow_l_min, ratio_behaviour
    )
    fgf, fd_o2, fd_n2o = delivered_fractions(o2, air, n2o)
    liquid = liquid_used_ml(fgf, dial_pct, t, agent, temperature_c, pressure_kpa)
    n2o_l = n2o * t
    return {
        "oxygen_l_min": o2,
        "nitrous_oxide_l_min": n2o,
        "altered": altered,
        "fgf_l_min": fgf,
        "fd_o2": fd_o2,
        "fd_n2o": fd_n2o,
        "liquid_ml": liquid,
        "agent_g": liquid * agent.liquid_density,
        "oxygen_l": o2 * t,
        "air_l": air * t,
        "nitrous_oxide_l": n2o_l,
        "nitrous_oxide_g": gas_mass_g(
            n2o_l, DEFAULT_REFERENCE.agents["nitrous_oxide"].molar_mass, temperature_c, pressure_kpa
        ),
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


#: Items of a case's cost: (label, key of the case totals).
COST_ITEMS = (
    ("Liquid agent", "cost_agent"),
    ("Oxygen", "cost_oxygen"),
    ("Medical air", "cost_air"),
    ("Nitrous oxide", "cost_nitrous_oxide"),
    ("CO2 absorbent", "cost_absorbent"),
)

#: Where a case's delivered agent goes, in the order :func:`agent_fate` lists it.
FATE_PARTS = ("Vented through the scavenger", "Taken up by the patient", "Metabolised", "Left in the circle")


def cost_by_item(totals: Mapping, currency: str) -> pd.DataFrame:
    """A case's cost by item (:data:`COST_ITEMS`).

    Parameters
    ----------
    totals : mapping
        Case totals (:attr:`CaseResult.totals`); a missing item counts as 0.
    currency : str
        Currency of the prices, for the column name.

    Returns
    -------
    DataFrame
        ``item`` and ``cost (<currency>)``, one row per item.
    """
    return pd.DataFrame(
        {
            "item": [label for label, _ in COST_ITEMS],
            f"cost ({currency})": [float(totals.get(key, 0.0)) for _, key in COST_ITEMS],
        }
    )


def agent_fate(totals: Mapping, metabolised_fraction: float = 0.0) -> pd.DataFrame:
    """Where a case's delivered agent went, in grams: a mass balance of the circle.

    Parameters
    ----------
    totals : mapping
        Case totals (:attr:`CaseResult.totals`).
    metabolised_fraction : float
        Share of the uptake metabolised, used only when the totals lack the circle model's
        ``agent_metabolised_g``. [1]

    Returns
    -------
    DataFrame
        ``where`` (:data:`FATE_PARTS`) and ``agent_g``: vented through the scavenger, taken
        up by the patient (less the metabolised part), metabolised, left in the circle. The
        parts add up to the delivered agent ``agent_mass_g``.

    Notes
    -----
    Conservation of mass: delivered = vented + taken up + held in the circle, and the
    metabolised share is part of what was taken up. Without the circle model's split,
    vented = delivered less uptake less what the circle holds.
    """
    delivered = float(totals.get("agent_mass_g", 0.0))
    uptake = float(totals.get("agent_uptake_g", 0.0))
    metabolised = float(totals.get("agent_metabolised_g", uptake * metabolised_fraction))
    in_circle = float(totals.get("agent_held_in_circle_g", 0.0))
    vented = float(totals.get("agent_vented_g", max(delivered - uptake - in_circle, 0.0)))
    return pd.DataFrame(
        {"where": list(FATE_PARTS), "agent_g": [vented, max(uptake - metabolised, 0.0), metabolised, in_circle]}
    )


def simulation_totals(
    sim,
    agent,
    prices,
    *,
    gwp_agent,
    gwp_n2o,
    capture_efficiency=0.0,
    temperature_c=20.0,
    pressure_kpa=101.325,
    nitrous_oxide=None,
):
    """Consumption, emissions and cost of many simulated cases, vectorised.

    Parameters
    ----------
    sim : dict
        Output of :func:`model.circle.simulate_cases` (arrays over ``n_cases``).
    agent : Agent
        The volatile agent simulated.
    prices : Prices
        Unit prices.
    gwp_agent, gwp_n2o : float
        GWP of the agent and of N2O under the chosen source. [kg CO2e/kg]
    capture_efficiency : float or array_like
        Share of scavenged agent captured. [1]
    temperature_c, pressure_kpa : float
        Room conditions of the gas volumes. [°C], [kPa]
    nitrous_oxide : Agent, optional
        N2O reference data (default from ``DEFAULT_REFERENCE``).

    Returns
    -------
    totals : dict of ndarray, shape (n_cases,)
        The keys of :func:`compute_case` totals (units in the names).
    phases : dict of ndarray, shape (n_phases, n_cases)
        ``liquid_agent_ml``, ``agent_mass_g``, ``oxygen_l``, ``air_l``, ``nitrous_oxide_l``,
        ``agent_emitted_g``, ``nitrous_oxide_emitted_g``, ``co2e_kg``, ``absorbent_g``,
        ``cost_total``, ``mac_multiple``, ``agent_uptake_g``, ``agent_vented_g``.

    Notes
    -----
    Emitted agent is the delivered agent less the metabolised share of what entered the
    patient's blood (gross uptake; the rest is exhaled, during the case or after it), less
    the capture efficiency: :func:`model.emissions.emitted_mass_g`.

    References
    ----------
    .. [1] Sulbaek Andersen MP et al. Anesth Analg 2012;114:1081-5.
    .. [2] Mapleson WW. Br J Anaesth 1996;76:179-85 (MAC-hours, age-adjusted).
    """
    n2o_agent = nitrous_oxide or DEFAULT_REFERENCE.agents["nitrous_oxide"]
    m_ag, m_n2o = agent.molar_mass, n2o_agent.molar_mass

    def grams(litres, molar_mass):
        return gas_mass_g(litres, molar_mass, temperature_c, pressure_kpa)

    minutes = sim["phase_minutes"]
    liquid = sim["phase_liquid_ml"]
    agent_g = liquid * agent.liquid_density
    oxygen_l = sim["phase_oxygen_l_min"] * minutes
    air_l = sim["phase_air_l_min"] * minutes
    n2o_l = sim["phase_nitrous_oxide_l_min"] * minutes
    n2o_g = grams(n2o_l, m_n2o)
    # Metabolism acts on the case's gross uptake; it is shared out over the phases in
    # proportion to the agent delivered in each (so no phase shows negative emissions).
    agent_emitted = _emitted_by_phase(
        agent_g, grams(sim["agent_gross_uptake_l"], m_ag), agent.metabolised_fraction, capture_efficiency
    )
    n2o_emitted = _emitted_by_phase(
        n2o_g, grams(sim["nitrous_oxide_gross_uptake_l"], m_n2o), n2o_agent.metabolised_fraction, 0.0
    )
    absorbent_g = sim["phase_co2_absorbed_l"] / sim["absorbent_capacity_l_per_kg"] * 1000.0
    costs = case_costs(liquid, oxygen_l, air_l, n2o_l, absorbent_g, agent, prices)
    mean_dial = np.nan_to_num(sim["phase_mean_dial_pct"])
    mac_mult = mac_multiple(mean_dial, sim["mac_agent_pct"], sim["phase_fd_n2o"] * 100.0, sim["mac_n2o_pct"])
    mac_mult = np.where(minutes > 0, mac_mult, 0.0)
    phases = {
        "liquid_agent_ml": liquid,
        "agent_mass_g": agent_g,
        "oxygen_l": oxygen_l,
        "air_l": air_l,
        "nitrous_oxide_l": n2o_l,
        "agent_emitted_g": agent_emitted,
        "nitrous_oxide_emitted_g": n2o_emitted,
        "co2e_kg": co2e_kg(agent_emitted, gwp_agent) + co2e_kg(n2o_emitted, gwp_n2o),
        "absorbent_g": absorbent_g,
        "cost_total": costs["total"],
        "mac_multiple": mac_mult,
        "agent_uptake_g": grams(sim["phase_agent_uptake_l"], m_ag),
        "agent_vented_g": grams(sim["phase_agent_vented_l"], m_ag),
    }
    co2e_agent = co2e_kg(agent_emitted.sum(axis=0), gwp_agent)
    co2e_n2o = co2e_kg(n2o_emitted.sum(axis=0), gwp_n2o)
    liquid_total = liquid.sum(axis=0)
    residuals = []
    for s in ("oxygen", "nitrous_oxide", "agent"):
        d = sim[f"{s}_delivered_l"]
        rest = sim[f"{s}_uptake_l"] + sim[f"{s}_vented_l"] + sim[f"{s}_held_end_l"] - sim[f"{s}_held_start_l"]
        scale = np.maximum.reduce([np.abs(d), np.abs(sim[f"{s}_held_start_l"]), np.full_like(d, 1e-12)])
        residuals.append(np.abs(d - rest) / scale)
    # The longest phase stands for maintenance in the case-level O2 figure.
    longest = np.argmax(minutes, axis=0)
    cols = np.arange(minutes.shape[1])
    target_time = np.where(sim["phase_target_mode"] & (minutes > 0), sim["phase_time_to_target_min"], np.nan)
    n_target = np.sum(sim["phase_target_mode"] & (minutes > 0), axis=0)
    not_reached = np.sum(sim["phase_target_mode"] & (minutes > 0) & np.isnan(sim["phase_time_to_target_min"]), axis=0)
    with np.errstate(all="ignore"):
        slowest = np.where(
            n_target - not_reached > 0, np.nanmax(np.where(np.isnan(target_time), -np.inf, target_time), axis=0), np.nan
        )
    totals = {
        "duration_min": minutes.sum(axis=0),
        "liquid_agent_ml": liquid_total,
        "bottles": liquid_total / agent.bottle_volume,
        "agent_mass_g": agent_g.sum(axis=0),
        "oxygen_l": oxygen_l.sum(axis=0),
        "air_l": air_l.sum(axis=0),
        "nitrous_oxide_l": n2o_l.sum(axis=0),
        "absorbent_g": absorbent_g.sum(axis=0),
        "agent_uptake_g": grams(sim["agent_uptake_l"], m_ag),
        "agent_emitted_g": agent_emitted.sum(axis=0),
        "nitrous_oxide_emitted_g": n2o_emitted.sum(axis=0),
        "co2e_agent_kg": co2e_agent,
        "co2e_nitrous_oxide_kg": co2e_n2o,
        "co2e_total_kg": co2e_agent + co2e_n2o,
        **{f"cost_{k}": np.sum(v, axis=0) for k, v in costs.items()},
        "mac_hours": (mac_mult * minutes / 60.0).sum(axis=0),
        "min_fd_o2_pct": np.where(minutes > 0, sim["phase_fd_o2"] * 100.0, np.inf).min(axis=0),
        # Low-flow physics (circle simulation).
        "agent_delivered_vapour_l": sim["agent_delivered_l"],
        "agent_gross_uptake_g": grams(sim["agent_gross_uptake_l"], m_ag),
        "agent_metabolised_g": agent_g.sum(axis=0)
        - emitted_mass_g(
            agent_g.sum(axis=0), grams(sim["agent_gross_uptake_l"], m_ag), agent.metabolised_fraction, 0.0
        ),
        "agent_vented_g": grams(sim["agent_vented_l"], m_ag),
        "agent_held_in_circle_g": grams(sim["agent_held_end_l"] - sim["agent_held_start_l"], m_ag),
        "oxygen_delivered_l": sim["oxygen_delivered_l"],
        "oxygen_consumed_l": sim["oxygen_uptake_l"],
        "oxygen_vented_l": sim["oxygen_vented_l"],
        "nitrous_oxide_uptake_l": sim["nitrous_oxide_uptake_l"],
        "nitrous_oxide_vented_l": sim["nitrous_oxide_vented_l"],
        "conservation_error_rel": np.maximum.reduce(residuals),
        "co2_absorbed_l": sim["co2_absorbed_l"],
        "min_inspired_o2_pct": sim["min_inspired_o2"] * 100.0,
        "min_inspired_o2_time_min": sim["min_inspired_o2_time_min"],
        "o2_shortfall_l": sim["o2_shortfall_l"],
        "lowest_safe_fd_o2_pct": sim["phase_lowest_safe_fd_o2"][longest, cols] * 100.0,
        "end_tidal_mac_hours": sim["end_tidal_mac_hours"],
        "slowest_time_to_target_min": slowest,
        "targets_not_reached": not_reached.astype(float),
        "vo2_ml_min": sim["vo2_l_min"] * 1000.0,
        "vco2_ml_min": sim["vco2_l_min"] * 1000.0,
        "cardiac_output_l_min": sim["cardiac_output_l_min"],
        "minute_ventilation_l_min": sim["minute_ventilation_l_min"],
        "circle_volume_l": sim["circle_volume_l"],
    }
    return totals, phases


def _emitted_by_phase(delivered_g, gross_uptake_g, metabolised_fraction, capture_efficiency):
    """Emitted mass per phase (n_phases, n_cases): the case's emission shared by delivery."""
    total = delivered_g.sum(axis=0)
    emitted_total = emitted_mass_g(total, gross_uptake_g, metabolised_fraction, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(total > 0, emitted_total / np.where(total > 0, total, 1.0), 1.0)
    return delivered_g * share * (1.0 - np.asarray(capture_efficiency, dtype=float))


def simulate_plan(plan: CasePlan, reference: Reference = DEFAULT_REFERENCE, *, record=False, **changes):
    """Run one plan through the circle simulation (:func:`model.circle.simulate_cases`).

    ``changes`` override keyword arguments of ``simulate_cases`` (e.g. phase arrays of
    shape ``(n_phases, n_cases)`` to run variants of the plan at once, as the flow sweep
    does).
    """
    s = plan.settings
    pt = plan.patient
    agent = reference.volatile(plan.agent)
    col = lambda values: np.array(values, dtype=float)[:, None]  # noqa: E731
    kwargs = dict(
        minutes=col([p.minutes for p in plan.phases]),
        oxygen_l_min=col([p.oxygen_l_min for p in plan.phases]),
        air_l_min=col([p.air_l_min for p in plan.phases]),
        nitrous_oxide_l_min=col([p.nitrous_oxide_l_min for p in plan.phases]),
        dial_pct=col([np.nan if p.dial_pct is None else p.dial_pct for p in plan.phases]),
        target_mac=col([np.nan if p.target_mac is None else p.target_mac for p in plan.phases]),
        weight_kg=pt.weight_kg,
        age_years=pt.age_years,
        cardiac_output_l_min=pt.cardiac_output_l_min,
        vo2_ml_min=pt.vo2_ml_min,
        minute_ventilation_l_min=pt.minute_ventilation_l_min,
        uptake_model=s.uptake_model,
        circle_volume_l=s.circle_volume_l,
        absorbent_capacity_l_per_kg=s.absorbent_capacity_l_per_kg,
        temperature_c=s.temperature_c,
        pressure_kpa=s.pressure_kpa,
        min_o2_share=s.min_o2_share,
        min_o2_flow_l_min=s.min_o2_flow_l_min,
        ratio_behaviour=s.ratio_behaviour,
        inspired_o2_floor=s.inspired_o2_floor,
        record=record,
        nitrous_oxide=reference.agents["nitrous_oxide"],
    )
    kwargs.update(changes)
    return simulate_cases(agent, **kwargs)


@dataclass
class CaseResult:
    """Per-case result: phase table, totals with units in the keys, warnings, time course."""

    plan: CasePlan
    phases: pd.DataFrame
    totals: dict
    currency: str
    gwp_source: str
    gwp_label: str
    warnings: list[Caution] = field(default_factory=list)
    #: Minute-by-minute time course of the circle simulation (columns with units in names).
    timecourse: pd.DataFrame | None = None
    #: Patient uptake model used ("compartment" or "lowe").
    uptake_model: str = ""
    #: Which MAC values at age 40 were used (``Reference.mac_label``).
    mac_label: str = ""

    def cost_by_item(self) -> pd.DataFrame:
        """The case's cost by item (:func:`cost_by_item`)."""
        return cost_by_item(self.totals, self.currency)

    def agent_fate(self) -> pd.DataFrame:
        """Where the case's delivered agent went, in grams (:func:`agent_fate`)."""
        return agent_fate(self.totals)

    def to_dict(self) -> dict:
        """Machine-readable form with stable keys (units in the key names)."""
        out = {
            "plan": self.plan.name,
            "agent": self.plan.agent,
            "currency": self.currency,
            "gwp_source": self.gwp_source,
            "gwp_source_label": self.gwp_label,
            "uptake_model": self.uptake_model,
            "mac_set_label": self.mac_label,
            "totals": to_json_value(self.totals),
            "phases": to_json_value(self.phases.to_dict("records")),
            "warnings": list(self.warnings),
            "warnings_by_severity": cautions_as_records(self.warnings),
            "unsafe": is_unsafe(self.warnings),
        }
        if self.timecourse is not None:
            out["timecourse"] = to_json_value(self.timecourse.to_dict("records"))
        return out


def compute_case(plan: CasePlan, reference: Reference = DEFAULT_REFERENCE) -> CaseResult:
    """What a case plan consumes, costs and emits, with the low-flow physics.

    Parameters
    ----------
    plan : CasePlan
        Patient, agent, phases (each with a dial setting or an end-tidal target) and
        settings (uptake model, circle volume, absorbent capacity, O2 floor, ...).
    reference : Reference
        Reference data and prices (with any user overrides).

    Returns
    -------
    CaseResult
        ``totals`` keeps the foundation keys (``duration_min``, ``liquid_agent_ml``,
        ``bottles``, ``agent_mass_g``, ``oxygen_l``, ``air_l``, ``nitrous_oxide_l``,
        ``absorbent_g``, ``agent_uptake_g``, ``agent_emitted_g``, ``nitrous_oxide_emitted_g``,
        ``co2e_agent_kg``, ``co2e_nitrous_oxide_kg``, ``co2e_total_kg``, ``cost_agent``,
        ``cost_oxygen``, ``cost_air``, ``cost_nitrous_oxide``, ``cost_absorbent``,
        ``cost_total``, ``mac_hours``, ``min_fd_o2_pct``) and adds those of
        :func:`simulation_totals` plus ``inspired_o2_floor_pct``, ``inspired_o2_below_floor``
        and ``sevoflurane_low_flow_caution``; ``phases`` one row per phase; ``timecourse``
        one row per minute (``time_min``, ``phase``, ``dial_pct``, ``inspired_agent_pct``,
        ``end_tidal_agent_pct``, ``end_tidal_mac``, ``inspired_o2_pct``, ``end_tidal_o2_pct``,
        ``inspired_n2o_pct``, ``end_tidal_n2o_pct``, ``agent_uptake_ml_min``,
        ``agent_vented_ml_min``, ``liquid_agent_cumulative_ml``, ``co2_absorbed_cumulative_l``,
        ``absorbent_used_cumulative_g``).

    Notes
    -----
    The case runs through the circle-system simulation (:mod:`model.circle`): in dial
    phases the liquid agent equals Dion's formula; in target phases the dial is found over
    time. Emitted agent is delivered agent less the metabolised share of the patient's
    uptake, less the capture efficiency. ``mac_hours`` counts the (mean) dial setting and
    the delivered N2O fraction against the age-adjusted MAC; ``end_tidal_mac_hours`` counts
    the simulated end-tidal concentrations (per phase in ``phases["end_tidal_mac_hours"]``).

    References
    ----------
    .. [1] Dion P. Can J Anaesth 1992;39:633-4.
    .. [2] Mapleson WW. Br J Anaesth 1996;76:179-85.
    """
    if plan.prices:
        reference = reference.with_overrides({"prices": plan.prices}, f"plan '{plan.name}'")
    s = plan.settings
    agent = reference.volatile(plan.agent)
    check_dials(plan, reference, f"plan '{plan.name}'")
    n2o_agent = reference.agents["nitrous_oxide"]
    gwp_agent = reference.gwp(agent.name, s.gwp_source)
    gwp_n2o = reference.gwp("nitrous_oxide", s.gwp_source, used=any(p.nitrous_oxide_l_min > 0 for p in plan.phases))
    sim = simulate_plan(plan, reference, record=True)
    tot, ph = simulation_totals(
        sim,
        agent,
        reference.prices,
        gwp_agent=gwp_agent,
        gwp_n2o=gwp_n2o,
        capture_efficiency=s.capture_efficiency,
        temperature_c=s.temperature_c,
        pressure_kpa=s.pressure_kpa,
        nitrous_oxide=n2o_agent,
    )
    minutes = sim["phase_minutes"][:, 0]
    first = lambda a: np.asarray(a)[:, 0]  # noqa: E731
    target_mode = first(sim["phase_target_mode"])
    phases = pd.DataFrame(
        {
            "phase": [p.name for p in plan.phases],
            "duration_min": minutes,
            "mode": np.where(target_mode, "target", "dial"),
            "oxygen_l_min": first(sim["phase_oxygen_l_min"]),
            "air_l_min": first(sim["phase_air_l_min"]),
            "nitrous_oxide_l_min": first(sim["phase_nitrous_oxide_l_min"]),
            "fgf_l_min": first(sim["phase_fgf_l_min"]),
            "flow_band": flow_band(first(sim["phase_fgf_l_min"])),
            "fd_o2_pct": first(sim["phase_fd_o2"]) * 100.0,
            "fd_n2o_pct": first(sim["phase_fd_n2o"]) * 100.0,
            "dial_pct": first(sim["phase_mean_dial_pct"]),
            "target_mac": first(sim["phase_target_mac"]),
            "liquid_agent_ml": first(ph["liquid_agent_ml"]),
            "agent_mass_g": first(ph["agent_mass_g"]),
            "oxygen_l": first(ph["oxygen_l"]),
            "air_l": first(ph["air_l"]),
            "nitrous_oxide_l": first(ph["nitrous_oxide_l"]),
            "co2e_kg": first(ph["co2e_kg"]),
            "cost_total": first(ph["cost_total"]),
            "mac_multiple": first(ph["mac_multiple"]),
            "mac_hours": first(ph["mac_multiple"]) * minutes / 60.0,
            "flows_altered": first(sim["phase_altered"]),
            "agent_uptake_g": first(ph["agent_uptake_g"]),
            "agent_vented_g": first(ph["agent_vented_g"]),
            "agent_emitted_g": first(ph["agent_emitted_g"]),
            "end_tidal_agent_pct": first(sim["phase_end_tidal_agent"]) * 100.0,
            "inspired_agent_pct": first(sim["phase_inspired_agent"]) * 100.0,
            "end_tidal_mac": first(sim["phase_end_tidal_mac"]),
            "time_to_target_min": first(sim["phase_time_to_target_min"]),
            "time_at_max_below_target_min": first(sim["phase_time_at_max_below_target_min"]),
            "min_inspired_o2_pct": first(sim["phase_min_inspired_o2"]) * 100.0,
            "steady_inspired_o2_pct": first(sim["phase_steady_fio2"]) * 100.0,
            "lowest_safe_fd_o2_pct": first(sim["phase_lowest_safe_fd_o2"]) * 100.0,
            "rebreathed_pct": first(sim["phase_rebreathed_share"]) * 100.0,
            "co2_absorbed_l": first(sim["phase_co2_absorbed_l"]),
            "absorbent_g": first(ph["absorbent_g"]),
        }
    )
    totals = {k: float(np.asarray(v)[0]) for k, v in tot.items()}
    totals["inspired_o2_floor_pct"] = s.inspired_o2_floor * 100.0
    totals["inspired_o2_below_floor"] = bool(totals["min_inspired_o2_pct"] < s.inspired_o2_floor * 100.0)
    timecourse = _timecourse(sim["series"], [p.name for p in plan.phases], minutes)
    phases["end_tidal_mac_hours"] = _phase_end_tidal_mac_hours(timecourse, minutes)
    warnings = case_cautions(plan, phases, agent, totals, timecourse)
    totals["sevoflurane_low_flow_caution"] = any(code_of(w) in SEVOFLURANE_LOW_FLOW_CODES for w in warnings)
    return CaseResult(
        plan,
        phases,
        totals,
        reference.prices.currency,
        s.gwp_source,
        reference.gwp_source(s.gwp_source).label,
        warnings,
        timecourse,
        s.uptake_model,
        reference.mac_label,
    )


def _phase_end_tidal_mac_hours(tc: pd.DataFrame, minutes) -> np.ndarray:
    """End-tidal MAC-hours of each phase, in MAC-h.

    The time course's end-tidal MAC multiple integrated (trapezoid rule on the minute grid)
    over the phase.

    The dial-based ``mac_hours`` counts the vaporizer setting; at low flow the end-tidal level
    lies well under the dial, so a comparison of practices uses these.
    """
    t = tc["time_min"].to_numpy()
    et = tc["end_tidal_mac"].to_numpy()
    cumulative = np.concatenate([[0.0], np.cumsum(np.diff(t) * 0.5 * (et[1:] + et[:-1]))])
    ends = np.cumsum(np.asarray(minutes, dtype=float))
    at_ends = np.interp(np.concatenate([[0.0], ends]), t, cumulative)
    return np.diff(at_ends) / 60.0


def _timecourse(series, names, minutes) -> pd.DataFrame:
    """Minute-by-minute table from the recorded simulation of one case."""
    t = series["time_min"][:, 0]
    total = float(np.sum(minutes))
    grid = np.arange(0.0, math.floor(total + 1e-9) + 1.0)
    if total - grid[-1] > 1e-9:
        grid = np.append(grid, total)
    idx = np.clip(np.searchsorted(t, grid - 1e-9, side="left"), 1, len(t) - 1)

    def at(key, scale=1.0):
        return np.interp(grid, t, series[key][:, 0]) * scale

    phase_index = series["phase_index"][idx, 0].astype(int)
    return pd.DataFrame(
        {
            "time_min": grid,
            "phase": [names[i] for i in phase_index],
            "dial_pct": series["dial_pct"][idx, 0],
            "inspired_agent_pct": at("inspired_agent", 100.0),
            "end_tidal_agent_pct": at("end_tidal_agent", 100.0),
            "end_tidal_mac": at("end_tidal_mac"),
            "inspired_o2_pct": at("inspired_o2", 100.0),
            "end_tidal_o2_pct": at("end_tidal_o2", 100.0),
            "inspired_n2o_pct": at("inspired_n2o", 100.0),
            "end_tidal_n2o_pct": at("end_tidal_n2o", 100.0),
            "agent_uptake_ml_min": at("agent_uptake_l_min", 1000.0),
            "agent_vented_ml_min": at("agent_vented_l_min", 1000.0),
            "liquid_agent_cumulative_ml": at("liquid_ml"),
            "co2_absorbed_cumulative_l": at("co2_absorbed_l"),
            "absorbent_used_cumulative_g": at("absorbent_g"),
        }
    )
