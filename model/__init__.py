"""Fresh Gas Ledger model: consumption, cost and emissions of anaesthetic gases and vapours.

Pure functions over numpy arrays and small dataclasses; no user interface code here. The
physics and accounting are flat modules of this package; file formats are in
:mod:`model.io`, the department's year in :mod:`model.year`, the record audit in
:mod:`model.audit`, the store in :mod:`model.store` and the command line in :mod:`model.cli`.
What is listed in ``__all__`` here and in each subpackage is the public API.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from model.lazy import lazy_exports

# Each public name and the module it lives in. A module is imported when one of its names is
# first used (PEP 562), not with the package, so `import model.errors` or a page that needs
# only the case model does not load every format and the year's model with it.
_HOME = {name: module for module, names in {
    "model.case": ["CaseResult", "case_costs", "compute_case", "phase_consumption", "simulation_totals"],
    "model.circle": ["lowest_safe_fd_o2", "rebreathed_share", "simulate_cases", "steady_state_fio2"],
    "model.emissions": ["co2e_kg", "emitted_mass_g", "gas_mass_g"],
    "model.errors": ["InputError"],
    "model.freshgas": ["FLOW_BAND_NAMES", "apply_ratio_limit", "delivered_fractions", "flow_band"],
    "model.io.plans": ["load_plan", "parse_plan_text", "plan_to_toml"],
    "model.mac": ["mac_at_age", "mac_multiple"],
    "model.patient": ["brody_cardiac_output_l_min", "brody_vo2_ml_min"],
    "model.plan": ["CasePlan", "Patient", "Phase", "Settings", "check_dials"],
    "model.reference": ["AGENTS", "DEFAULT_GWP", "DEFAULT_REFERENCE", "GWP_SOURCES", "VOLATILES", "Agent",
                        "GwpSource", "Prices", "Reference", "Sourced", "load_settings"],
    "model.sweep": ["flow_sweep"],
    "model.units": ["to_base"],
    "model.uptake": ["lowe_cumulative_ml", "lowe_uptake_rate_ml_min"],
    "model.vapour": ["liquid_from_vapour", "liquid_used_ml", "liquid_used_series_ml", "molar_volume_l",
                     "rule_of_thumb_ml_per_hour", "vapour_per_ml_liquid"],
}.items() for name in names}

__all__ = [
    "AGENTS", "Agent", "CasePlan", "CaseResult", "DEFAULT_GWP", "DEFAULT_REFERENCE", "FLOW_BAND_NAMES",
    "GWP_SOURCES", "GwpSource", "InputError", "Patient", "Phase", "Prices", "Reference", "Settings",
    "Sourced", "VOLATILES", "apply_ratio_limit", "brody_cardiac_output_l_min", "brody_vo2_ml_min",
    "case_costs", "check_dials", "co2e_kg", "compute_case", "delivered_fractions", "emitted_mass_g",
    "flow_band", "flow_sweep", "gas_mass_g", "liquid_from_vapour", "liquid_used_ml", "liquid_used_series_ml",
    "load_plan", "load_settings", "lowe_cumulative_ml", "lowe_uptake_rate_ml_min", "lowest_safe_fd_o2",
    "mac_at_age", "mac_multiple", "molar_volume_l", "parse_plan_text", "phase_consumption", "plan_to_toml",
    "rebreathed_share", "rule_of_thumb_ml_per_hour", "simulate_cases", "simulation_totals",
    "steady_state_fio2", "to_base", "vapour_per_ml_liquid",
]


__getattr__, __dir__ = lazy_exports(__name__, _HOME, globals(), __all__)


if TYPE_CHECKING:   # what static tools read (type checkers, the API pages); at run time __getattr__ imports
    from model.case import CaseResult, case_costs, compute_case, phase_consumption, simulation_totals
    from model.circle import lowest_safe_fd_o2, rebreathed_share, simulate_cases, steady_state_fio2
    from model.emissions import co2e_kg, emitted_mass_g, gas_mass_g
    from model.errors import InputError
    from model.freshgas import FLOW_BAND_NAMES, apply_ratio_limit, delivered_fractions, flow_band
    from model.io.plans import load_plan, parse_plan_text, plan_to_toml
    from model.mac import mac_at_age, mac_multiple
    from model.patient import brody_cardiac_output_l_min, brody_vo2_ml_min
    from model.plan import CasePlan, Patient, Phase, Settings, check_dials
    from model.reference import (AGENTS, DEFAULT_GWP, DEFAULT_REFERENCE, GWP_SOURCES, VOLATILES, Agent, GwpSource,
                                 Prices, Reference, Sourced, load_settings)
    from model.sweep import flow_sweep
    from model.units import to_base
    from model.uptake import lowe_cumulative_ml, lowe_uptake_rate_ml_min
    from model.vapour import (liquid_from_vapour, liquid_used_ml, liquid_used_series_ml, molar_volume_l,
                              rule_of_thumb_ml_per_hour, vapour_per_ml_liquid)
