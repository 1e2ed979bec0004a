"""The case plan: patient, phases and settings of one anaesthetic, and the dial check against a vaporizer's range.

These dataclasses are what the physics works on; reading and writing plan files is
:mod:`model.io.plans`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from model.base.errors import InputError
from model.circle import ABSORBENT_CAPACITY_L_PER_KG, CIRCLE_VOLUME_L
from model.reference import DEFAULT_GWP
from model.uptake import DEFAULT_UPTAKE_MODEL


@dataclass(frozen=True)
class Patient:
    """The patient of a case plan. Optional values default by Brody's scaling (see physiology)."""

    weight_kg: float = 70.0
    age_years: float = 40.0
    cardiac_output_l_min: float | None = None
    vo2_ml_min: float | None = None
    minute_ventilation_l_min: float | None = None


@dataclass(frozen=True)
class Phase:
    """One phase of a case at constant flowmeter settings.

    Exactly one of ``dial_pct`` (vaporizer setting, control mode "dial") and ``target_mac``
    (end-tidal target as a MAC multiple, control mode "target") is set.
    """

    name: str
    minutes: float
    oxygen_l_min: float
    air_l_min: float = 0.0
    nitrous_oxide_l_min: float = 0.0
    dial_pct: float | None = None
    target_mac: float | None = None

    @property
    def mode(self) -> str:
        """Control mode of the phase: "dial" or "target"."""
        return "dial" if self.dial_pct is not None else "target"

    @property
    def fgf_l_min(self) -> float:
        """Total fresh gas flow of the phase (O2 + air + N2O) [L/min]."""
        return self.oxygen_l_min + self.air_l_min + self.nitrous_oxide_l_min


@dataclass(frozen=True)
class Settings:
    """Conditions and choices of a computation, with their defaults."""

    temperature_c: float = 20.0
    pressure_kpa: float = 101.325
    gwp_source: str = DEFAULT_GWP
    #: Share of scavenged agent captured before release. [1]
    capture_efficiency: float = 0.0
    #: Lowest O2 share of O2 + N2O the workstation allows. [1] (common practice, no source)
    min_o2_share: float = 0.25
    #: O2 flow under which the workstation stops N2O. [L/min] (common practice, no source)
    min_o2_flow_l_min: float = 0.2
    ratio_behaviour: str = "cap_n2o"
    #: Inspired O2 under which the model warns. [1] Never below 0.21.
    inspired_o2_floor: float = 0.30
    #: Sevoflurane fresh gas flow under which the model cautions. [L/min]
    #: Source: sevoflurane labelling in some countries (at least 1 L/min, 2 L/min beyond
    #: 1 MAC-hour), from memory.
    sevoflurane_min_flow_l_min: float = 1.0
    #: Sevoflurane fresh gas flow under which the model cautions once the case has passed
    #: 1 MAC-hour (end-tidal). [L/min]  Source: as above (2 L/min), from memory.
    sevoflurane_min_flow_long_l_min: float = 2.0
    #: Patient uptake model of the circle simulation: "compartment" or "lowe".
    uptake_model: str = DEFAULT_UPTAKE_MODEL
    #: Gas volume of the circle system. [L]  Source: see ``model.circle.CIRCLE_VOLUME_L``.
    circle_volume_l: float = CIRCLE_VOLUME_L
    #: CO2 taken up per kg of absorbent. [L/kg]  Source: see
    #: ``model.circle.ABSORBENT_CAPACITY_L_PER_KG``.
    absorbent_capacity_l_per_kg: float = ABSORBENT_CAPACITY_L_PER_KG


@dataclass(frozen=True)
class CasePlan:
    """A case: patient, volatile agent, phases, settings and price overrides."""

    name: str
    agent: str
    phases: tuple[Phase, ...]
    patient: Patient = field(default_factory=Patient)
    settings: Settings = field(default_factory=Settings)
    #: Price overrides in the settings-file form (``currency``, ``bottle.<agent>``, ...).
    prices: Mapping[str, Any] = field(default_factory=dict)

    @property
    def minutes(self) -> float:
        """Length of the case, all phases together [min]."""
        return float(sum(p.minutes for p in self.phases))

    def with_phase(self, index: int, **changes) -> CasePlan:
        """A copy with one phase changed (e.g. ``with_phase(1, oxygen_l_min=0.5)``)."""
        phases = list(self.phases)
        phases[index] = replace(phases[index], **changes)
        return replace(self, phases=tuple(phases))


def check_dials(plan: CasePlan, reference, where: str = "") -> None:
    """Check each phase's dial setting against the vaporizer maximum of the values in use.

    A plan file is read without reference values (only 0-100 % is checked there); the
    maximum is a property of the vaporizer, so a settings file may lower or raise it
    (``[agents.<name>] vaporizer_max``). Called where a plan meets the values it is worked
    out with: :func:`model.case.compute_case`, the year model, and readers given a
    ``reference``.

    Raises
    ------
    InputError
        Naming ``where``, the phase (``phases[i].dial``, counted from 1), the setting and
        the maximum.
    """
    agent = reference.volatile(plan.agent)
    prefix = f"{where}: " if where else ""
    for i, p in enumerate(plan.phases, start=1):
        if p.dial_pct is not None and p.dial_pct > agent.vaporizer_max:
            raise InputError(
                f"{prefix}phases[{i}].dial",
                f"{p.dial_pct:g} %",
                f"the {agent.label.lower()} vaporizer goes up to {agent.vaporizer_max:g} % (reference values in use)",
            )
