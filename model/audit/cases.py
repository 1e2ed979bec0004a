"""Per-case consumption, emissions and cost from integrated samples, vectorised over the cases of each agent."""

from __future__ import annotations

import numpy as np
import pandas as pd

from model.audit.absorbent import AbsorbentAssumptions, absorbent_assumptions, absorbent_from_rebreathed
from model.audit.result import BAND_COLUMNS, DEFAULT_HIGH_FLOW_LIMIT_MIN, time_weighted_fgf
from model.case import case_costs
from model.emissions import co2e_kg, emitted_mass_g, gas_mass_g
from model.reference import Reference
from model.vapour import liquid_used_ml


def case_results(
    raw: pd.DataFrame,
    reference: Reference,
    gwp_source: str,
    temperature_c: float,
    pressure_kpa: float,
    capture_efficiency: float,
    high_flow_limit_min: float = DEFAULT_HIGH_FLOW_LIMIT_MIN,
    absorbent: AbsorbentAssumptions | None = None,
) -> pd.DataFrame:
    """Per-case consumption, emissions and cost from the integrated sums of each case.

    Parameters
    ----------
    raw : DataFrame
        One row per case with ``agent``, ``vapour_integral`` (sum of FGF x dose x dt,
        [L/min x % x min]), ``rebreathed_min`` (sum of the rebreathed share x dt, [min]),
        ``oxygen_l``, ``air_l``, ``nitrous_oxide_l`` [L] and the descriptive columns.
    absorbent : AbsorbentAssumptions, optional
        Patient and absorbent of the estimate (default: from ``reference``).

    Returns
    -------
    DataFrame
        ``raw`` with the derived columns (see :func:`audit_records`).
    """
    c = raw.copy()
    n = len(c)
    c.insert(2, "cases", np.ones(n, dtype=np.int64))
    n2o = reference.agents["nitrous_oxide"]
    prices = reference.prices
    # Each agent's cases worked out together in numpy, the columns set once.
    cols = {
        col: np.zeros(n)
        for col in ("liquid_agent_ml", "bottles", "agent_mass_g", "agent_emitted_g", "co2e_agent_kg", "cost_agent")
    }
    agents = c["agent"].to_numpy()
    vapour = c["vapour_integral"].to_numpy(dtype=float)
    for name in pd.unique(agents):
        if name == "none":
            continue
        mask = agents == name
        agent = reference.volatile(name)
        liquid = liquid_used_ml(vapour[mask], 1.0, 1.0, agent, temperature_c, pressure_kpa)
        grams = liquid * agent.liquid_density
        emitted = emitted_mass_g(grams, 0.0, agent.metabolised_fraction, capture_efficiency)
        cols["liquid_agent_ml"][mask] = liquid
        cols["bottles"][mask] = liquid / agent.bottle_volume
        cols["agent_mass_g"][mask] = grams
        cols["agent_emitted_g"][mask] = emitted
        cols["co2e_agent_kg"][mask] = co2e_kg(emitted, reference.gwp(agent.name, gwp_source))
        cols["cost_agent"][mask] = case_costs(liquid, 0.0, 0.0, 0.0, 0.0, agent, prices)["agent"]
    for col, values in cols.items():
        c[col] = values
    c["nitrous_oxide_g"] = gas_mass_g(
        c["nitrous_oxide_l"].to_numpy(dtype=float), n2o.molar_mass, temperature_c, pressure_kpa
    )
    c["nitrous_oxide_emitted_g"] = emitted_mass_g(c["nitrous_oxide_g"].to_numpy(), 0.0, n2o.metabolised_fraction, 0.0)
    c["co2e_nitrous_oxide_kg"] = co2e_kg(
        c["nitrous_oxide_emitted_g"].to_numpy(),
        reference.gwp("nitrous_oxide", gwp_source, used=bool((c["nitrous_oxide_l"] > 0).any())),
    )
    c["co2e_total_kg"] = c["co2e_agent_kg"] + c["co2e_nitrous_oxide_kg"]
    absorbent = absorbent or absorbent_assumptions(reference)
    co2_l, absorbent_g = absorbent_from_rebreathed(c["rebreathed_min"].to_numpy(dtype=float), absorbent)
    c["co2_absorbed_l"] = co2_l
    c["absorbent_g"] = absorbent_g
    any_volatile = reference.volatile("sevoflurane")  # bottle size unused: no liquid passed
    gas = case_costs(
        np.zeros(n),
        c["oxygen_l"].to_numpy(dtype=float),
        c["air_l"].to_numpy(dtype=float),
        c["nitrous_oxide_l"].to_numpy(dtype=float),
        absorbent_g,
        any_volatile,
        prices,
    )
    c["cost_oxygen"] = gas["oxygen"]
    c["cost_air"] = gas["air"]
    c["cost_nitrous_oxide"] = gas["nitrous_oxide"]
    # The cost of what the records show delivered; the absorbent estimate is kept beside it.
    c["cost_total"] = c["cost_agent"] + c["cost_oxygen"] + c["cost_air"] + c["cost_nitrous_oxide"]
    c["cost_absorbent"] = gas["absorbent"]
    c["high_flow_flag"] = c["longest_high_flow_min"] >= high_flow_limit_min
    c["high_flow_cases"] = c["high_flow_flag"].astype(np.int64)
    # Time-weighted fresh gas flow: sum(FGF_i x dt_i) / sum(dt_i) over the counted minutes,
    # placed beside the flow-band minutes; ``mean_fgf_l_min`` is the same figure under its
    # earlier name, kept for readers of earlier output.
    twf = time_weighted_fgf(c)
    c.insert(c.columns.get_loc(BAND_COLUMNS[-1]) + 1, "time_weighted_fgf_l_min", twf)
    c["mean_fgf_l_min"] = twf
    c = (
        c.drop(columns=["vapour_integral", "rebreathed_min"])
        .sort_values(["month", "theatre", "case_id", "agent"], kind="stable")
        .reset_index(drop=True)
    )
    return c
