"""A department's year from its case mix: totals, months, uncertainty bands and comparisons.

How a year is computed
----------------------
Each case type runs through the circle-system model of a single case
(:func:`model.circle.simulate_cases` and :func:`model.case.simulation_totals`, the physics of
:func:`model.case.compute_case`): patient uptake, the dial the model finds for an end-tidal
target, emitted agent less the metabolised share of uptake, CO2 absorbent, inspired O2.
Simulating every sampled case would be too slow, so each sub-plan of a type (agent x with or
without N2O x following the practice change or not) is simulated once at a few durations
(:data:`NODE_Z`, spanning the type's log-normal duration), all sub-plans of an agent in ONE
vectorised call. A case's totals at any duration are interpolated linearly between those
nodes in the minutes of the stretched phase (:func:`model.casemix.stretch_phase`), where
totals are smooth and near-linear; tests/test_year.py measures the error against direct
simulation at random durations (under 1 %).

A type's year is the sum of its cases. Its mean is exact for the interpolated totals
(partial moments of the log-normal, :func:`piecewise_linear_moments`). Its spread comes from
the year's stretched minutes of the type, one normal draw per type and Monte Carlo draw
(central limit theorem, exact mean and variance of the log-normal less the fixed phases):
each total moves with those minutes by its regression slope on them, which carries at least
``variance_explained`` (R^2, above 0.98 for the demo mix) of the per-case variance.

Uncertainty (seeded, reproducible): per draw, the year's minutes of each type, the share
of cases following the practice change (triangular), every unit price (log-normal around
the given price), and the GWP source (drawn among the listed ones). Paired comparisons
use the same draws for both scenarios, so their difference has its own band.
"""

from __future__ import annotations

import math
import zlib
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd
from scipy.special import ndtr

from .case import SLOW_TARGET_MIN, simulation_totals
from .casemix import CaseMix, CaseType
from .circle import simulate_cases
from .errors import InputError
from .plan import CasePlan, check_dials
from .reference import DEFAULT_REFERENCE, VOLATILES, Reference
from .scenario import MONTHS, Scenario

CAUTION = ("Estimates for planning, budgeting and reporting, not a prescription. Flows, mixes and "
           "dial settings follow local protocols, the workstation's instructions for use and "
           "licensed practice, with inspired O2 and end-tidal agent monitored.")

GASES = ("oxygen", "air", "nitrous_oxide")
#: Quantities carried per case type, in this order. Units: mL, g, L, g, g, min.
QUANTITIES = (*(f"liquid_ml:{a}" for a in VOLATILES), *(f"emitted_g:{a}" for a in VOLATILES),
              "oxygen_l", "air_l", "nitrous_oxide_l", "nitrous_oxide_emitted_g", "absorbent_g", "minutes")
_Q = {name: i for i, name in enumerate(QUANTITIES)}
_LIQ = np.array([_Q[f"liquid_ml:{a}"] for a in VOLATILES])
_EMIT = np.array([_Q[f"emitted_g:{a}"] for a in VOLATILES])
#: Priced items, in the order of the price-factor draws.
PRICE_ITEMS = (*(f"bottle:{a}" for a in VOLATILES), "oxygen", "air", "nitrous_oxide", "absorbent")
#: Slack below which a month's liquid counts as a whole number of bottles. [bottles]
_BOTTLE_SLACK = 1e-9
PERCENTILES = (5.0, 50.0, 95.0)


def _label(agent: str) -> str:
    return DEFAULT_REFERENCE.agents[agent].label


def headline_figures(currency: str) -> list[tuple[str, str, str]]:
    """(key, label, unit) of every headline figure of a year, in report order."""
    rows = [("cases", "Cases", "cases")]
    for a in VOLATILES:
        rows.append((f"liquid_ml_{a}", f"{_label(a)} liquid", "mL"))
    for a in VOLATILES:
        rows.append((f"bottles_{a}", f"{_label(a)} bottles bought", "bottles"))
    rows += [("bottles_total", "Bottles bought, all agents", "bottles"),
             ("oxygen_l", "Oxygen", "L"), ("air_l", "Medical air", "L"),
             ("nitrous_oxide_l", "Nitrous oxide", "L"), ("absorbent_kg", "CO2 absorbent", "kg")]
    for a in VOLATILES:
        rows.append((f"cost_{a}", f"Cost of {_label(a).lower()}", currency))
    rows += [("cost_oxygen", "Cost of oxygen", currency), ("cost_air", "Cost of medical air", currency),
             ("cost_nitrous_oxide", "Cost of nitrous oxide", currency),
             ("cost_absorbent", "Cost of absorbent", currency), ("cost_total", "Cost, total", currency)]
    for a in VOLATILES:
        rows.append((f"co2e_{a}_t", f"CO2e from {_label(a).lower()}", "t CO2e"))
    rows += [("co2e_nitrous_oxide_t", "CO2e from nitrous oxide", "t CO2e"),
             ("co2e_total_t", "CO2e, total", "t CO2e"),
             ("car_km", "Same CO2e as driving an average car", "km")]
    return rows


# --------------------------------------------------------------------------------------
# Per-type fixed amounts and per-minute rates.


def stretch_minutes_moments(median_min, spread, fixed_min):
    """Mean and variance of the stretched phase's minutes of one case.

    Parameters
    ----------
    median_min : array_like
        Median case duration. [min]
    spread : array_like
        Standard deviation of ln(duration) of the log-normal case duration. [1]
    fixed_min : array_like
        Minutes of the phases that keep their length. [min]

    Returns
    -------
    mean, variance : ndarray
        Of ``max(D - fixed, 0)``. [min], [min^2]

    Notes
    -----
    For ln D ~ N(mu, s^2): ``E[D^k 1{D>f}] = exp(k mu + k^2 s^2 / 2) Phi((mu + k s^2 - ln f) / s)``,
    so ``E[(D-f)+] = E[D 1{D>f}] - f P(D>f)`` and
    ``E[(D-f)+^2] = E[D^2 1{D>f}] - 2 f E[D 1{D>f}] + f^2 P(D>f)``.

    References
    ----------
    .. [1] Johnson NL, Kotz S, Balakrishnan N. Continuous Univariate Distributions, vol. 1,
       2nd ed., 1994, ch. 14 (partial moments of the log-normal distribution).
    """
    med = np.asarray(median_min, dtype=float)
    s = np.asarray(spread, dtype=float)
    f = np.asarray(fixed_min, dtype=float)
    mu = np.log(med)
    zero = s <= 0
    s_safe = np.where(zero, 1.0, s)
    with np.errstate(divide="ignore"):
        log_f = np.where(f > 0, np.log(np.where(f > 0, f, 1.0)), -np.inf)
    p = ndtr((mu - log_f) / s_safe)
    e1 = np.exp(mu + s_safe ** 2 / 2) * ndtr((mu + s_safe ** 2 - log_f) / s_safe)
    e2 = np.exp(2 * mu + 2 * s_safe ** 2) * ndtr((mu + 2 * s_safe ** 2 - log_f) / s_safe)
    m1 = e1 - f * p
    m2 = e2 - 2 * f * e1 + f * f * p
    var = np.maximum(m2 - m1 * m1, 0.0)
    fixed_case = np.maximum(med - f, 0.0)
    return np.where(zero, fixed_case, m1), np.where(zero, 0.0, var)


def practised_plan(ctype: CaseType, scenario: Scenario):
    """The type's plan and agent shares for cases that follow the scenario's practice change.

    The maintenance flow scales the stretched phase's O2, air and N2O flows alike (then the
    O2 share, if set, splits that flow between O2 and the rest); the dial factor multiplies
    its dial setting in "dial" mode (in "target" mode the circle model
    finds the dial that holds the end-tidal target at the new flow).
    """
    pr = scenario.practice
    plan = ctype.plan
    k = ctype.stretch_index
    phase = plan.phases[k]
    changes = {}
    if pr.maintenance_flow_l_min is not None and phase.fgf_l_min > 0:
        scale = pr.maintenance_flow_l_min / phase.fgf_l_min
        changes.update(o2_l_min=phase.o2_l_min * scale, air_l_min=phase.air_l_min * scale,
                       n2o_l_min=phase.n2o_l_min * scale)
    if pr.maintenance_o2_share is not None:
        total = pr.maintenance_flow_l_min if pr.maintenance_flow_l_min is not None else phase.fgf_l_min
        air, n2o = changes.get("air_l_min", phase.air_l_min), changes.get("n2o_l_min", phase.n2o_l_min)
        rest = total * (1.0 - pr.maintenance_o2_share)
        other = air + n2o
        changes.update(o2_l_min=total * pr.maintenance_o2_share,
                       air_l_min=rest * air / other if other > 0 else rest,
                       n2o_l_min=rest * n2o / other if other > 0 else 0.0)
    if pr.dial_factor != 1.0 and phase.dial_pct is not None:
        changes["dial_pct"] = phase.dial_pct * pr.dial_factor
    if changes:
        plan = plan.with_phase(k, **changes)
    shares = dict(ctype.agent_shares)
    if pr.switch_from is not None:
        moved = shares.get(pr.switch_from, 0.0)
        shares[pr.switch_from] = 0.0
        shares[pr.switch_to] = shares.get(pr.switch_to, 0.0) + moved
    return plan, shares


@dataclass
class YearInputs:
    """Everything the sampling needs, computed once per scenario (arrays over case types)."""

    names: tuple[str, ...]
    counts: np.ndarray          # (I,) cases per year
    stretch_mean: np.ndarray    # (I,) mean stretched minutes per case [min]
    stretch_var: np.ndarray     # (I,) their variance [min^2]
    fixed: np.ndarray           # (2, I, Q) per-case intercepts; [0] as written, [1] changed
    rate: np.ndarray            # (2, I, Q) amounts per stretched minute (regression slopes)
    prices: np.ndarray          # (len(PRICE_ITEMS),) central unit prices
    bottle_ml: np.ndarray       # (A,) bottle volumes [mL]
    gwp: np.ndarray             # (S, A + 1) GWP per source (agents, then N2O) [kg CO2e/kg]
    gwp_keys: tuple[str, ...]
    adherence: tuple[float, float, float]   # low, mode, high [1]
    month_weights: np.ndarray   # (12,) summing to 1
    car_kg_per_km: float
    currency: str
    gwp_label: str
    warnings: list[str] = field(default_factory=list)
    #: The simulated sub-plans (type x practice x agent x N2O use): see :class:`SubPlan`.
    subplans: list = field(default_factory=list)
    #: Smallest share of a sub-plan's per-case variance (from durations) that the slope in
    #: the stretched minutes carries: R^2 over sub-plans and quantities. [1]
    variance_explained: float = 1.0


@dataclass
class SubPlan:
    """One simulated variant of a case type, with its per-case totals at the duration nodes."""

    type_index: int
    variant: int                # 0 = plan as written, 1 = practice change followed
    agent: str
    with_n2o: bool
    weight: float               # share of the type's cases [1]
    plan: CasePlan              # the plan as simulated (this agent, N2O use, practice)
    stretch_index: int
    nodes_min: np.ndarray       # (K,) stretched minutes at the nodes [min]
    totals: np.ndarray          # (K, Q) per-case amounts at the nodes (units of QUANTITIES)


#: Duration nodes of each case type as standard normal quantiles of ln(duration): the type
#: is simulated at ``median x exp(spread x z)`` for these ``z`` (a numerical choice, no
#: source). Per-case totals between nodes are interpolated linearly in the stretched minutes
#: and extrapolated linearly beyond the outer nodes; against direct simulation of the
#: Fernhollow mix at random durations the error is under 0.6 % (tests/test_year.py checks 1 %).
NODE_Z = (-2.5, -1.25, 0.0, 1.25, 2.5)


def duration_nodes(median_min, spread, fixed_min, z=NODE_Z) -> np.ndarray:
    """Stretched minutes at which a case type is simulated: sorted, distinct, >= 0. [min]

    The median is always a node, so a type without spread is simulated at its median only.
    """
    x = np.maximum(median_min * np.exp(spread * np.asarray(z, dtype=float)) - fixed_min, 0.0)
    x = np.unique(np.append(x, max(median_min - fixed_min, 0.0)))
    keep = np.concatenate([[True], np.diff(x) > 1e-6 * np.maximum(x[1:], 1.0)])
    return x[keep]


def interpolate_nodes(nodes_min, values, stretch_min) -> np.ndarray:
    """Per-case totals at any stretched minutes from their values at the nodes.

    Parameters
    ----------
    nodes_min : array_like, (K,)
        Stretched minutes of the nodes, increasing. [min]
    values : array_like, (K, Q)
        Per-case totals at the nodes.
    stretch_min : array_like, (N,)
        Stretched minutes wanted (>= 0). [min]

    Returns
    -------
    ndarray, (N, Q)
        Piecewise-linear interpolation, extrapolated linearly beyond the outer nodes (the
        per-case totals are near-linear in the stretched maintenance phase).
    """
    x = np.asarray(nodes_min, dtype=float)
    f = np.asarray(values, dtype=float).reshape(len(x), -1)
    s = np.asarray(stretch_min, dtype=float)
    if len(x) == 1:
        return np.broadcast_to(f[0], (len(s), f.shape[1])).copy()
    j = np.clip(np.searchsorted(x, s, side="right") - 1, 0, len(x) - 2)
    slope = (f[1:] - f[:-1]) / (x[1:] - x[:-1])[:, None]
    return f[j] + slope[j] * (s - x[j])[:, None]


def piecewise_linear_moments(nodes_min, values, median_min, spread, fixed_min):
    """Mean, covariance with the stretched minutes, and variance of interpolated per-case totals.

    Parameters
    ----------
    nodes_min, values : array_like, (K,), (K, Q)
        As in :func:`interpolate_nodes`, which defines the function ``f(x)``.
    median_min, spread, fixed_min : float
        The log-normal case duration ``D`` (median [min], SD of ln D [1]) and the minutes of
        the phases that keep their length [min]; ``x = max(D - fixed, 0)``.

    Returns
    -------
    mean, cov, var : ndarray, (Q,)
        ``E[f(x)]``, ``Cov(f(x), x)`` and ``Var(f(x))``.

    Notes
    -----
    Exact for the piecewise-linear ``f``: on each segment ``f = alpha + beta D`` and the
    partial moments ``E[D^k 1{a < D <= b}] = exp(k mu + k^2 s^2 / 2) [Phi((ln b - mu - k s^2) / s)
    - Phi((ln a - mu - k s^2) / s)]`` of the log-normal give every term; cases shorter than
    the fixed phases (``x = 0``) take ``f(0)``.

    References
    ----------
    .. [1] Johnson NL, Kotz S, Balakrishnan N. Continuous Univariate Distributions, vol. 1,
       2nd ed., 1994, ch. 14 (partial moments of the log-normal distribution).
    """
    x = np.asarray(nodes_min, dtype=float)
    f = np.asarray(values, dtype=float).reshape(len(x), -1)
    zero = np.zeros(f.shape[1])
    if spread <= 0:
        at = max(median_min - fixed_min, 0.0)
        return interpolate_nodes(x, f, [at])[0], zero, zero
    if len(x) == 1:
        return f[0].copy(), zero, zero
    mu, s, c = math.log(median_min), float(spread), float(fixed_min)
    b = (f[1:] - f[:-1]) / (x[1:] - x[:-1])[:, None]          # (K-1, Q) slopes per segment
    a = f[:-1] - b * x[:-1, None]                             # intercepts in x
    edges = np.concatenate([[0.0], x[1:-1], [np.inf]]) + c    # segment edges in D
    with np.errstate(divide="ignore"):
        log_e = np.log(edges)

    def partial(k):
        cdf = ndtr((log_e - mu - k * s * s) / s)
        return math.exp(k * mu + k * k * s * s / 2.0) * np.diff(cdf)   # (K-1,)

    m0, m1, m2 = partial(0), partial(1), partial(2)
    p_short = float(ndtr((math.log(c) - mu) / s)) if c > 0 else 0.0
    alpha = a - b * c                                          # f = alpha + b D on a segment
    m0, m1, m2 = m0[:, None], m1[:, None], m2[:, None]
    e_f = a[0] * p_short + (alpha * m0 + b * m1).sum(axis=0)
    e_fx = (alpha * m1 - alpha * c * m0 + b * m2 - b * c * m1).sum(axis=0)
    e_f2 = a[0] ** 2 * p_short + (alpha ** 2 * m0 + 2 * alpha * b * m1 + b ** 2 * m2).sum(axis=0)
    e_x = float(stretch_minutes_moments(median_min, spread, fixed_min)[0])
    return e_f, e_fx - e_f * e_x, np.maximum(e_f2 - e_f * e_f, 0.0)


def _dial_for(agent, plan_agent, dial):
    """Dial setting of ``agent`` at the same MAC multiple as ``dial`` of ``plan_agent``.

    Common practice, no source: equal MAC multiples are taken as equal depth; the setting
    is capped at the vaporizer's maximum.
    """
    if agent.name == plan_agent.name:
        return dial
    return min(dial * agent.mac40 / plan_agent.mac40, agent.vaporizer_max)


def _subplans(scenario: Scenario, ref: Reference) -> list[SubPlan]:
    """The sub-plans of a scenario: type x practice (as written / changed) x agent x N2O use."""
    out = []
    changed = scenario.practice.changes_anything
    for i, t in enumerate(scenario.casemix.types):
        check_dials(t.plan, ref, f"case type '{t.name}', plan '{t.plan.name}'")
        plan_agent = ref.volatile(t.plan.agent)
        nodes = duration_nodes(t.median_min, t.spread, t.fixed_min)
        variants = [(0, t.plan, dict(t.agent_shares))]
        if changed:
            variants.append((1, *practised_plan(t, scenario)))
        for v, plan, shares in variants:
            for agent_name, share in shares.items():
                if share <= 0:
                    continue
                agent = ref.volatile(agent_name)
                for with_n2o, w in ((False, 1.0 - t.n2o_share), (True, t.n2o_share)):
                    if share * w <= 0:
                        continue
                    phases = []
                    for p in plan.phases:
                        if with_n2o:
                            o2, air, n2o = p.o2_l_min, 0.0, p.n2o_l_min + p.air_l_min
                        else:
                            o2, air, n2o = p.o2_l_min, p.air_l_min + p.n2o_l_min, 0.0
                        dial = None if p.dial_pct is None else _dial_for(agent, plan_agent, p.dial_pct)
                        phases.append(replace(p, o2_l_min=o2, air_l_min=air, n2o_l_min=n2o, dial_pct=dial))
                    sub = replace(plan, agent=agent_name, phases=tuple(phases))
                    out.append(SubPlan(i, v, agent_name, with_n2o, share * w, sub, t.stretch_index, nodes,
                                       np.zeros((len(nodes), len(QUANTITIES)))))
    return out


def _group_key(agent: str, s) -> tuple:
    """Plans sharing a simulate_cases call: one agent and the scalar settings of the call."""
    return (agent, s.uptake_model, s.temperature_c, s.pressure_kpa, s.min_o2_share, s.min_o2_flow_l_min,
            s.ratio_behaviour, s.inspired_o2_floor, s.absorbent_capacity_l_per_kg)


def _column_key(sub: SubPlan, x: float) -> tuple:
    pt, s = sub.plan.patient, sub.plan.settings
    phases = tuple((x if j == sub.stretch_index else p.minutes, p.o2_l_min, p.air_l_min, p.n2o_l_min,
                    p.dial_pct, p.target_mac) for j, p in enumerate(sub.plan.phases))
    return (sub.stretch_index, phases, pt.weight_kg, pt.age_years, pt.cardiac_output_l_min, pt.vo2_ml_min,
            pt.minute_ventilation_l_min, s.circle_volume_l, s.capture_efficiency)


#: Recent simulations by their exact inputs (agent data, settings, every column), so that a
#: rerun that changes only counts, prices, adherence or sampling does not simulate again.
#: The cached arrays are never written to.
_SIM_CACHE: dict = {}
_SIM_CACHE_SIZE = 16


def simulate_subplans(subplans: list[SubPlan], ref: Reference) -> dict:
    """Simulate every sub-plan at its duration nodes with the circle model; fill ``totals``.

    All sub-plans of one agent (and the same scalar settings) run as ONE vectorised
    :func:`model.circle.simulate_cases` call, one column per distinct (plan, node); the
    columns then go through :func:`model.case.simulation_totals`, as in
    :func:`model.case.compute_case`. Phases are aligned on the stretched phase: a plan with
    fewer phases before (after) it gets zero-minute phases in front (at the end) that copy
    its first (last) phase's flows, in dial mode (the first phase's dial, or 0 when that phase
    holds a target, as the simulation starts), which leave the simulated case unchanged.

    Returns
    -------
    dict
        ``groups``: group key -> ``q`` (columns x QUANTITIES), ``sim`` and ``tot`` (the
        simulation and its totals), ``offsets`` (padding in front of each column);
        ``where``: (sub-plan index, node index, group key, column index) for every node.
    """
    groups: dict[tuple, dict] = {}
    where = []
    for si, sub in enumerate(subplans):
        g = groups.setdefault(_group_key(sub.agent, sub.plan.settings), {"cols": {}, "specs": []})
        for k, x in enumerate(sub.nodes_min):
            key = _column_key(sub, float(x))
            if key not in g["cols"]:
                g["cols"][key] = len(g["specs"])
                g["specs"].append((sub, float(x)))
            where.append((si, k, _group_key(sub.agent, sub.plan.settings), g["cols"][key]))
    facts = {}
    for gkey, g in groups.items():
        specs = g["specs"]
        agent = ref.volatile(gkey[0])
        cache_key = (gkey, repr(agent), repr(ref.agents["nitrous_oxide"]), tuple(g["cols"]))
        if cache_key in _SIM_CACHE:
            g.update(_SIM_CACHE[cache_key])
            facts[gkey] = g
            continue
        pre = max(sub.stretch_index for sub, _ in specs)
        post = max(len(sub.plan.phases) - sub.stretch_index - 1 for sub, _ in specs)
        n_ph, n = pre + 1 + post, len(specs)
        arr = {k: np.zeros((n_ph, n)) for k in ("minutes", "o2", "air", "n2o", "dial", "target")}
        arr["target"][:] = np.nan
        offsets = np.zeros(n, dtype=int)
        for c, (sub, x) in enumerate(specs):
            phases = sub.plan.phases
            off = pre - sub.stretch_index
            offsets[c] = off
            first = phases[0]
            for j in range(n_ph):
                r = j - off
                p = phases[min(max(r, 0), len(phases) - 1)]
                arr["o2"][j, c], arr["air"][j, c], arr["n2o"][j, c] = p.o2_l_min, p.air_l_min, p.n2o_l_min
                if 0 <= r < len(phases):
                    arr["minutes"][j, c] = x if r == sub.stretch_index else p.minutes
                    arr["dial"][j, c] = np.nan if p.dial_pct is None else p.dial_pct
                    arr["target"][j, c] = np.nan if p.target_mac is None else p.target_mac
                elif r < 0 and first.dial_pct is not None:
                    arr["dial"][j, c] = first.dial_pct   # same start as the plan alone
        pts = [sub.plan.patient for sub, _ in specs]
        opt = lambda v: np.nan if v is None else float(v)  # noqa: E731
        s0 = specs[0][0].plan.settings
        sim = simulate_cases(
            agent, arr["minutes"], arr["o2"], arr["air"], arr["n2o"], arr["dial"], arr["target"],
            weight_kg=np.array([p.weight_kg for p in pts]), age_years=np.array([p.age_years for p in pts]),
            cardiac_output_l_min=np.array([opt(p.cardiac_output_l_min) for p in pts]),
            vo2_ml_min=np.array([opt(p.vo2_ml_min) for p in pts]),
            minute_ventilation_l_min=np.array([opt(p.minute_ventilation_l_min) for p in pts]),
            uptake_model=s0.uptake_model,
            circle_volume_l=np.array([sub.plan.settings.circle_volume_l for sub, _ in specs]),
            absorbent_capacity_l_per_kg=s0.absorbent_capacity_l_per_kg, temperature_c=s0.temperature_c,
            pressure_kpa=s0.pressure_kpa, min_o2_share=s0.min_o2_share, min_o2_flow_l_min=s0.min_o2_flow_l_min,
            ratio_behaviour=s0.ratio_behaviour, inspired_o2_floor=s0.inspired_o2_floor,
            nitrous_oxide=ref.agents["nitrous_oxide"])
        tot, _ = simulation_totals(
            sim, agent, ref.prices, gwp_agent=1.0, gwp_n2o=1.0,
            capture_efficiency=np.array([sub.plan.settings.capture_efficiency for sub, _ in specs]),
            temperature_c=s0.temperature_c, pressure_kpa=s0.pressure_kpa, nitrous_oxide=ref.agents["nitrous_oxide"])
        q = np.zeros((n, len(QUANTITIES)))
        q[:, _Q[f"liquid_ml:{agent.name}"]] = tot["liquid_agent_ml"]
        q[:, _Q[f"emitted_g:{agent.name}"]] = tot["agent_emitted_g"]
        q[:, _Q["oxygen_l"]] = tot["oxygen_l"]
        q[:, _Q["air_l"]] = tot["air_l"]
        q[:, _Q["nitrous_oxide_l"]] = tot["nitrous_oxide_l"]
        q[:, _Q["nitrous_oxide_emitted_g"]] = tot["nitrous_oxide_emitted_g"]
        q[:, _Q["absorbent_g"]] = tot["absorbent_g"]
        q[:, _Q["minutes"]] = tot["duration_min"]
        g["q"], g["sim"], g["tot"], g["offsets"] = q, sim, tot, offsets
        facts[gkey] = g
        if len(_SIM_CACHE) >= _SIM_CACHE_SIZE:
            _SIM_CACHE.pop(next(iter(_SIM_CACHE)))
        _SIM_CACHE[cache_key] = {k: g[k] for k in ("q", "sim", "tot", "offsets")}
    for si, k, gkey, c in where:
        subplans[si].totals[k] = facts[gkey]["q"][c]
    return {"groups": facts, "where": where}


def year_inputs(scenario: Scenario, reference: Reference = DEFAULT_REFERENCE) -> YearInputs:
    """Per-type intercepts and per-minute slopes of a scenario, and its prices and GWPs.

    Raises
    ------
    InputError
        A GWP source lacks a value for an agent the mix uses; prices are malformed.
    """
    return _year_inputs_many([scenario], reference)[0]


def _year_inputs_many(scenarios, reference: Reference) -> list[YearInputs]:
    """Year inputs of several scenarios with their simulations in shared calls (one per agent)."""
    refs = [s.reference(reference) for s in scenarios]
    subs = [_subplans(s, r) for s, r in zip(scenarios, refs)]
    flat = [sp for group in subs for sp in group]
    run = simulate_subplans(flat, refs[0]) if flat else {"groups": {}, "where": []}
    # Which (group, column) each sub-plan node used, for the warnings.
    cols_of: dict[int, list] = {}
    for si, k, gkey, c in run["where"]:
        cols_of.setdefault(si, []).append((gkey, c))
    out, start = [], 0
    for scenario, ref, group in zip(scenarios, refs, subs):
        idx = range(start, start + len(group))
        start += len(group)
        out.append(_assemble(scenario, ref, group, [cols_of.get(i, []) for i in idx], run["groups"]))
    return out


def _assemble(scenario: Scenario, ref: Reference, subplans: list[SubPlan], cols, groups) -> YearInputs:
    mix: CaseMix = scenario.casemix
    types = mix.types
    n_types = len(types)
    changed = scenario.practice.changes_anything
    mean, var = stretch_minutes_moments([t.median_min for t in types], [t.spread for t in types],
                                        [t.fixed_min for t in types])
    e_f = np.zeros((2, n_types, len(QUANTITIES)))
    cov = np.zeros_like(e_f)
    warnings: dict[str, dict] = {}   # caution text -> case types it applies to
    r2 = [1.0]
    for sub, where in zip(subplans, cols):
        t = types[sub.type_index]
        m, c, v = piecewise_linear_moments(sub.nodes_min, sub.totals, t.median_min, t.spread, t.fixed_min)
        e_f[sub.variant, sub.type_index] += sub.weight * m
        cov[sub.variant, sub.type_index] += sub.weight * c
        # Share of the per-case variance that the linear term in the minutes carries.
        x_var = var[sub.type_index]
        ok = (v > 1e-12 * np.maximum(m * m, 1e-300)) & (x_var > 0)
        if ok.any():
            r2.append(float(np.min(c[ok] ** 2 / (v[ok] * x_var))))
        _subplan_warnings(warnings, t, sub, where, groups, ref)
    if not changed:
        e_f[1], cov[1] = e_f[0], cov[0]
    has_var = var > 0
    rate = np.where(has_var[None, :, None], cov / np.where(has_var, var, 1.0)[None, :, None], 0.0)
    fixed = e_f - rate * mean[None, :, None]
    used_agents = {sp.agent for sp in subplans}
    uses_n2o = any(q.n2o_l_min > 0 for sp in subplans for q in sp.plan.phases)
    prices = ref.prices
    price_vec = np.array([prices.bottle.get(a, 0.0) for a in VOLATILES]
                         + [prices.oxygen_per_1000_l, prices.air_per_1000_l,
                            prices.nitrous_oxide_per_1000_l, prices.absorbent_per_kg])
    gwp_keys = (scenario.gwp_source, *scenario.sampling.gwp_sources)
    gwp = np.zeros((len(gwp_keys), len(VOLATILES) + 1))
    for s_i, src in enumerate(gwp_keys):
        try:
            for a_i, a in enumerate(VOLATILES):
                if a in used_agents:
                    gwp[s_i, a_i] = ref.gwp(a, src)
            gwp[s_i, -1] = ref.gwp("nitrous_oxide", src, used=uses_n2o)
        except InputError as err:  # name the scenario and its field
            field = "gwp_source" if s_i == 0 else "uncertainty.gwp_sources"
            raise InputError(f"{scenario.source}: {field}" if scenario.source else field,
                             src, err.allowed) from None
    weights = np.asarray(scenario.month_weights, dtype=float)
    pr = scenario.practice
    return YearInputs(
        names=tuple(t.name for t in types),
        counts=np.array([t.cases_per_year for t in types], dtype=float),
        stretch_mean=mean, stretch_var=var, fixed=fixed, rate=rate, prices=price_vec,
        bottle_ml=np.array([ref.volatile(a).bottle_volume for a in VOLATILES]),
        gwp=gwp, gwp_keys=gwp_keys,
        adherence=(pr.adherence_low, pr.adherence, pr.adherence_high) if changed else (1.0, 1.0, 1.0),
        month_weights=weights / weights.sum(), car_kg_per_km=scenario.car_kg_per_km,
        currency=prices.currency, gwp_label=ref.gwp_source(scenario.gwp_source).label,
        warnings=[f"{', '.join(names)}: {text}" for text, names in warnings.items()], subplans=subplans,
        variance_explained=float(np.clip(min(r2), 0.0, 1.0)))


def _subplan_warnings(out: dict, ctype: CaseType, sub: SubPlan, where, groups, ref: Reference) -> None:
    """Cautions of a sub-plan from its simulation (the checks of :func:`model.case.case_warnings`)."""
    if not where:
        return
    plan, s = sub.plan, sub.plan.settings
    floor_pct = s.inspired_o2_floor * 100.0
    label = ref.agents[sub.agent].label.lower()
    # Keyed by the text without the type's name, so types with the same caution share a line.
    who = f"{'changed practice, ' if sub.variant else ''}{label}{' with N2O' if sub.with_n2o else ''}"

    def add(text):
        out.setdefault(text, {})[ctype.name] = None

    gkey, c0 = where[-1]
    g = groups[gkey]
    sim, off = g["sim"], int(g["offsets"][c0])
    for j, p in enumerate(plan.phases):
        row = off + j
        fgf = float(sim["phase_fgf_l_min"][row, c0])
        fd_o2 = float(sim["phase_fd_o2"][row, c0])
        safe = float(sim["phase_lowest_safe_fd_o2"][row, c0])
        at = f"{who}, {p.name}"
        if bool(sim["phase_altered"][row, c0]):
            add(f"{at}: the O2/N2O ratio limit altered the requested mix")
        if sub.agent == "sevoflurane" and fgf < s.sevoflurane_min_flow_l_min - 1e-12:
            add(f"{at}: {fgf:.2f} L/min is under the set sevoflurane minimum of "
                f"{s.sevoflurane_min_flow_l_min:g} L/min; follow local protocol and labelling")
        if fd_o2 < s.inspired_o2_floor - 1e-12:
            add(f"{at}: fresh gas O2 {fd_o2 * 100:.0f} % is under the inspired O2 floor of "
                f"{floor_pct:.0f} %; inspired O2 in a circle is lower still")
        elif math.isfinite(safe) and fd_o2 < safe - 1e-9:
            add(f"{at}: at {fgf:.2f} L/min, fresh gas O2 {fd_o2 * 100:.0f} % is under the {safe * 100:.0f} % "
                f"that keeps inspired O2 above {floor_pct:.0f} % at steady state")
        elif not math.isfinite(safe):
            add(f"{at}: fresh gas flow {fgf:.2f} L/min does not exceed the O2 consumption; no fresh gas "
                f"mix keeps inspired O2 above {floor_pct:.0f} %")
        if p.target_mac is not None:
            reach = [g2["sim"]["phase_time_to_target_min"][int(g2["offsets"][c]) + j, c]
                     for g2, c in ((groups[k], c) for k, c in where)
                     if g2["sim"]["phase_minutes"][int(g2["offsets"][c]) + j, c] > 0]
            if any(not math.isfinite(r) for r in reach):
                add(f"{at}: the end-tidal target of {p.target_mac:g} MAC is not reached within the phase "
                    f"at {fgf:.2f} L/min (vaporizer maximum {ref.agents[sub.agent].vaporizer_max:g} "
                    f"%); raise the flow or allow longer")
            elif reach and max(reach) > SLOW_TARGET_MIN:
                # The slow response of low flow, as for a single case (model.case.case_warnings).
                add(f"{at}: end-tidal reaches the target of {p.target_mac:g} MAC only after "
                    f"{max(reach):.0f} min at {fgf:.2f} L/min")
    worst = None
    for gk, c in where:
        tot = groups[gk]["tot"]
        fio2 = float(tot["min_inspired_o2_pct"][c])
        if fio2 < floor_pct and (worst is None or fio2 < worst[0]):
            worst = (fio2,)
        if float(tot["o2_shortfall_l"][c]) > 1e-6:
            add(f"{who}: the circle runs out of O2 for the patient's consumption; O2 inflow must at "
                f"least match consumption")
        k = sub.stretch_index
        stretch_fgf = float(groups[gk]["sim"]["phase_fgf_l_min"][int(groups[gk]["offsets"][c]) + k, c])
        if (sub.agent == "sevoflurane" and float(tot["end_tidal_mac_hours"][c]) > 1.0
                and stretch_fgf < s.sevoflurane_min_flow_long_l_min - 1e-12):
            add(f"{who}: cases beyond 1 MAC-hour run sevoflurane at {stretch_fgf:.2f} L/min in "
                f"{plan.phases[k].name}, under the set minimum of {s.sevoflurane_min_flow_long_l_min:g} L/min; "
                f"follow local protocol and labelling")
    if worst is not None:
        add(f"{who}: predicted inspired O2 falls to {worst[0]:.0f} %, under the floor of {floor_pct:.0f} %: "
            f"hypoxic mixture; raise the O2 share or the flow")


# --------------------------------------------------------------------------------------
# Draws and the vectorised year.


@dataclass(frozen=True)
class Draws:
    """The random numbers of a Monte Carlo run; shared by scenarios compared in pairs."""

    n: int
    seed: int
    #: Standard normal draw of each case type's year of minutes, keyed by type name. (n,)
    z_types: dict
    u_adherence: np.ndarray     # (n,) uniform
    z_price: np.ndarray         # (n, len(PRICE_ITEMS)) standard normal
    u_gwp: np.ndarray           # (n,) uniform


def make_draws(type_names, n: int, seed: int) -> Draws:
    """Seeded draws; each type's stream depends only on the seed and the type's name.

    So a proposal that keeps a case type shares that type's draws with the baseline even
    when the rows of the two mixes differ.
    """
    if n < 1:
        raise InputError("draws", n, "at least 1")
    rng = np.random.default_rng(seed)
    u_adh = rng.random(n)
    z_price = rng.standard_normal((n, len(PRICE_ITEMS)))
    u_gwp = rng.random(n)
    z_types = {name: np.random.default_rng([seed, zlib.crc32(name.encode("utf-8"))]).standard_normal(n)
               for name in dict.fromkeys(type_names)}
    return Draws(n, seed, z_types, u_adh, z_price, u_gwp)


def triangular_ppf(u, low, mode, high):
    """Inverse distribution function of the triangular distribution.

    Parameters
    ----------
    u : array_like
        Probabilities in [0, 1].
    low, mode, high : float
        The distribution's support and mode (``low <= mode <= high``).

    Returns
    -------
    ndarray
        Quantiles.

    References
    ----------
    .. [1] Johnson NL, Kotz S, Balakrishnan N. Continuous Univariate Distributions, vol. 2,
       2nd ed., 1995, ch. 26 (triangular distribution).
    """
    u = np.asarray(u, dtype=float)
    if high <= low:
        return np.full_like(u, mode)
    fc = (mode - low) / (high - low)
    left = low + np.sqrt(u * (high - low) * (mode - low))
    right = high - np.sqrt((1.0 - u) * (high - low) * (high - mode))
    return np.where(u < fc, left, right)


def _simulate(inp: YearInputs, z: np.ndarray, adherence: np.ndarray, price_factor: np.ndarray,
              gwp_index: np.ndarray) -> tuple[dict, dict]:
    """Headline figures per draw, and monthly arrays.

    Shapes: ``z`` (D, I), ``adherence`` (D,), ``price_factor`` (D, len(PRICE_ITEMS)),
    ``gwp_index`` (D,) integers into ``inp.gwp``.
    """
    n = inp.counts
    minutes = np.maximum(n * inp.stretch_mean + np.sqrt(n * inp.stretch_var) * z, 0.0)   # (D, I)
    f0, f1 = n @ inp.fixed[0], n @ inp.fixed[1]                                           # (Q,)
    r0, r1 = inp.rate[0], inp.rate[1]                                                     # (I, Q)
    adh = adherence[:, None]
    q = f0 + adh * (f1 - f0) + minutes @ r0 + adh * (minutes @ (r1 - r0))                 # (D, Q)
    q = np.maximum(q, 0.0)
    w = inp.month_weights
    liquid = q[:, _LIQ]                                                                   # (D, A)
    monthly_liquid = liquid[:, None, :] * w[None, :, None]                                # (D, 12, A)
    monthly_bottles = np.maximum(np.ceil(monthly_liquid / inp.bottle_ml - _BOTTLE_SLACK), 0.0)
    bottles = monthly_bottles.sum(axis=1)                                                 # (D, A)
    price = inp.prices * price_factor                                                     # (D, P)
    n_a = len(VOLATILES)
    cost_agents = bottles * price[:, :n_a]
    gas = q[:, [_Q["oxygen_l"], _Q["air_l"], _Q["nitrous_oxide_l"]]]
    cost_gas = gas / 1000.0 * price[:, n_a:n_a + 3]
    absorbent_kg = q[:, _Q["absorbent_g"]] / 1000.0
    cost_abs = absorbent_kg * price[:, n_a + 3]
    gwp = inp.gwp[gwp_index]                                                              # (D, A + 1)
    co2e_agents_kg = q[:, _EMIT] / 1000.0 * gwp[:, :n_a]
    co2e_n2o_kg = q[:, _Q["nitrous_oxide_emitted_g"]] / 1000.0 * gwp[:, -1]
    co2e_total_kg = co2e_agents_kg.sum(axis=1) + co2e_n2o_kg
    cost_total = cost_agents.sum(axis=1) + cost_gas.sum(axis=1) + cost_abs
    out = {"cases": np.full(len(z), n.sum())}
    for a_i, a in enumerate(VOLATILES):
        out[f"liquid_ml_{a}"] = liquid[:, a_i]
    for a_i, a in enumerate(VOLATILES):
        out[f"bottles_{a}"] = bottles[:, a_i]
    out["bottles_total"] = bottles.sum(axis=1)
    for g_i, g in enumerate(GASES):
        out[f"{g}_l"] = gas[:, g_i]
    out["absorbent_kg"] = absorbent_kg
    for a_i, a in enumerate(VOLATILES):
        out[f"cost_{a}"] = cost_agents[:, a_i]
    for g_i, g in enumerate(GASES):
        out[f"cost_{g}"] = cost_gas[:, g_i]
    out["cost_absorbent"] = cost_abs
    out["cost_total"] = cost_total
    for a_i, a in enumerate(VOLATILES):
        out[f"co2e_{a}_t"] = co2e_agents_kg[:, a_i] / 1000.0
    out["co2e_nitrous_oxide_t"] = co2e_n2o_kg / 1000.0
    out["co2e_total_t"] = co2e_total_kg / 1000.0
    out["car_km"] = co2e_total_kg / inp.car_kg_per_km
    # Emitted masses (not headline figures; in the totals and the JSON). [kg]
    for a_i, a in enumerate(VOLATILES):
        out[f"emitted_kg_{a}"] = q[:, _EMIT[a_i]] / 1000.0
    out["emitted_kg_nitrous_oxide"] = q[:, _Q["nitrous_oxide_emitted_g"]] / 1000.0
    monthly_cost = ((monthly_bottles * price[:, None, :n_a]).sum(axis=2)
                    + (cost_gas.sum(axis=1) + cost_abs)[:, None] * w[None, :])             # (D, 12)
    months = {"liquid_ml": monthly_liquid, "bottles": monthly_bottles, "cost": monthly_cost,
              "co2e_t": co2e_total_kg[:, None] * w[None, :] / 1000.0,
              "q": q}
    return out, months


def _sampled(inp: YearInputs, draws: Draws, price_spread: float):
    z = np.column_stack([draws.z_types[name] for name in inp.names]) if inp.names else np.zeros((draws.n, 0))
    adherence = triangular_ppf(draws.u_adherence, *inp.adherence)
    price_factor = np.exp(price_spread * draws.z_price)
    n_sampled = len(inp.gwp_keys) - 1
    if n_sampled > 0:
        gwp_index = 1 + np.minimum((draws.u_gwp * n_sampled).astype(int), n_sampled - 1)
    else:
        gwp_index = np.zeros(draws.n, dtype=int)
    return _simulate(inp, z, adherence, price_factor, gwp_index)


def _central(inp: YearInputs):
    one = 1
    return _simulate(inp, np.zeros((one, len(inp.names))), np.array([inp.adherence[1]]),
                     np.ones((one, len(PRICE_ITEMS))), np.zeros(one, dtype=int))


# --------------------------------------------------------------------------------------
# Results.


def _percentiles(values: np.ndarray) -> np.ndarray:
    return np.percentile(values, PERCENTILES, axis=0)


@dataclass
class YearResult:
    """A scenario's year: deterministic totals, months, types, and Monte Carlo bands."""

    scenario: Scenario
    inputs: YearInputs
    totals: dict            # key -> float (deterministic: central values, the scenario's GWP source)
    per_case: dict          # key -> float, totals / cases
    summary: pd.DataFrame   # key, figure, unit, deterministic, p5, p50, p95
    monthly: pd.DataFrame   # deterministic figures per month
    by_type: pd.DataFrame   # deterministic figures per case type
    fan: pd.DataFrame       # month, figure, p5, p50, p95 of cumulative cost and CO2e
    draws: dict             # key -> (D,) per-draw figures
    n_draws: int
    seed: int
    notes: list[str] = field(default_factory=list)

    @property
    def currency(self) -> str:
        return self.inputs.currency

    @property
    def warnings(self) -> list[str]:
        return self.inputs.warnings

    def to_dict(self) -> dict:
        """Machine-readable form with stable keys (units in the key names or columns)."""
        return {
            "scenario": self.scenario.name,
            "currency": self.currency,
            "gwp_source": self.scenario.gwp_source,
            "gwp_source_label": self.inputs.gwp_label,
            "gwp_sources_sampled": list(self.scenario.sampling.gwp_sources),
            "draws": self.n_draws,
            "seed": self.seed,
            "car_kg_co2e_per_km": self.scenario.car_kg_per_km,
            "car_factor_source": self.scenario.car_source,
            "totals": _clean(self.totals),
            "per_case": _clean(self.per_case),
            "bands": {r["key"]: _clean({"p5": r["p5"], "p50": r["p50"], "p95": r["p95"]})
                      for r in self.summary.to_dict("records")},
            "monthly": [_clean(r) for r in self.monthly.to_dict("records")],
            "by_type": [_clean(r) for r in self.by_type.to_dict("records")],
            "warnings": list(self.warnings),
            "notes": list(self.notes),
            "caution": CAUTION,
        }


def _clean(d: dict) -> dict:
    out = {}
    for k, v in d.items():
        if isinstance(v, (np.floating, float)):
            v = float(v)
            v = v if math.isfinite(v) else None
        elif isinstance(v, np.integer):
            v = int(v)
        out[k] = v
    return out


def _summary(keys, central: dict, draws: dict) -> pd.DataFrame:
    rows = []
    for key, label, unit in keys:
        p = _percentiles(draws[key])
        rows.append({"key": key, "figure": label, "unit": unit, "deterministic": float(central[key][0]),
                     "p5": float(p[0]), "p50": float(p[1]), "p95": float(p[2])})
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
    per_case = ((1 - a) * (inp.fixed[0] + inp.rate[0] * inp.stretch_mean[:, None])
                + a * (inp.fixed[1] + inp.rate[1] * inp.stretch_mean[:, None]))      # (I, Q)
    year = per_case * inp.counts[:, None]
    gwp = inp.gwp[0]
    co2e_kg = (year[:, _EMIT] / 1000.0 * gwp[:-1]).sum(axis=1) + year[:, _Q["nitrous_oxide_emitted_g"]] / 1000.0 * gwp[-1]
    n_a = len(VOLATILES)
    cost = ((year[:, _LIQ] / inp.bottle_ml * inp.prices[:n_a]).sum(axis=1)
            + (year[:, [_Q[f"{g}_l"] for g in GASES]] / 1000.0 * inp.prices[n_a:n_a + 3]).sum(axis=1)
            + year[:, _Q["absorbent_g"]] / 1000.0 * inp.prices[n_a + 3])
    return pd.DataFrame({
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
    })


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
        "Agent cost is whole bottles bought per month (rounded up); gases and absorbent pro rata.",
        f"Equivalence: {scenario.car_kg_per_km:g} kg CO2e per km by an average car ({scenario.car_source}).",
    ]
    if scenario.practice.changes_anything:
        pr = scenario.practice
        notes.append(f"Practice change followed by {pr.adherence * 100:.0f} % of cases "
                     f"(sampled {pr.adherence_low * 100:.0f}-{pr.adherence_high * 100:.0f} %); "
                     f"the others keep the plan as written.")
    sampled = scenario.sampling.gwp_sources
    if sampled and set(sampled) != {scenario.gwp_source}:
        notes.append(f"The expected column uses {scenario.gwp_source}; the P5-P95 bands also sample the GWP "
                     f"sources {', '.join(sampled)} (the uncertainty of the GWP choice), so an expected "
                     "CO2e can sit near one end of its band.")
    return notes


def compute_year(scenario: Scenario, reference: Reference = DEFAULT_REFERENCE, *,
                 draws: int | None = None, seed: int | None = None,
                 shared: Draws | None = None) -> YearResult:
    """A scenario's year with Monte Carlo bands.

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

    Returns
    -------
    YearResult
        Deterministic totals (central adherence, given prices, the scenario's GWP source,
        mean durations) and P5/P50/P95 of every headline figure over the draws.
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
    sampled, sampled_months = _sampled(inp, shared, scenario.sampling.price_spread)
    return _result(scenario, inp, central, central_months, sampled, sampled_months, shared)


def _result(scenario, inp, central, central_months, sampled, sampled_months, shared) -> YearResult:
    keys = headline_figures(inp.currency)
    totals = {k: float(v[0]) for k, v in central.items()}
    cases = totals["cases"]
    per_case = {k: (v / cases if cases else 0.0) for k, v in totals.items() if k != "cases"}
    return YearResult(
        scenario=scenario, inputs=inp, totals=totals, per_case=per_case,
        summary=_summary(keys, central, sampled), monthly=_monthly_table(inp, central_months),
        by_type=_by_type(inp, inp.adherence[1]), fan=_fan(sampled_months), draws=sampled,
        n_draws=shared.n, seed=shared.seed, notes=_notes(inp, scenario))


@dataclass
class Comparison:
    """A baseline and a proposal over the same draws, and their paired difference."""

    baseline: YearResult
    proposal: YearResult
    #: key, figure, unit, baseline, proposal, difference (deterministic), p5, p50, p95 of the
    #: difference (proposal - baseline; negative = the proposal saves).
    summary: pd.DataFrame
    difference: dict        # key -> (D,) proposal - baseline per draw
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {
            "baseline": self.baseline.scenario.name,
            "proposal": self.proposal.scenario.name,
            "currency": self.baseline.currency,
            "gwp_source": self.baseline.scenario.gwp_source,
            "draws": self.baseline.n_draws,
            "seed": self.baseline.seed,
            "difference": {r["key"]: _clean({k: r[k] for k in ("baseline", "proposal", "difference",
                                                                 "p5", "p50", "p95")})
                           for r in self.summary.to_dict("records")},
            "baseline_totals": _clean(self.baseline.totals),
            "proposal_totals": _clean(self.proposal.totals),
            "warnings": list(dict.fromkeys(self.baseline.warnings + self.proposal.warnings)),
            "notes": list(self.notes),
            "caution": CAUTION,
        }


def compare_years(baseline: Scenario, proposal: Scenario, reference: Reference = DEFAULT_REFERENCE, *,
                  draws: int | None = None, seed: int | None = None) -> Comparison:
    """Paired comparison: both scenarios over the same draws (the baseline's sampling settings).

    The proposal is computed with the baseline's GWP source, GWP sampling, price spread,
    draws and seed, so the two differ only where the scenarios do. Differences are
    proposal minus baseline, draw by draw, so a scenario compared with itself differs by
    exactly zero.

    Raises
    ------
    InputError
        The two scenarios price in different currencies.
    """
    notes = []
    s = baseline.sampling
    if proposal.gwp_source != baseline.gwp_source or proposal.sampling != s:
        notes.append("The proposal is computed with the baseline's GWP source and sampling settings.")
    proposal = replace(proposal, gwp_source=baseline.gwp_source, sampling=s)
    b_inp, p_inp = _year_inputs_many([baseline, proposal], reference)
    if b_inp.currency != p_inp.currency:
        raise InputError("prices.currency", p_inp.currency,
                         f"the proposal must price in the baseline's currency ({b_inp.currency})")
    n = s.draws if draws is None else int(draws)
    sd = s.seed if seed is None else int(seed)
    shared = make_draws(b_inp.names + p_inp.names, n, sd)
    b_c, b_cm = _central(b_inp)
    b_s, b_sm = _sampled(b_inp, shared, s.price_spread)
    p_c, p_cm = _central(p_inp)
    p_s, p_sm = _sampled(p_inp, shared, s.price_spread)
    b_res = _result(baseline, b_inp, b_c, b_cm, b_s, b_sm, shared)
    p_res = _result(proposal, p_inp, p_c, p_cm, p_s, p_sm, shared)
    diff = {k: p_s[k] - b_s[k] for k in b_s}
    rows = []
    for key, label, unit in headline_figures(b_inp.currency):
        p = _percentiles(diff[key])
        rows.append({"key": key, "figure": label, "unit": unit, "baseline": b_res.totals[key],
                     "proposal": p_res.totals[key], "difference": p_res.totals[key] - b_res.totals[key],
                     "p5": float(p[0]), "p50": float(p[1]), "p95": float(p[2])})
    return Comparison(b_res, p_res, pd.DataFrame(rows), diff, notes)


def nonzero_rows(summary: pd.DataFrame, columns=("deterministic", "p5", "p95")) -> pd.DataFrame:
    """The summary without agent rows that are zero throughout (agents the mix never uses)."""
    cols = [c for c in columns if c in summary.columns]
    agent_row = summary["key"].str.contains("|".join(VOLATILES))
    empty = (summary[cols].abs() < 1e-12).all(axis=1)
    return summary[~(agent_row & empty)].reset_index(drop=True)
