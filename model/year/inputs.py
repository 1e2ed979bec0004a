"""What a department's year is computed from: case types, the case mix, the practice change, sampling and the scenario.

Reading and writing these as files is :mod:`model.io.case_mix` and :mod:`model.io.scenario`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from model.plan import CasePlan
from model.reference import DEFAULT_GWP, Reference, Sourced

#: Name of the phase that stretches with case duration, when a plan has one.
STRETCH_PHASE_NAME = "maintenance"


@dataclass(frozen=True)
class CaseType:
    """One case type of a mix.

    ``spread`` is the standard deviation of the natural log of the case duration (a
    log-normal distribution around ``median_min``); 0 means every case lasts the median.
    ``agent_shares`` maps each volatile agent to its share of the type's cases (sum 1).
    """

    name: str
    cases_per_year: int
    median_min: float
    spread: float
    agent_shares: Mapping[str, float]
    n2o_share: float
    plan: CasePlan
    plan_name: str
    patient_group: str = "adult"
    weight_kg: float = 70.0
    age_years: float = 40.0

    @property
    def stretch_index(self) -> int:
        """Index of the phase whose length follows the case duration (see :func:`stretch_phase`)."""
        return stretch_phase(self.plan)

    @property
    def fixed_min(self) -> float:
        """Minutes of the phases that keep their planned length [min]."""
        i = self.stretch_index
        return float(sum(p.minutes for j, p in enumerate(self.plan.phases) if j != i))


@dataclass(frozen=True)
class CaseMix:
    """The case types of a department, and the file they came from."""

    types: tuple[CaseType, ...]
    source: str = ""
    #: Plans by the name used in the ``plan`` column.
    plans: Mapping[str, CasePlan] = field(default_factory=dict)

    @property
    def cases_per_year(self) -> int:
        """Cases a year, all case types together."""
        return int(sum(t.cases_per_year for t in self.types))


def stretch_phase(plan: CasePlan) -> int:
    """Index of the phase that takes up a case's duration beyond the other phases.

    The phase named "maintenance" (any case), else the longest phase (the first of equals).
    The other phases keep their planned minutes in every case (common practice, no source:
    induction and emergence take about the same time whatever the operation).
    """
    for i, p in enumerate(plan.phases):
        if p.name.strip().lower() == STRETCH_PHASE_NAME:
            return i
    return int(np.argmax([p.minutes for p in plan.phases]))


#: Most Monte Carlo draws one run may ask for (memory stays well under 1 GB).
MAX_DRAWS = 200_000

#: Emission of an average car per km driven. [kg CO2e/km]
DEFAULT_CAR_FACTOR = Sourced(
    0.17,
    "kg CO2e/km",
    "UK Government GHG conversion factors for company reporting 2023, average car of "
    "unknown fuel (about 0.17 kg CO2e/km), from memory",
    "from memory",
)

#: Days per month of a 365-day year: the default share of the year's cases in each month.
#: Common practice, no source (cases spread evenly over calendar days).
DAYS_PER_MONTH = (31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31)
MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


@dataclass(frozen=True)
class Practice:
    """A change of practice and the share of cases that really follow it.

    ``maintenance_flow_l_min`` sets the total fresh gas flow of each plan's stretched phase
    (O2, air and N2O keep their proportions); ``maintenance_o2_share`` sets the share of that
    phase's flow on the O2 flowmeter (the rest keeps the plan's air : N2O proportion, air if
    the plan has neither), since a low flow needs a richer O2 mix to keep inspired O2 up;
    ``dial_factor`` multiplies that phase's dial setting in "dial" mode (at a lower flow a
    higher dial keeps the same end-tidal agent; a "target" phase needs no factor); ``switch_from``
    -> ``switch_to`` moves one agent's share of cases to another. Cases that do not follow
    the change keep the plan as written. Adherence is a triangular distribution with mode
    ``adherence`` between ``adherence_low`` and ``adherence_high``.
    """

    maintenance_flow_l_min: float | None = None
    dial_factor: float = 1.0
    switch_from: str | None = None
    switch_to: str | None = None
    adherence: float = 1.0
    adherence_low: float = 1.0
    adherence_high: float = 1.0
    maintenance_o2_share: float | None = None

    @property
    def changes_anything(self) -> bool:
        """Whether the practice changes any case (flow, dial, agent or O2 share)."""
        return (
            self.maintenance_flow_l_min is not None
            or self.dial_factor != 1.0
            or self.switch_from is not None
            or self.maintenance_o2_share is not None
        )


@dataclass(frozen=True)
class Sampling:
    """Settings of the Monte Carlo sampling of a year."""

    draws: int = 2000
    seed: int = 20260101
    #: Standard deviation of the natural log of every unit price (log-normal around the
    #: given price, which is the median). [1] 0 = prices known.
    price_spread: float = 0.0
    #: GWP sources drawn with equal weight in each draw; empty = the scenario's source only.
    gwp_sources: tuple[str, ...] = ()


@dataclass(frozen=True)
class Scenario:
    """A case mix plus practice plus prices, with the settings of its year."""

    name: str
    case_mix: CaseMix
    practice: Practice = field(default_factory=Practice)
    gwp_source: str = DEFAULT_GWP
    #: Price overrides in the settings-file form (``currency``, ``bottle.<agent>``, ...).
    prices: Mapping[str, Any] = field(default_factory=dict)
    sampling: Sampling = field(default_factory=Sampling)
    car_kg_per_km: float = DEFAULT_CAR_FACTOR.value  # type: ignore[assignment]  # a Sourced constant, 0.17, never None
    car_source: str = DEFAULT_CAR_FACTOR.source
    month_weights: tuple[float, ...] = DAYS_PER_MONTH
    source: str = ""

    def reference(self, base: Reference) -> Reference:
        """Reference data with this scenario's price overrides applied."""
        if not self.prices:
            return base
        return base.with_overrides({"prices": dict(self.prices)}, f"scenario '{self.name}'")

    def with_practice(self, **changes) -> Scenario:
        """A copy with some fields of the practice changed (e.g. ``with_practice(dial_factor=1.2)``)."""
        return replace(self, practice=replace(self.practice, **changes))
