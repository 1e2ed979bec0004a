"""Fresh Gas Ledger model: consumption, cost and emissions of anaesthetic gases and vapours.

Pure functions over numpy arrays and small dataclasses; no user interface code here.
"""

from .case import CaseResult, compute_case, phase_consumption
from .errors import InputError
from .plan import CasePlan, Patient, Phase, Settings, load_plan, parse_plan_text, plan_to_toml
from .reference import AGENTS, DEFAULT_REFERENCE, GWP_SOURCES, Reference, load_settings

__all__ = [
    "AGENTS", "CasePlan", "CaseResult", "DEFAULT_REFERENCE", "GWP_SOURCES", "InputError", "Patient",
    "Phase", "Reference", "Settings", "compute_case", "load_plan", "load_settings",
    "parse_plan_text", "phase_consumption", "plan_to_toml",
]
