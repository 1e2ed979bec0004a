"""Scenarios: a case mix, a change of practice, prices and the settings of the year's sampling.

A scenario file is TOML in the project's own format (documented in docs/formats.md, "Case-mix and
scenario files"). It names its case-mix file (CSV, :mod:`model.io.case_mix`) relative to itself.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Annotated, Any

import pydantic
import tomli_w

from model.base.errors import InputError
from model.base.files import parse_toml, read_user_text
from model.base.units import check_range, to_base
from model.io.case_mix import load_case_mix
from model.io.plans import (
    MIN_TOTAL_FLOW_L_MIN,
    GwpSourceName,
    Share,
    _field,
    _first_error,
    _quantity,
    _Strict,
    format_of,
    volatile_key,
)
from model.reference import DEFAULT_GWP, GWP_SOURCES, Reference
from model.year.inputs import DAYS_PER_MONTH, DEFAULT_CAR_FACTOR, MAX_DRAWS, CaseMix, Practice, Sampling, Scenario

SCENARIO_FORMAT = "fresh-gas-ledger scenario 1"
#: Largest scenario file read. [bytes]
MAX_SCENARIO_BYTES = 200_000
#: Largest month weight (weights are relative: days per month, cases per month). Common
#: practice, no source; bounded so that their sum stays finite.
MAX_MONTH_WEIGHT = 1e6
#: Smallest car emission factor. [kg CO2e/km] Common practice, no source: 1 g/km, below
#: any car's (an electric car's is some 50 g/km, from memory); the distance divides by it.
MIN_CAR_KG_PER_KM = 0.001


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
    maintenance_flow: Annotated[float | None, _quantity("L/min", MIN_TOTAL_FLOW_L_MIN, 20.0)] = None
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
            raise InputError(
                "adherence", f"{low:g} <= {mode:g} <= {high:g}", "need adherence_low <= adherence <= adherence_high"
            )
        if self.switch_agent is not None and self.switch_agent.from_ == self.switch_agent.to:
            raise InputError("switch_agent", self.switch_agent.to, "'from' and 'to' must differ")
        return self


def _not_a_boolean(value, info: pydantic.ValidationInfo):
    """Refuse ``true`` and ``false`` where a number is due (pydantic would read them as 1 and 0)."""
    if isinstance(value, bool):
        raise InputError(_field(info), str(value).lower(), "expected a number, not true or false")
    return value


NotBoolean = pydantic.BeforeValidator(_not_a_boolean)


class _SamplingIn(_Strict):
    draws: Annotated[int, NotBoolean, pydantic.Field(ge=1, le=MAX_DRAWS)] = 2000
    seed: Annotated[int, NotBoolean, pydantic.Field(ge=0, le=2**63 - 1)] = 20260101
    price_spread: Annotated[float, _quantity("dimensionless", 0.0, 1.0, shown_unit="")] = 0.0
    gwp_sources: list[str] = []

    @pydantic.field_validator("gwp_sources")
    @classmethod
    def _known(cls, v):
        for s in v:
            if s not in GWP_SOURCES:
                raise InputError("gwp_sources", s, "allowed sources are " + ", ".join(GWP_SOURCES))
        return v


_CO2E = re.compile(r"\s*\bCO2[- ]?eq?\b", re.IGNORECASE)


def _car_factor(value, info: pydantic.ValidationInfo):
    """Read a car's emission factor typed as 0.17, "0.17 kg/km", "170 g/km" or "0.17 kg CO2e/km" [kg/km]."""
    name = _field(info)
    text = _CO2E.sub("", value) if isinstance(value, str) else value
    number = to_base(text, "kg/km", name)
    return check_range(number, name, MIN_CAR_KG_PER_KM, 10.0, "kg CO2e/km", typed=value)


class _EquivalenceIn(_Strict):
    car_kg_co2e_per_km: Annotated[float, pydantic.BeforeValidator(_car_factor)] = DEFAULT_CAR_FACTOR.value  # type: ignore[assignment]  # a Sourced constant, 0.17, never None
    car_source: Annotated[str, pydantic.StringConstraints(min_length=1, max_length=300)] = DEFAULT_CAR_FACTOR.source


class _CalendarIn(_Strict):
    month_weights: Annotated[list[Annotated[float, NotBoolean]], pydantic.Field(min_length=12, max_length=12)] = list(
        DAYS_PER_MONTH
    )

    @pydantic.field_validator("month_weights")
    @classmethod
    def _positive(cls, v):
        if any(not math.isfinite(w) or w < 0 or w > MAX_MONTH_WEIGHT for w in v) or sum(v) <= 0:
            raise InputError("month_weights", v, f"twelve numbers from 0 to {MAX_MONTH_WEIGHT:g}, not all zero")
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


def scenario_from_dict(
    data: Mapping, source: str = "scenario", base_dir: Path | None = None, case_mix: CaseMix | None = None
) -> Scenario:
    """Validate a scenario given as a dict (as read from TOML).

    Parameters
    ----------
    data : mapping
        The scenario in file form.
    source : str
        Name of the file, for error messages.
    base_dir : Path, optional
        Folder the ``case_mix`` path is relative to (default: the current folder).
    case_mix : CaseMix, optional
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
    if case_mix is None:
        case_mix = load_case_mix((base_dir or Path(".")) / raw.case_mix)
    p = raw.practice
    mode = 1.0 if p.adherence is None else p.adherence
    practice = Practice(
        maintenance_flow_l_min=p.maintenance_flow,
        dial_factor=p.dial_factor,
        switch_from=p.switch_agent.from_ if p.switch_agent else None,
        switch_to=p.switch_agent.to if p.switch_agent else None,
        adherence=mode,
        adherence_low=mode if p.adherence_low is None else p.adherence_low,
        adherence_high=mode if p.adherence_high is None else p.adherence_high,
        maintenance_o2_share=p.maintenance_o2_share,
    )
    u = raw.uncertainty
    scenario = Scenario(
        name=raw.name,
        case_mix=case_mix,
        practice=practice,
        gwp_source=raw.gwp_source,
        prices=dict(raw.prices),
        sampling=Sampling(u.draws, u.seed, u.price_spread, tuple(u.gwp_sources)),
        car_kg_per_km=raw.equivalence.car_kg_co2e_per_km,
        car_source=raw.equivalence.car_source,
        month_weights=tuple(float(w) for w in raw.calendar.month_weights),
        source=source,
    )
    if scenario.prices:
        # Check the price table now, so a bad field is reported with the file's name.
        Reference().with_overrides({"prices": dict(scenario.prices)}, f"{source}: [prices]")
    return scenario


def parse_scenario_text(
    text: str, source: str = "scenario", base_dir: Path | None = None, case_mix: CaseMix | None = None
) -> Scenario:
    """Read a scenario from TOML text. Raises InputError for malformed TOML or bad fields."""
    if len(text) > MAX_SCENARIO_BYTES:
        raise InputError(source, f"{len(text)} characters", f"a scenario file is at most {MAX_SCENARIO_BYTES} bytes")
    data = parse_toml(text, source, "scenario", "not valid TOML (see 'Case-mix and scenario files' in docs/formats.md)")
    return scenario_from_dict(data, source, base_dir, case_mix)


def load_scenario(path) -> Scenario:
    """Read a scenario file (TOML) and its case mix. Raises InputError naming file and field."""
    p = Path(path)
    text = read_user_text(p, "scenario", MAX_SCENARIO_BYTES)
    return parse_scenario_text(text, str(p), p.parent)


def scenario_to_dict(scenario: Scenario, case_mix: str) -> dict:
    """The scenario in its file form (the inverse of :func:`scenario_from_dict`).

    Parameters
    ----------
    scenario : Scenario
        As run (practice, prices, sampling and calendar included).
    case_mix : str
        What the ``case_mix`` field names: a file relative to the scenario, or the name of
        a case mix saved in the store.
    """
    p = scenario.practice
    practice: dict = {}
    if p.maintenance_flow_l_min is not None:
        practice["maintenance_flow"] = f"{p.maintenance_flow_l_min:g} L/min"
    if p.maintenance_o2_share is not None:
        practice["maintenance_o2_share"] = float(p.maintenance_o2_share)
    if p.dial_factor != 1.0:
        practice["dial_factor"] = float(p.dial_factor)
    if p.switch_from is not None:
        practice["switch_agent"] = {"from": p.switch_from, "to": p.switch_to}
    if practice or (p.adherence, p.adherence_low, p.adherence_high) != (1.0, 1.0, 1.0):
        practice.update(
            adherence=float(p.adherence), adherence_low=float(p.adherence_low), adherence_high=float(p.adherence_high)
        )
    s = scenario.sampling
    out: dict[str, Any] = {
        "format": SCENARIO_FORMAT,
        "name": scenario.name,
        "case_mix": case_mix,
        "gwp_source": scenario.gwp_source,
    }
    if practice:
        out["practice"] = practice
    if scenario.prices:
        out["prices"] = {k: (dict(v) if isinstance(v, Mapping) else v) for k, v in scenario.prices.items()}
    out["uncertainty"] = {
        "draws": int(s.draws),
        "seed": int(s.seed),
        "price_spread": float(s.price_spread),
        "gwp_sources": list(s.gwp_sources),
    }
    out["equivalence"] = {"car_kg_co2e_per_km": float(scenario.car_kg_per_km), "car_source": scenario.car_source}
    out["calendar"] = {"month_weights": [float(w) for w in scenario.month_weights]}
    return out


def scenario_to_toml(scenario: Scenario, case_mix: str) -> str:
    """The scenario as TOML text in the scenario file format (see :func:`scenario_to_dict`)."""
    return tomli_w.dumps(scenario_to_dict(scenario, case_mix))
