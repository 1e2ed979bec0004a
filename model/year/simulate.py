"""Case types through the circle model at their duration nodes.

Sub-plans, one vectorised simulation per agent, and the per-type inputs of a year (see
:mod:`model.year`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np

from model.base.errors import InputError
from model.case import simulation_totals
from model.cautions import SLOW_TARGET_MIN, Caution, by_severity
from model.circle import simulate_cases
from model.plan import CasePlan, check_dials
from model.reference import DEFAULT_REFERENCE, VOLATILES, Reference
from model.year.inputs import CaseMix, CaseType, Scenario
from model.year.nodes import duration_nodes, piecewise_linear_moments, stretch_minutes_moments

GASES = ("oxygen", "air", "nitrous_oxide")
#: Quantities carried per case type, in this order. Units: mL, g, L, g, g, min.
QUANTITIES = (
    *(f"liquid_ml:{a}" for a in VOLATILES),
    *(f"emitted_g:{a}" for a in VOLATILES),
    "oxygen_l",
    "air_l",
    "nitrous_oxide_l",
    "nitrous_oxide_emitted_g",
    "absorbent_g",
    "minutes",
)
_Q = {name: i for i, name in enumerate(QUANTITIES)}
_LIQ = np.array([_Q[f"liquid_ml:{a}"] for a in VOLATILES])
_EMIT = np.array([_Q[f"emitted_g:{a}"] for a in VOLATILES])
#: Priced items, in the order of the price-factor draws.
PRICE_ITEMS = (*(f"bottle:{a}" for a in VOLATILES), "oxygen", "air", "nitrous_oxide", "absorbent")
#: Slack below which a month's liquid counts as a whole number of bottles. [bottles]
_BOTTLE_SLACK = 1e-9


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
    changes: dict[str, float] = {}
    if pr.maintenance_flow_l_min is not None and phase.fgf_l_min > 0:
        scale = pr.maintenance_flow_l_min / phase.fgf_l_min
        changes.update(
            oxygen_l_min=phase.oxygen_l_min * scale,
            air_l_min=phase.air_l_min * scale,
            nitrous_oxide_l_min=phase.nitrous_oxide_l_min * scale,
        )
    if pr.maintenance_o2_share is not None:
        total = pr.maintenance_flow_l_min if pr.maintenance_flow_l_min is not None else phase.fgf_l_min
        air, n2o = (
            changes.get("air_l_min", phase.air_l_min),
            changes.get("nitrous_oxide_l_min", phase.nitrous_oxide_l_min),
        )
        rest = total * (1.0 - pr.maintenance_o2_share)
        other = air + n2o
        changes.update(
            oxygen_l_min=total * pr.maintenance_o2_share,
            air_l_min=rest * air / other if other > 0 else rest,
            nitrous_oxide_l_min=rest * n2o / other if other > 0 else 0.0,
        )
    if pr.dial_factor != 1.0 and phase.dial_pct is not None:
        changes["dial_pct"] = phase.dial_pct * pr.dial_factor
    if changes:
        plan = plan.with_phase(k, **changes)
    shares = dict(ctype.agent_shares)
    if pr.switch_from is not None and pr.switch_to is not None:  # a switch names both (scenario format)
        moved = shares.get(pr.switch_from, 0.0)
        shares[pr.switch_from] = 0.0
        shares[pr.switch_to] = shares.get(pr.switch_to, 0.0) + moved
    return plan, shares


@dataclass
class YearInputs:
    """Everything the sampling needs, computed once per scenario (arrays over case types)."""

    names: tuple[str, ...]
    counts: np.ndarray  # (I,) cases per year
    stretch_mean: np.ndarray  # (I,) mean stretched minutes per case [min]
    stretch_var: np.ndarray  # (I,) their variance [min^2]
    fixed: np.ndarray  # (2, I, Q) per-case intercepts; [0] as written, [1] changed
    rate: np.ndarray  # (2, I, Q) amounts per stretched minute (regression slopes)
    prices: np.ndarray  # (len(PRICE_ITEMS),) central unit prices
    bottle_ml: np.ndarray  # (A,) bottle volumes [mL]
    gwp: np.ndarray  # (S, A + 1) GWP per source (agents, then N2O) [kg CO2e/kg]
    gwp_keys: tuple[str, ...]
    adherence: tuple[float, float, float]  # low, mode, high [1]
    month_weights: np.ndarray  # (12,) summing to 1
    car_kg_per_km: float
    currency: str
    gwp_label: str
    warnings: list[str] = field(default_factory=list)
    #: Which MAC values at age 40 were used (``Reference.mac_label``).
    mac_label: str = ""
    #: The simulated sub-plans (type x practice x agent x N2O use): see :class:`SubPlan`.
    subplans: list = field(default_factory=list)
    #: Smallest share of a sub-plan's per-case variance (from durations) that the slope in
    #: the stretched minutes carries: R^2 over sub-plans and quantities. [1]
    variance_explained: float = 1.0
    #: Lowest predicted inspired O2 of any sub-plan at any of its duration nodes (NaN when
    #: nothing was simulated). [%]
    lowest_inspired_o2_pct: float = float("nan")


@dataclass
class SubPlan:
    """One simulated variant of a case type, with its per-case totals at the duration nodes."""

    type_index: int
    variant: int  # 0 = plan as written, 1 = practice change followed
    agent: str
    with_n2o: bool
    weight: float  # share of the type's cases [1]
    plan: CasePlan  # the plan as simulated (this agent, N2O use, practice)
    stretch_index: int
    nodes_min: np.ndarray  # (K,) stretched minutes at the nodes [min]
    totals: np.ndarray  # (K, Q) per-case amounts at the nodes (units of QUANTITIES)


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
    for i, t in enumerate(scenario.case_mix.types):
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
                            o2, air, n2o = p.oxygen_l_min, 0.0, p.nitrous_oxide_l_min + p.air_l_min
                        else:
                            o2, air, n2o = p.oxygen_l_min, p.air_l_min + p.nitrous_oxide_l_min, 0.0
                        dial = None if p.dial_pct is None else _dial_for(agent, plan_agent, p.dial_pct)
                        phases.append(
                            replace(p, oxygen_l_min=o2, air_l_min=air, nitrous_oxide_l_min=n2o, dial_pct=dial)
                        )
                    sub = replace(plan, agent=agent_name, phases=tuple(phases))
                    out.append(
                        SubPlan(
                            i,
                            v,
                            agent_name,
                            with_n2o,
                            share * w,
                            sub,
                            t.stretch_index,
                            nodes,
                            np.zeros((len(nodes), len(QUANTITIES))),
                        )
                    )
    return out


def _group_key(agent: str, s) -> tuple:
    """Plans sharing a simulate_cases call: one agent and the scalar settings of the call."""
    return (
        agent,
        s.uptake_model,
        s.temperature_c,
        s.pressure_kpa,
        s.min_o2_share,
        s.min_o2_flow_l_min,
        s.ratio_behaviour,
        s.inspired_o2_floor,
        s.absorbent_capacity_l_per_kg,
    )


def _column_key(sub: SubPlan, x: float) -> tuple:
    pt, s = sub.plan.patient, sub.plan.settings
    phases = tuple(
        (
            x if j == sub.stretch_index else p.minutes,
            p.oxygen_l_min,
            p.air_l_min,
            p.nitrous_oxide_l_min,
            p.dial_pct,
            p.target_mac,
        )
        for j, p in enumerate(sub.plan.phases)
    )
    return (
        sub.stretch_index,
        phases,
        pt.weight_kg,
        pt.age_years,
        pt.cardiac_output_l_min,
        pt.vo2_ml_min,
        pt.minute_ventilation_l_min,
        s.circle_volume_l,
        s.capture_efficiency,
    )


#: Recent simulations by their exact inputs (agent data, settings, every column), so that a
#: rerun that changes only counts, prices, adherence or sampling does not simulate again.
#: The cached arrays are never written to.
_SIM_CACHE: dict = {}
_SIM_CACHE_SIZE = 16


def _physiology_key(physiology) -> tuple:
    return () if physiology is None else tuple(sorted((k, float(v)) for k, v in physiology.items()))


def simulate_subplans(subplans: list[SubPlan], ref: Reference, physiology=None) -> dict:
    """Simulate every sub-plan at its duration nodes with the circle model; fill ``totals``.

    All sub-plans of one agent (and the same scalar settings) run as ONE vectorised
    :func:`model.circle.simulate_cases` call, one column per distinct (plan, node); the
    columns then go through :func:`model.case.simulation_totals`, as in
    :func:`model.case.compute_case`. Phases are aligned on the stretched phase: a plan with
    fewer phases before (after) it gets zero-minute phases in front (at the end) that copy
    its first (last) phase's flows, in dial mode (the first phase's dial, or 0 when that phase
    holds a target, as the simulation starts), which leave the simulated case unchanged.
    ``physiology`` (one float per key of :data:`model.physiology.PHYSIOLOGY_KEYS`, or None
    for the central model) scales the model's uncertain physiology for every column.

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
        cache_key = (
            gkey,
            repr(agent),
            repr(ref.agents["nitrous_oxide"]),
            tuple(g["cols"]),
            _physiology_key(physiology),
        )
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
                arr["o2"][j, c], arr["air"][j, c], arr["n2o"][j, c] = p.oxygen_l_min, p.air_l_min, p.nitrous_oxide_l_min
                if 0 <= r < len(phases):
                    arr["minutes"][j, c] = x if r == sub.stretch_index else p.minutes
                    arr["dial"][j, c] = np.nan if p.dial_pct is None else p.dial_pct
                    arr["target"][j, c] = np.nan if p.target_mac is None else p.target_mac
                elif r < 0 and first.dial_pct is not None:
                    arr["dial"][j, c] = first.dial_pct  # same start as the plan alone
        pts = [sub.plan.patient for sub, _ in specs]
        opt = lambda v: np.nan if v is None else float(v)  # noqa: E731
        s0 = specs[0][0].plan.settings
        sim = simulate_cases(
            agent,
            arr["minutes"],
            arr["o2"],
            arr["air"],
            arr["n2o"],
            arr["dial"],
            arr["target"],
            weight_kg=np.array([p.weight_kg for p in pts]),
            age_years=np.array([p.age_years for p in pts]),
            cardiac_output_l_min=np.array([opt(p.cardiac_output_l_min) for p in pts]),
            vo2_ml_min=np.array([opt(p.vo2_ml_min) for p in pts]),
            minute_ventilation_l_min=np.array([opt(p.minute_ventilation_l_min) for p in pts]),
            uptake_model=s0.uptake_model,
            circle_volume_l=np.array([sub.plan.settings.circle_volume_l for sub, _ in specs]),
            absorbent_capacity_l_per_kg=s0.absorbent_capacity_l_per_kg,
            temperature_c=s0.temperature_c,
            pressure_kpa=s0.pressure_kpa,
            min_o2_share=s0.min_o2_share,
            min_o2_flow_l_min=s0.min_o2_flow_l_min,
            ratio_behaviour=s0.ratio_behaviour,
            inspired_o2_floor=s0.inspired_o2_floor,
            nitrous_oxide=ref.agents["nitrous_oxide"],
            physiology=physiology,
        )
        tot, _ = simulation_totals(
            sim,
            agent,
            ref.prices,
            gwp_agent=1.0,
            gwp_n2o=1.0,
            capture_efficiency=np.array([sub.plan.settings.capture_efficiency for sub, _ in specs]),
            temperature_c=s0.temperature_c,
            pressure_kpa=s0.pressure_kpa,
            nitrous_oxide=ref.agents["nitrous_oxide"],
        )
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


def year_inputs(scenario: Scenario, reference: Reference = DEFAULT_REFERENCE, physiology=None) -> YearInputs:
    """Per-type intercepts and per-minute slopes of a scenario, and its prices and GWPs.

    ``physiology``: multipliers of the model's uncertain physiology, one float each
    (:mod:`model.physiology`); None is the central model.

    Raises
    ------
    InputError
        A GWP source lacks a value for an agent the mix uses; prices are malformed.
    """
    return _year_inputs_many([scenario], reference, physiology)[0]


def _year_inputs_many(scenarios, reference: Reference, physiology=None) -> list[YearInputs]:
    """Year inputs of several scenarios with their simulations in shared calls (one per agent)."""
    refs = [s.reference(reference) for s in scenarios]
    subs = [_subplans(s, r) for s, r in zip(scenarios, refs, strict=True)]
    flat = [sp for group in subs for sp in group]
    run = simulate_subplans(flat, refs[0], physiology) if flat else {"groups": {}, "where": []}
    # Which (group, column) each sub-plan node used, for the warnings.
    cols_of: dict[int, list] = {}
    for si, _k, gkey, c in run["where"]:
        cols_of.setdefault(si, []).append((gkey, c))
    out, start = [], 0
    for scenario, ref, group in zip(scenarios, refs, subs, strict=True):
        idx = range(start, start + len(group))
        start += len(group)
        out.append(_assemble(scenario, ref, group, [cols_of.get(i, []) for i in idx], run["groups"]))
    return out


def _assemble(scenario: Scenario, ref: Reference, subplans: list[SubPlan], cols, groups) -> YearInputs:
    mix: CaseMix = scenario.case_mix
    types = mix.types
    n_types = len(types)
    changed = scenario.practice.changes_anything
    mean, var = stretch_minutes_moments(
        [t.median_min for t in types], [t.spread for t in types], [t.fixed_min for t in types]
    )
    e_f = np.zeros((2, n_types, len(QUANTITIES)))
    cov = np.zeros_like(e_f)
    warnings: dict[Caution, dict] = {}  # caution -> case types it applies to
    r2 = [1.0]
    for sub, where in zip(subplans, cols, strict=True):
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
    uses_n2o = any(q.nitrous_oxide_l_min > 0 for sp in subplans for q in sp.plan.phases)
    prices = ref.prices
    price_vec = np.array(
        [prices.bottle.get(a, 0.0) for a in VOLATILES]
        + [prices.oxygen_per_1000_l, prices.air_per_1000_l, prices.nitrous_oxide_per_1000_l, prices.absorbent_per_kg]
    )
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
            raise InputError(f"{scenario.source}: {field}" if scenario.source else field, src, err.allowed) from None
    weights = np.asarray(scenario.month_weights, dtype=float)
    pr = scenario.practice
    return YearInputs(
        names=tuple(t.name for t in types),
        counts=np.array([t.cases_per_year for t in types], dtype=float),
        stretch_mean=mean,
        stretch_var=var,
        fixed=fixed,
        rate=rate,
        prices=price_vec,
        bottle_ml=np.array([ref.volatile(a).bottle_volume for a in VOLATILES]),
        gwp=gwp,
        gwp_keys=gwp_keys,
        adherence=(pr.adherence_low, pr.adherence, pr.adherence_high) if changed else (1.0, 1.0, 1.0),
        month_weights=weights / weights.sum(),
        car_kg_per_km=scenario.car_kg_per_km,
        currency=prices.currency,
        gwp_label=ref.gwp_source(scenario.gwp_source).label,
        mac_label=ref.mac_label,
        warnings=by_severity(Caution(f"{', '.join(names)}: {text}", text.severity) for text, names in warnings.items()),
        subplans=subplans,
        variance_explained=float(np.clip(min(r2), 0.0, 1.0)),
        lowest_inspired_o2_pct=min(
            (float(groups[gk]["tot"]["min_inspired_o2_pct"][c]) for where in cols for gk, c in where),
            default=float("nan"),
        ),
    )


def _subplan_warnings(out: dict, ctype: CaseType, sub: SubPlan, where, groups, ref: Reference) -> None:
    """Cautions of a sub-plan from its simulation (the checks of :func:`model.cautions.case_cautions`).

    ``out`` maps each caution to the case types it applies to (added to in place);
    ``where`` lists the (group, column) of each of the sub-plan's duration nodes in
    ``groups`` (:func:`simulate_subplans`).
    """
    if not where:
        return
    label = ref.agents[sub.agent].label.lower()
    # Keyed by the text without the type's name, so types with the same caution share a line.
    who = f"{'changed practice, ' if sub.variant else ''}{label}{' with N2O' if sub.with_n2o else ''}"

    def add(text: str, severity: str = "caution") -> None:
        out.setdefault(Caution(text, severity), {})[ctype.name] = None

    gkey, c0 = where[-1]
    g = groups[gkey]
    sim, off = g["sim"], int(g["offsets"][c0])
    for j, p in enumerate(sub.plan.phases):
        at = f"{who}, {p.name}"
        _mix_cautions(add, at, sub, sim, off + j, c0)
        if p.target_mac is not None:
            fgf = float(sim["phase_fgf_l_min"][off + j, c0])
            _target_cautions(add, at, p, j, fgf, where, groups, ref.agents[sub.agent].vaporizer_max)
    _node_cautions(add, who, sub, where, groups)


def _mix_cautions(add: Callable[..., None], at: str, sub: SubPlan, sim, row: int, col: int) -> None:
    """Cautions of one phase's fresh gas: the ratio limit, the sevoflurane minimum, inspired O2."""
    s = sub.plan.settings
    floor_pct = s.inspired_o2_floor * 100.0
    fgf = float(sim["phase_fgf_l_min"][row, col])
    fd_o2 = float(sim["phase_fd_o2"][row, col])
    safe = float(sim["phase_lowest_safe_fd_o2"][row, col])
    if bool(sim["phase_altered"][row, col]):
        add(f"{at}: the O2/N2O ratio limit altered the requested mix")
    if sub.agent == "sevoflurane" and fgf < s.sevoflurane_min_flow_l_min - 1e-12:
        add(
            f"{at}: {fgf:.2f} L/min is under the set sevoflurane minimum of "
            f"{s.sevoflurane_min_flow_l_min:g} L/min; follow local protocol and labelling",
            "labelling",
        )
    if fd_o2 < s.inspired_o2_floor - 1e-12:
        add(
            f"{at}: fresh gas O2 {fd_o2 * 100:.0f} % is under the inspired O2 floor of "
            f"{floor_pct:.0f} %; inspired O2 in a circle is lower still",
            "hazard",
        )
    elif math.isfinite(safe) and fd_o2 < safe - 1e-9:
        add(
            f"{at}: at {fgf:.2f} L/min, fresh gas O2 {fd_o2 * 100:.0f} % is under the {safe * 100:.0f} % "
            f"that keeps inspired O2 above {floor_pct:.0f} % at steady state"
        )
    elif not math.isfinite(safe):
        add(
            f"{at}: fresh gas flow {fgf:.2f} L/min does not exceed the O2 consumption; no fresh gas "
            f"mix keeps inspired O2 above {floor_pct:.0f} %",
            "hazard",
        )


def _target_cautions(
    add: Callable[..., None], at: str, p, j: int, fgf: float, where, groups, vaporizer_max: float
) -> None:
    """Cautions of a target phase ``j`` (phase ``p``) over the nodes: target not reached, or reached late.

    ``fgf`` is the phase's flow [L/min], ``vaporizer_max`` the dial's maximum [%].
    """
    reach = [
        g2["sim"]["phase_time_to_target_min"][int(g2["offsets"][c]) + j, c]
        for g2, c in ((groups[k], c) for k, c in where)
        if g2["sim"]["phase_minutes"][int(g2["offsets"][c]) + j, c] > 0
    ]
    if any(not math.isfinite(r) for r in reach):
        add(
            f"{at}: the end-tidal target of {p.target_mac:g} MAC is not reached within the phase "
            f"at {fgf:.2f} L/min (vaporizer maximum {vaporizer_max:g} "
            f"%); raise the flow or allow longer"
        )
    elif reach and max(reach) > SLOW_TARGET_MIN:
        # The slow response of low flow, as for a single case (model.cautions.case_cautions).
        add(
            f"{at}: end-tidal reaches the target of {p.target_mac:g} MAC only after "
            f"{max(reach):.0f} min at {fgf:.2f} L/min"
        )


def _node_cautions(add: Callable[..., None], who: str, sub: SubPlan, where, groups) -> None:
    """Cautions of the whole case at each duration node.

    An O2 shortfall, long low-flow sevoflurane, and (once, the worst) inspired O2 under the
    floor.
    """
    plan, s = sub.plan, sub.plan.settings
    floor_pct = s.inspired_o2_floor * 100.0
    worst = None
    for gk, c in where:
        tot = groups[gk]["tot"]
        fio2 = float(tot["min_inspired_o2_pct"][c])
        if fio2 < floor_pct and (worst is None or fio2 < worst[0]):
            worst = (fio2,)
        if float(tot["o2_shortfall_l"][c]) > 1e-6:
            add(
                f"{who}: the circle runs out of O2 for the patient's consumption; O2 inflow must at "
                f"least match consumption",
                "hazard",
            )
        k = sub.stretch_index
        stretch_fgf = float(groups[gk]["sim"]["phase_fgf_l_min"][int(groups[gk]["offsets"][c]) + k, c])
        if (
            sub.agent == "sevoflurane"
            and float(tot["end_tidal_mac_hours"][c]) > 1.0
            and stretch_fgf < s.sevoflurane_min_flow_long_l_min - 1e-12
        ):
            add(
                f"{who}: cases beyond 1 MAC-hour run sevoflurane at {stretch_fgf:.2f} L/min in "
                f"{plan.phases[k].name}, under the set minimum of {s.sevoflurane_min_flow_long_l_min:g} L/min; "
                f"follow local protocol and labelling",
                "labelling",
            )
    if worst is not None:
        add(
            f"{who}: predicted inspired O2 falls to {worst[0]:.0f} %, under the floor of {floor_pct:.0f} %: "
            f"hypoxic mixture; raise the O2 share or the flow",
            "hazard",
        )
