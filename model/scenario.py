"""Scenarios: a case mix, a change of practice, prices and the settings of the year's sampling.

A scenario file is TOML in the project's own format (documented in README.md, "Case-mix and
scenario files"). It names its case-mix file (CSV, :mod:`model.casemix`) relative to itself.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Annotated, Any, Mapping

import pydantic

from .casemix import CaseMix, load_casemix
from .errors import InputError
from .files import read_user_text
from .plan import GwpSourceName, Share, _first_error, _quantity, _Strict, format_of, volatile_key
from .reference import DEFAULT_GWP, GWP_SOURCES, Reference, Sourced

SCENARIO_FORMAT = "fresh-gas-ledger scenario 1"
#: Largest scenario file read. [bytes]
MAX_SCENARIO_BYTES = 200_000
#: Most Monte Carlo draws one run may ask for (memory stays well under 1 GB).
MAX_DRAWS = 200_000

#: Emission of an average car per km driven. [kg CO2e/km]
DEFAULT_CAR_FACTOR = Sourced(
    0.17, "kg CO2e/km",
    "UK Government GHG conversion factors for company reporting 2023, average car of "
    "unknown fuel (about 0.17 kg CO2e/km), from memory", "from memory")

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
        return (self.maintenance_flow_l_min is not None or self.dial_factor != 1.0
                or self.switch_from is not None or self.maintenance_o2_share is not None)


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
    casemix: CaseMix
    practice: Practice = field(default_factory=Practice)
    gwp_source: str = DEFAULT_GWP
    #: Price overrides in the settings-file form (``currency``, ``bottle.<agent>``, ...).
    prices: Mapping[str, Any] = field(default_factory=dict)
    sampling: Sampling = field(default_factory=Sampling)
    car_kg_per_km: float = DEFAULT_CAR_FACTOR.value
    car_source: str = DEFAULT_CAR_FACTOR.source
    month_weights: tuple[float, ...] = DAYS_PER_MONTH
    source: str = ""

    def reference(self, base: Reference) -> Reference:
        """Reference data with this scenario's price overrides applied."""
        if not self.prices:
            return base
        return base.with_overrides({"prices": dict(self.prices)}, f"scenario '{self.name}'")

    def with_practice(self, **changes) -> "Scenario":
        return replace(self, practice=replace(self.practice, **changes))


# --------------------------------------------------------------------------------------
# The file format.


class _SwitchIn(_Strict):
    from_: str = pydantic.Field(alias="from")
    to: str

    @pydantic.field_validator("from_", "to")
    @classmethod
    def _volatile(cls, v):
        return volatile_key(v, "switch_agent")


class _PracticeIn(_Strict):
    maintenance_flow: Annotated[float | None, _quantity("L/min", 0.0, 20.0, low_open=True)] = None
    maintenance_o2_share: Annotated[float | None, Share] = None
    dial_factor: Annotated[float, _quantity("dimensionless", 0.0, 5.0, low_open=True, shown_unit="")] = 1.0
    switch_agent: _SwitchIn | None = None
    adherence: Annotated[float | None, Share] = None
    adherence_low: Annotated[float | None, Share] = None
    adherence_high: Annotated[float | None, Share] = None

    @pydantic.model_validator(mode="after")
    def _order(self):
        mode = 1.0 if self.adherence is None else self.adherence
        low = mode if self.adherence_low is None else self.adherence_low
        high = mode if self.adherence_high is None else self.adherence_high
        if not low <= mode <= high:
            raise InputError("adherence", f"{low:g} <= {mode:g} <= {high:g}",
                             "need adherence_low <= adherence <= adherence_high")
        if self.switch_agent is not None and self.switch_agent.from_ == self.switch_agent.to:
            raise InputError("switch_agent", self.switch_agent.to, "'from' and 'to' must differ")
        return self


class _SamplingIn(_Strict):
    draws: Annotated[int, pydantic.Field(ge=1, le=MAX_DRAWS)] = 2000
    seed: Annotated[int, pydantic.Field(ge=0, le=2**63 - 1)] = 20260101
    price_spread: Annotated[float, _quantity("dimensionless", 0.0, 1.0, shown_unit="")] = 0.0
    gwp_sources: list[str] = []

    @pydantic.field_validator("gwp_sources")
    @classmethod
    def _known(cls, v):
        for s in v:
            if s not in GWP_SOURCES:
                raise InputError("gwp_sources", s, "allowed sources are " + ", ".join(GWP_SOURCES))
        return v


class _EquivalenceIn(_Strict):
    car_kg_co2e_per_km: Annotated[float, _quantity("dimensionless", 0.0, 10.0, low_open=True,
                                                   shown_unit="kg CO2e/km")] = DEFAULT_CAR_FACTOR.value
    car_source: Annotated[str, pydantic.StringConstraints(min_length=1, max_length=300)] = DEFAULT_CAR_FACTOR.source


class _CalendarIn(_Strict):
    month_weights: Annotated[list[float], pydantic.Field(min_length=12, max_length=12)] = list(DAYS_PER_MONTH)

    @pydantic.field_validator("month_weights")
    @classmethod
    def _positive(cls, v):
        if any(w < 0 for w in v) or sum(v) <= 0:
            raise InputError("month_weights", v, "twelve non-negative numbers, not all zero")
        return v


class _ScenarioIn(_Strict):
    format: Annotated[str, format_of(SCENARIO_FORMAT)] = SCENARIO_FORMAT
    name: Annotated[str, pydantic.StringConstraints(min_length=1, max_length=120)] = "Unnamed scenario"
    case_mix: Annotated[str, pydantic.StringConstraints(min_length=1, max_length=500)]
    gwp_source: GwpSourceName = DEFAULT_GWP
    practice: _PracticeIn = _PracticeIn()
    prices: dict[str, Any] = {}
    uncertainty: _SamplingIn = _SamplingIn()
    equivalence: _EquivalenceIn = _EquivalenceIn()
    calendar: _CalendarIn = _CalendarIn()



def scenario_from_dict(data: Mapping, source: str = "scenario", base_dir: Path | None = None,
                       casemix: CaseMix | None = None) -> Scenario:
    """Validate a scenario given as a dict (as read from TOML).

    Parameters
    ----------
    data : mapping
        The scenario in file form.
    source : str
        Name of the file, for error messages.
    base_dir : Path, optional
        Folder the ``case_mix`` path is relative to (default: the current folder).
    casemix : CaseMix, optional
        Use this case mix instead of reading the ``case_mix`` file (e.g. one edited on the
        dashboard).

    Raises
    ------
    InputError
        Naming the file and field.
    """
    try:
        raw = _ScenarioIn.model_validate(data)
    except pydantic.ValidationError as exc:
        raise _first_error(exc, source, "scenario") from None
    if casemix is None:
        casemix = load_casemix((base_dir or Path(".")) / raw.case_mix)
    p = raw.practice
    mode = 1.0 if p.adherence is None else p.adherence
    practice = Practice(
        maintenance_flow_l_min=p.maintenance_flow, dial_factor=p.dial_factor,
        switch_from=p.switch_agent.from_ if p.switch_agent else None,
        switch_to=p.switch_agent.to if p.switch_agent else None,
        adherence=mode,
        adherence_low=mode if p.adherence_low is None else p.adherence_low,
        adherence_high=mode if p.adherence_high is None else p.adherence_high,
        maintenance_o2_share=p.maintenance_o2_share)
    u = raw.uncertainty
    scenario = Scenario(
        name=raw.name, casemix=casemix, practice=practice, gwp_source=raw.gwp_source,
        prices=dict(raw.prices),
        sampling=Sampling(u.draws, u.seed, u.price_spread, tuple(u.gwp_sources)),
        car_kg_per_km=raw.equivalence.car_kg_co2e_per_km, car_source=raw.equivalence.car_source,
        month_weights=tuple(float(w) for w in raw.calendar.month_weights), source=source)
    if scenario.prices:
        # Check the price table now, so a bad field is reported with the file's name.
        Reference().with_overrides({"prices": dict(scenario.prices)}, f"{source}: [prices]")
    return scenario


def parse_scenario_text(text: str, source: str = "scenario", base_dir: Path | None = None,
                        casemix: CaseMix | None = None) -> Scenario:
    """Read a scenario from TOML text. Raises InputError for malformed TOML or bad fields."""
    if len(text) > MAX_SCENARIO_BYTES:
        raise InputError(source, f"{len(text)} characters", f"a scenario file is at most {MAX_SCENARIO_BYTES} bytes")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(source, "the file", f"not valid TOML ({exc})") from None
    except RecursionError:
        raise InputError(source, "the file", "nested too deeply to be a scenario") from None
    return scenario_from_dict(data, source, base_dir, casemix)


def load_scenario(path) -> Scenario:
    """Read a scenario file (TOML) and its case mix. Raises InputError naming file and field."""
    p = Path(path)
    text = read_user_text(p, "scenario", MAX_SCENARIO_BYTES)
    return parse_scenario_text(text, str(p), p.parent)
