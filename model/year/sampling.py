"""Seeded Monte Carlo draws of a year: durations, adherence, prices and GWP source, and their percentiles."""

from __future__ import annotations

import zlib
from dataclasses import dataclass

import numpy as np

from model.base.errors import InputError
from model.reference import VOLATILES
from model.year.simulate import _BOTTLE_SLACK, _EMIT, _LIQ, _Q, GASES, PRICE_ITEMS, YearInputs

PERCENTILES = (5.0, 50.0, 95.0)
#: What the P5-P95 ranges of a year hold, as every output labels them.
RANGE_LABEL = "P5-P95 ranges over case mix and prices"
RANGE_LABEL_PHYSIOLOGY = "P5-P95 ranges over case mix, prices and model physiology"
#: Physiology draws of a year with model uncertainty: the year's draws take them in turn
#: (draw d the (d mod N)-th). A numerical choice, no source: each is a full simulation of
#: the case mix; the demo year's P5 and P95 of cost and of sevoflurane liquid moved by under
#: 0.5 % between 16 and 64 (measured once, seed 2026, 4000 draws).
PHYSIOLOGY_YEAR_DRAWS = 24
#: Second word of the seed of the physiology draws of a year (the first is the year's seed).
PHYSIOLOGY_STREAM = 20260


def range_label(model_uncertainty: bool) -> str:
    """The label of a year's P5-P95 ranges, with or without model physiology."""
    return RANGE_LABEL_PHYSIOLOGY if model_uncertainty else RANGE_LABEL


# --------------------------------------------------------------------------------------
# Draws and the vectorised year.


@dataclass(frozen=True)
class Draws:
    """The random numbers of a Monte Carlo run; shared by scenarios compared in pairs."""

    n: int
    seed: int
    #: Standard normal draw of each case type's year of minutes, keyed by type name. (n,)
    z_types: dict
    u_adherence: np.ndarray  # (n,) uniform
    z_price: np.ndarray  # (n, len(PRICE_ITEMS)) standard normal
    u_gwp: np.ndarray  # (n,) uniform


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
    z_types = {
        name: np.random.default_rng([seed, zlib.crc32(name.encode("utf-8"))]).standard_normal(n)
        for name in dict.fromkeys(type_names)
    }
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


def bottles_opened(monthly_liquid_ml, bottle_ml) -> np.ndarray:
    """Bottles opened each month when a part-used bottle is carried into the next month.

    Parameters
    ----------
    monthly_liquid_ml : array_like, shape (..., 12, A)
        Liquid agent used each month, per agent. [mL]
    bottle_ml : array_like, shape (A,)
        Volume of one bottle of each agent. [mL]

    Returns
    -------
    ndarray, shape (..., 12, A)
        Whole bottles opened in each month: the bottles needed by the end of the month for
        all the liquid used so far, less those opened before. The year's total is the year's
        liquid in whole bottles, ceil(sum / bottle), however the use falls across months.

    Notes
    -----
    A bottle opened in one month and finished in the next is bought once, in the month it
    is opened (common practice, no source: an opened bottle stays on the vaporizer's shelf
    until used). A month's liquid within 1e-9 bottles of a whole number counts as that number.
    """
    used = np.cumsum(np.asarray(monthly_liquid_ml, dtype=float), axis=-2) / np.asarray(bottle_ml, dtype=float)
    needed = np.maximum(np.ceil(used - _BOTTLE_SLACK), 0.0)
    return np.diff(needed, axis=-2, prepend=0.0)


def _simulate(
    inp: YearInputs, z: np.ndarray, adherence: np.ndarray, price_factor: np.ndarray, gwp_index: np.ndarray
) -> tuple[dict, dict]:
    """Headline figures per draw, and monthly arrays.

    Shapes: ``z`` (D, I), ``adherence`` (D,), ``price_factor`` (D, len(PRICE_ITEMS)),
    ``gwp_index`` (D,) integers into ``inp.gwp``.
    """
    n = inp.counts
    minutes = np.maximum(n * inp.stretch_mean + np.sqrt(n * inp.stretch_var) * z, 0.0)  # (D, I)
    f0, f1 = n @ inp.fixed[0], n @ inp.fixed[1]  # (Q,)
    r0, r1 = inp.rate[0], inp.rate[1]  # (I, Q)
    adh = adherence[:, None]
    q = f0 + adh * (f1 - f0) + minutes @ r0 + adh * (minutes @ (r1 - r0))  # (D, Q)
    q = np.maximum(q, 0.0)
    w = inp.month_weights
    liquid = q[:, _LIQ]  # (D, A)
    monthly_liquid = liquid[:, None, :] * w[None, :, None]  # (D, 12, A)
    monthly_bottles = bottles_opened(monthly_liquid, inp.bottle_ml)
    bottles = monthly_bottles.sum(axis=1)  # (D, A)
    price = inp.prices * price_factor  # (D, P)
    n_a = len(VOLATILES)
    cost_agents = bottles * price[:, :n_a]
    gas = q[:, [_Q["oxygen_l"], _Q["air_l"], _Q["nitrous_oxide_l"]]]
    cost_gas = gas / 1000.0 * price[:, n_a : n_a + 3]
    absorbent_kg = q[:, _Q["absorbent_g"]] / 1000.0
    cost_abs = absorbent_kg * price[:, n_a + 3]
    gwp = inp.gwp[gwp_index]  # (D, A + 1)
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
    monthly_cost = (monthly_bottles * price[:, None, :n_a]).sum(axis=2) + (cost_gas.sum(axis=1) + cost_abs)[
        :, None
    ] * w[None, :]  # (D, 12)
    months = {
        "liquid_ml": monthly_liquid,
        "bottles": monthly_bottles,
        "cost": monthly_cost,
        "co2e_t": co2e_total_kg[:, None] * w[None, :] / 1000.0,
        "q": q,
    }
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


def _subset(draws: Draws, sel: np.ndarray) -> Draws:
    return Draws(
        int(sel.sum()),
        draws.seed,
        {k: v[sel] for k, v in draws.z_types.items()},
        draws.u_adherence[sel],
        draws.z_price[sel],
        draws.u_gwp[sel],
    )


def _sampled_physiology(inputs: list[YearInputs], draws: Draws, price_spread: float):
    """Like :func:`_sampled`, each draw with the year inputs of one physiology draw in turn.

    The physiology of a draw is one systematic set of multipliers for all the year's cases
    (the uncertainty of the model, not variation between patients, which would average out).
    """
    which = np.arange(draws.n) % len(inputs)
    out: dict = {}
    months: dict = {}
    for m, inp in enumerate(inputs):
        sel = which == m
        if not sel.any():
            continue
        o, mo = _sampled(inp, _subset(draws, sel), price_spread)
        for target, part in ((out, o), (months, mo)):
            for k, v in part.items():
                if k not in target:
                    target[k] = np.zeros((draws.n, *np.shape(v)[1:]))
                target[k][sel] = v
    return out, months


def _central(inp: YearInputs):
    one = 1
    return _simulate(
        inp,
        np.zeros((one, len(inp.names))),
        np.array([inp.adherence[1]]),
        np.ones((one, len(PRICE_ITEMS))),
        np.zeros(one, dtype=int),
    )


# --------------------------------------------------------------------------------------
# Results.


def _percentiles(values: np.ndarray) -> np.ndarray:
    return np.percentile(values, PERCENTILES, axis=0)
