"""A department's year from its case mix: totals, months, uncertainty bands and comparisons.

How a year is computed
----------------------
Every case plan is linear in the length of its stretched phase (see
:func:`model.casemix.stretch_phase`): what a case uses is a fixed amount for the other phases
plus a rate per minute of the stretched phase (Dion's formula, gas flow x time). So for each
case type the model computes, once, the fixed amounts and per-minute rates of each
sub-plan (agent x with or without N2O x following the practice change or not) with one
vectorised :func:`model.case.phase_consumption` call per agent, weights them by the shares,
and then scales them by sampled durations. The year's stretched minutes of a type are the
sum of its cases' minutes; with many cases that sum is normal (central limit theorem) with
the exact mean and variance of the log-normal case duration less the fixed phases, so one
normal draw per type and per Monte Carlo draw stands for all the type's cases.

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

from .case import phase_consumption
from .circle import rebreathed_share
from .patient import patient_values
from .casemix import CaseMix, CaseType
from .emissions import emitted_mass_g
from .errors import InputError
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
    """The type's plan and agent shares for cases that follow the scenario's practice change."""
    pr = scenario.practice
    plan = ctype.plan
    k = ctype.stretch_index
    phase = plan.phases[k]
    changes = {}
    if pr.maintenance_flow_l_min is not None and phase.fgf_l_min > 0:
        scale = pr.maintenance_flow_l_min / phase.fgf_l_min
        changes.update(o2_l_min=phase.o2_l_min * scale, air_l_min=phase.air_l_min * scale,
                       n2o_l_min=phase.n2o_l_min * scale)
    if pr.dial_factor != 1.0:
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
    fixed: np.ndarray           # (2, I, Q) per-case amounts of the fixed phases; [0] as written, [1] changed
    rate: np.ndarray            # (2, I, Q) amounts per stretched minute
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


def _dial_for(agent, plan_agent, dial):
    """Dial setting of ``agent`` at the same MAC multiple as ``dial`` of ``plan_agent``.

    Common practice, no source: equal MAC multiples are taken as equal depth; the setting
    is capped at the vaporizer's maximum.
    """
    if agent.name == plan_agent.name:
        return dial
    return min(dial * agent.mac40 / plan_agent.mac40, agent.vaporizer_max)


def year_inputs(scenario: Scenario, reference: Reference = DEFAULT_REFERENCE) -> YearInputs:
    """Per-type fixed amounts and per-minute rates of a scenario, and its prices and GWPs.

    Raises
    ------
    InputError
        A GWP source lacks a value for an agent the mix uses; prices are malformed.
    """
    ref = scenario.reference(reference)
    mix: CaseMix = scenario.casemix
    types = mix.types
    n_types = len(types)
    changed = scenario.practice.changes_anything
    fixed = np.zeros((2, n_types, len(QUANTITIES)))
    rate = np.zeros((2, n_types, len(QUANTITIES)))
    rows: dict[tuple, list] = {}
    used_agents = set()
    warnings: dict[str, None] = {}
    for i, t in enumerate(types):
        k = t.stretch_index
        plan_agent = ref.volatile(t.plan.agent)
        variants = [(0, t.plan, dict(t.agent_shares))]
        if changed:
            variants.append((1, *practised_plan(t, scenario)))
        for v, plan, shares in variants:
            s = plan.settings
            pv = patient_values(plan.patient)
            co2_l_min = float(pv.vco2_l_min)
            ve_l_min = float(pv.minute_ventilation_l_min)
            capacity = s.absorbent_capacity_l_per_kg
            for agent_name, share in shares.items():
                if share <= 0:
                    continue
                agent = ref.volatile(agent_name)
                used_agents.add(agent_name)
                for with_n2o, w in ((False, 1.0 - t.n2o_share), (True, t.n2o_share)):
                    weight = share * w
                    if weight <= 0:
                        continue
                    key = (agent_name, s.temperature_c, s.pressure_kpa, s.min_o2_share,
                           s.min_o2_flow_l_min, s.ratio_behaviour)
                    bucket = rows.setdefault(key, [])
                    for j, p in enumerate(plan.phases):
                        if with_n2o:
                            o2, air, n2o = p.o2_l_min, 0.0, p.n2o_l_min + p.air_l_min
                        else:
                            o2, air, n2o = p.o2_l_min, p.air_l_min + p.n2o_l_min, 0.0
                        bucket.append((i, v, j == k, p.minutes, weight, o2, air, n2o,
                                       _dial_for(agent, plan_agent, p.dial_pct),
                                       s.capture_efficiency, p.name, s.sevoflurane_min_flow_l_min,
                                       s.inspired_o2_floor, with_n2o, co2_l_min, ve_l_min, capacity))
    for key, bucket in rows.items():
        agent = ref.volatile(key[0])
        a = VOLATILES.index(key[0])
        cols = list(zip(*bucket))
        ti = np.array(cols[0], dtype=int)
        vi = np.array(cols[1], dtype=int)
        is_stretch = np.array(cols[2], dtype=bool)
        minutes = np.array(cols[3], dtype=float)
        weight = np.array(cols[4], dtype=float)
        c = phase_consumption(np.ones(len(bucket)), cols[5], cols[6], cols[7],
                              np.array(cols[8], dtype=float), agent, temperature_c=key[1],
                              pressure_kpa=key[2], min_o2_share=key[3], min_o2_flow_l_min=key[4],
                              ratio_behaviour=key[5])
        emitted = emitted_mass_g(c["agent_g"], 0.0, agent.metabolised_fraction, np.array(cols[9]))
        per_min = np.zeros((len(bucket), len(QUANTITIES)))
        per_min[:, _Q[f"liquid_ml:{key[0]}"]] = c["liquid_ml"]
        per_min[:, _Q[f"emitted_g:{key[0]}"]] = emitted
        per_min[:, _Q["oxygen_l"]] = c["oxygen_l"]
        per_min[:, _Q["air_l"]] = c["air_l"]
        per_min[:, _Q["nitrous_oxide_l"]] = c["nitrous_oxide_l"]
        per_min[:, _Q["nitrous_oxide_emitted_g"]] = c["nitrous_oxide_g"]
        per_min[:, _Q["minutes"]] = 1.0
        # Absorbent at steady state: VCO2 x the rebreathed share of exhaled gas / capacity.
        per_min[:, _Q["absorbent_g"]] = (np.array(cols[14]) * rebreathed_share(c["fgf_l_min"], np.array(cols[15]))
                                         / np.array(cols[16]) * 1000.0)
        contrib = per_min * weight[:, None]
        np.add.at(fixed, (vi[~is_stretch], ti[~is_stretch]), contrib[~is_stretch] * minutes[~is_stretch, None])
        np.add.at(rate, (vi[is_stretch], ti[is_stretch]), contrib[is_stretch])
        _collect_warnings(warnings, types, bucket, c, agent, a)
    if not changed:
        fixed[1] = fixed[0]
        rate[1] = rate[0]
    mean, var = stretch_minutes_moments([t.median_min for t in types], [t.spread for t in types],
                                        [t.fixed_min for t in types])
    prices = ref.prices
    price_vec = np.array([prices.bottle.get(a, 0.0) for a in VOLATILES]
                         + [prices.oxygen_per_1000_l, prices.air_per_1000_l,
                            prices.nitrous_oxide_per_1000_l, prices.absorbent_per_kg])
    gwp_keys = (scenario.gwp_source, *scenario.sampling.gwp_sources)
    gwp = np.zeros((len(gwp_keys), len(VOLATILES) + 1))
    for s_i, src in enumerate(gwp_keys):
        for a_i, a in enumerate(VOLATILES):
            if a in used_agents:
                gwp[s_i, a_i] = ref.gwp(a, src)
        gwp[s_i, -1] = ref.gwp("nitrous_oxide", src)
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
        warnings=list(warnings))


def _collect_warnings(out: dict, types, bucket, c, agent, a):
    """Cautions of the sub-plans: altered mixes, low sevoflurane flow, low fresh gas O2."""
    for row, fgf, fd_o2, altered in zip(bucket, c["fgf_l_min"], c["fd_o2"], c["altered"]):
        i, v, _, _, _, _, _, _, _, _, phase, sevo_min, floor, with_n2o = row[:14]
        who = f"{types[i].name}{' (changed practice)' if v else ''}, {agent.label.lower()}" \
              f"{' with N2O' if with_n2o else ''}, {phase}"
        if agent.name == "sevoflurane" and fgf < sevo_min - 1e-12:
            out[f"{who}: {fgf:.2f} L/min is under the set sevoflurane minimum of {sevo_min:g} L/min; "
                f"follow local protocol and labelling"] = None
        if altered:
            out[f"{who}: the O2/N2O ratio limit altered the requested mix"] = None
        if fd_o2 < floor - 1e-12:
            out[f"{who}: fresh gas O2 {fd_o2 * 100:.0f} % is under the inspired O2 floor of "
                f"{floor * 100:.0f} %; inspired O2 in a circle is lower still"] = None


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
    notes = [
        "Liquid agent by Dion's formula from the plans' dial settings; all delivered agent counts "
        "as emitted (the metabolised share of uptake, under 1 % of emissions, is not subtracted).",
        "CO2 absorbent at steady state: the patient's VCO2 (Brody) x the rebreathed share of "
        "exhaled gas (1 - FGF / minute ventilation) / the absorbent's capacity.",
        "Agent cost is whole bottles bought per month (rounded up); gases and absorbent pro rata.",
        f"Equivalence: {scenario.car_kg_per_km:g} kg CO2e per km by an average car ({scenario.car_source}).",
    ]
    if scenario.practice.changes_anything:
        pr = scenario.practice
        notes.append(f"Practice change followed by {pr.adherence * 100:.0f} % of cases "
                     f"(sampled {pr.adherence_low * 100:.0f}-{pr.adherence_high * 100:.0f} %); "
                     f"the others keep the plan as written.")
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
    b_inp = year_inputs(baseline, reference)
    p_inp = year_inputs(proposal, reference)
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
