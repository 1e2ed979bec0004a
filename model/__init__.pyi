# The public names of model, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.

from .base.errors import InputError
from .base.units import to_base
from .case import CaseResult, case_costs, compute_case, phase_consumption, simulation_totals
from .circle import lowest_safe_fd_o2, rebreathed_share, simulate_cases, steady_state_fio2
from .emissions import co2e_kg, emitted_mass_g, gas_mass_g
from .freshgas import FLOW_BAND_NAMES, apply_ratio_limit, delivered_fractions, flow_band
from .io.plans import load_plan, parse_plan_text, plan_to_toml
from .mac import mac_at_age, mac_multiple
from .patient import brody_cardiac_output_l_min, brody_vo2_ml_min
from .plan import CasePlan, Patient, Phase, Settings, check_dials
from .reference import (
    AGENTS,
    DEFAULT_GWP,
    DEFAULT_REFERENCE,
    GWP_SOURCES,
    VOLATILES,
    Agent,
    GwpSource,
    Prices,
    Reference,
    Sourced,
    load_settings,
)
from .sweep import flow_sweep
from .uptake import lowe_cumulative_ml, lowe_uptake_rate_ml_min
from .vapour import (
    liquid_from_vapour,
    liquid_used_ml,
    liquid_used_series_ml,
    molar_volume_l,
    rule_of_thumb_ml_per_hour,
    vapour_per_ml_liquid,
)
