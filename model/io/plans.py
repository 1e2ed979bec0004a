"""Case plan files: reading (validated with pydantic), checking and writing the TOML plan format.

The dataclasses a plan is read into live in :mod:`model.plan`.

A plan file is TOML in the project's own format (documented in docs/formats.md, "Plan files"):
top-level ``name`` and ``agent``, tables ``[patient]``, ``[settings]`` and ``[prices]``,
and one ``[[phases]]`` table per phase. Numbers may carry units as text ("500 mL/min");
bare numbers are read in the documented default unit of each field.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from pathlib import Path
from typing import Annotated, Any

import pydantic
import tomli_w

from model.base.errors import InputError
from model.base.files import parse_toml, read_user_text
from model.base.units import check_range, to_base
from model.circle import ABSORBENT_CAPACITY_L_PER_KG, CIRCLE_VOLUME_L
from model.freshgas import RATIO_BEHAVIOURS
from model.plan import CasePlan, Patient, Phase, Settings, check_dials
from model.reference import DEFAULT_GWP, GWP_SOURCES, VOLATILES, normalise_agent_name
from model.uptake import DEFAULT_UPTAKE_MODEL, UPTAKE_MODELS

PLAN_FORMAT = "fresh-gas-ledger plan 1"
#: Largest plan file read. [bytes]
MAX_PLAN_BYTES = 1_000_000
#: Smallest total fresh gas flow of a phase. [L/min] Common practice, no source: 10 mL/min
#: is below any flowmeter's first mark and below any patient's O2 uptake; a flow just above
#: 0 (5e-324 L/min) would make the circle's mixing ratios infinite.
MIN_TOTAL_FLOW_L_MIN = 0.01
#: Smallest share of O2 in the O2/N2O mix a ratio limit may keep. [1] Common practice, no
#: source: workstations keep 25 %; a share just above 0 would allow infinite N2O per O2.
MIN_O2_SHARE = 0.01


# --------------------------------------------------------------------------------------
# The file format, validated with pydantic. Each field converts its unit at this edge.


def _field(info: pydantic.ValidationInfo) -> str:
    """The name of the field a validator checks (pydantic leaves it None only for a model's validator)."""
    return info.field_name or "value"


def _quantity(
    unit: str,
    low: float,
    high: float,
    default_unit: str | None = None,
    low_open: bool = False,
    shown_unit: str | None = None,
):
    def convert(value, info: pydantic.ValidationInfo):
        name = _field(info)
        number = to_base(value, unit, name, default_unit)
        return check_range(number, name, low, high, shown_unit or unit, low_open, typed=value)

    return pydantic.BeforeValidator(convert)


def _share(value, info: pydantic.ValidationInfo):
    """A share typed as 0.3, "30 %", "30 percent" or "0.3": stored as a fraction."""
    name = _field(info)
    # A plain number is a fraction; "30 %", "30 percent", "3000 ppm" are converted by pint.
    number = to_base(value, "dimensionless", name)
    if not 0.0 <= number <= 1.0:
        raise InputError(name, value, "a share from 0 to 1 (e.g. 0.3 or '30 %')")
    return number


def _share_above(low: float, open_: bool, allowed: str):
    """A share (as :func:`_share`) that must also be above ``low`` (or at least, if not ``open_``)."""

    def check(value, info: pydantic.ValidationInfo):
        number = _share(value, info)
        if number < low or (open_ and number <= low):
            raise InputError(_field(info), value, allowed)
        return number

    return pydantic.BeforeValidator(check)


def _percent(value, info: pydantic.ValidationInfo):
    """A concentration typed as 2, "2 %" or "2%": stored in percent."""
    return check_range(to_base(value, "percent", _field(info)), _field(info), 0.0, 100.0, "%", typed=value)


_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_MAC_SUFFIX = re.compile(r"^(?P<number>.*?)\s*(?:x\s*)?MAC$", re.IGNORECASE)


def _mac_target(value, info: pydantic.ValidationInfo):
    """An end-tidal target typed as 1.0, "1.0", "1.2 MAC" or "1.2 x MAC": a MAC multiple.

    A percent ("2 %") is refused: it is a vaporizer dial setting, and read as a bare number
    it would ask for 2 x MAC.
    """
    name = _field(info)
    typed = value
    if isinstance(value, str):
        m = _MAC_SUFFIX.match(value.strip())
        value = m.group("number") if m else value
        if "%" in value or "percent" in value.lower():
            raise InputError(
                name,
                typed,
                "an end-tidal target is a MAC multiple such as 1.0 or '1.2 MAC', "
                "not a percent; a setting in % is a vaporizer dial (give dial instead)",
            )
        if not _PLAIN_NUMBER.fullmatch(value.strip()):
            raise InputError(name, typed, "an end-tidal target is a MAC multiple such as 1.0 or '1.2 MAC'")
    number = to_base(value, "dimensionless", name)
    return check_range(number, name, 0.0, 3.0, "MAC", typed=typed)


Share = pydantic.BeforeValidator(_share)
Percent = pydantic.BeforeValidator(_percent)

Flow = Annotated[float, _quantity("L/min", 0.0, 20.0)]


def volatile_key(value: str, field: str) -> str:
    """The reference key of a volatile agent typed as a name or short name ("Sevo" -> "sevoflurane")."""
    key = normalise_agent_name(value)
    if key not in VOLATILES:
        raise InputError(field, value, "allowed agents are " + ", ".join(VOLATILES))
    return key


def format_of(expected: str):
    """A file's ``format`` line, which must name the one version this program reads."""

    def check(value, info: pydantic.ValidationInfo):
        if value != expected:
            raise InputError(_field(info), value, f"this version reads '{expected}'")
        return value

    return pydantic.BeforeValidator(check)


def _one_of(choices, noun: str):
    """A text field that must be one of ``choices`` ("allowed <noun> are ...")."""

    def check(value, info: pydantic.ValidationInfo):
        if value not in choices:
            raise InputError(_field(info), value, f"allowed {noun} are " + ", ".join(choices))
        return value

    return pydantic.AfterValidator(check)


GwpSourceName = Annotated[str, _one_of(GWP_SOURCES, "sources")]


class _Strict(pydantic.BaseModel):
    model_config = pydantic.ConfigDict(extra="forbid", str_strip_whitespace=True)


class PatientIn(_Strict):
    """The ``[patient]`` table of a plan file, as written (quantities with units)."""

    weight: Annotated[float, _quantity("kg", 0.5, 350.0)] = 70.0
    age: Annotated[float, _quantity("year", 0.0, 120.0)] = 40.0
    cardiac_output: Annotated[float | None, _quantity("L/min", 0.1, 40.0, low_open=True)] = None
    o2_consumption: Annotated[float | None, _quantity("mL/min", 5.0, 2000.0)] = None
    minute_ventilation: Annotated[float | None, _quantity("L/min", 0.2, 40.0)] = None


class PhaseIn(_Strict):
    """One ``[[phases]]`` entry of a plan file: flows and exactly one of dial or target."""

    name: Annotated[str, pydantic.StringConstraints(min_length=1, max_length=80)] = "phase"
    duration: Annotated[float, _quantity("min", 0.0, 24 * 60, low_open=True)]
    o2: Flow = 0.0
    air: Flow = 0.0
    n2o: Flow = 0.0
    dial: Annotated[float | None, Percent] = None
    target: Annotated[float | None, pydantic.BeforeValidator(_mac_target)] = None

    @pydantic.model_validator(mode="after")
    def _one_control(self):
        if (self.dial is None) == (self.target is None):
            raise InputError(
                "dial/target",
                "both" if self.dial is not None else "neither",
                "give exactly one: dial (vaporizer %) or target (end-tidal MAC multiple)",
            )
        if self.o2 + self.air + self.n2o <= 0:
            raise InputError("o2/air/n2o", 0, "the phase needs some fresh gas flow")
        if self.o2 + self.air + self.n2o < MIN_TOTAL_FLOW_L_MIN:
            raise InputError(
                "o2/air/n2o",
                f"{self.o2 + self.air + self.n2o:g} L/min total",
                f"a phase's fresh gas flow is at least {MIN_TOTAL_FLOW_L_MIN:g} L/min in total",
            )
        if self.o2 + self.air + self.n2o > 30:
            raise InputError(
                "o2/air/n2o",
                f"{self.o2 + self.air + self.n2o:g} L/min total",
                "total fresh gas flow above 30 L/min is not plausible",
            )
        return self


class SettingsIn(_Strict):
    """The ``[settings]`` table of a plan file, as written (quantities with units)."""

    room_temperature: Annotated[float, _quantity("degC", 0.0, 45.0)] = 20.0
    pressure: Annotated[float, _quantity("kPa", 50.0, 120.0)] = 101.325
    gwp_source: GwpSourceName = DEFAULT_GWP
    capture_efficiency: Annotated[float, Share] = 0.0
    min_o2_share: Annotated[
        float, _share_above(MIN_O2_SHARE, False, f"must be at least {MIN_O2_SHARE:g} (e.g. 0.25 or '25 %')")
    ] = 0.25
    n2o_cutoff_o2_flow: Annotated[float, _quantity("L/min", 0.0, 5.0)] = 0.2
    ratio_limit: Annotated[str, _one_of(RATIO_BEHAVIOURS, "values")] = "cap_n2o"
    inspired_o2_floor: Annotated[float, _share_above(0.21, False, "the floor is never below 0.21 (21 %)")] = 0.30
    sevoflurane_min_flow: Annotated[float, _quantity("L/min", 0.0, 20.0)] = 1.0
    sevoflurane_min_flow_long: Annotated[float, _quantity("L/min", 0.0, 20.0)] = 2.0
    uptake_model: Annotated[str, _one_of(UPTAKE_MODELS, "models")] = DEFAULT_UPTAKE_MODEL
    circle_volume: Annotated[float, _quantity("L", 0.5, 20.0)] = CIRCLE_VOLUME_L
    absorbent_capacity: Annotated[float, _quantity("L/kg", 10.0, 300.0)] = ABSORBENT_CAPACITY_L_PER_KG


class PlanIn(_Strict):
    """A whole plan file, as written: name, agent, patient, settings, prices and phases."""

    format: Annotated[str, format_of(PLAN_FORMAT)] = PLAN_FORMAT
    name: Annotated[str, pydantic.StringConstraints(min_length=1, max_length=120)] = "Unnamed plan"
    agent: str
    patient: PatientIn = PatientIn()
    settings: SettingsIn = SettingsIn()
    prices: dict[str, Any] = {}
    phases: Annotated[list[PhaseIn], pydantic.Field(min_length=1, max_length=100)]

    @pydantic.field_validator("agent")
    @classmethod
    def _volatile(cls, v):
        return volatile_key(v, "agent")


def _where(loc) -> str:
    parts = []
    for item in loc:
        if isinstance(item, int):
            parts.append(f"[{item + 1}]")
        else:
            parts.append(("." if parts else "") + str(item))
    return "".join(parts)


def _first_error(exc: pydantic.ValidationError, source: str, fmt: str = "plan") -> InputError:
    err = exc.errors(include_url=False)[0]
    loc = tuple(x for x in err["loc"] if not (isinstance(x, str) and x.startswith("function-")))
    where = _where(loc)
    original = (err.get("ctx") or {}).get("error")
    prefix = f"{source}: " if source else ""
    if isinstance(original, InputError):
        # The validator knew the field's own name; put it in its place in the path.
        base = where
        if not loc or original.field not in loc:
            base = f"{base}.{original.field}" if base else original.field
        return InputError(prefix + base, original.value, original.allowed)
    kind = err["type"]
    value = err.get("input")
    if kind == "missing":
        return InputError(prefix + where, "nothing", "this field is required")
    if kind == "extra_forbidden":
        return InputError(
            prefix + where, value, f"unknown field (check its spelling in docs/formats.md, the {fmt} format)"
        )
    if kind == "too_short" and loc and loc[-1] == "phases":
        return InputError(prefix + where, "no phases", "a plan needs at least one [[phases]] table")
    return InputError(prefix + where, value, err["msg"].replace("Value error, ", ""))


def plan_from_dict(data: Mapping, source: str = "", reference=None) -> CasePlan:
    """Validate a plan given as a dict (as read from TOML) and convert its units.

    With ``reference`` given (a :class:`model.reference.Reference`), dial settings are also
    checked against its vaporizer maxima (:func:`check_dials`); without, only 0-100 %.

    Raises
    ------
    InputError
        With a message naming the first wrong field (e.g. ``phases[2].o2``), the value
        found and what is allowed.
    """
    try:
        raw = PlanIn.model_validate(data)
    except pydantic.ValidationError as exc:
        raise _first_error(exc, source) from None
    phases = [Phase(p.name, p.duration, p.o2, p.air, p.n2o, p.dial, p.target) for p in raw.phases]
    s = raw.settings
    pt = raw.patient
    plan = CasePlan(
        name=raw.name,
        agent=raw.agent,
        phases=tuple(phases),
        patient=Patient(pt.weight, pt.age, pt.cardiac_output, pt.o2_consumption, pt.minute_ventilation),
        settings=Settings(
            s.room_temperature,
            s.pressure,
            s.gwp_source,
            s.capture_efficiency,
            s.min_o2_share,
            s.n2o_cutoff_o2_flow,
            s.ratio_limit,
            s.inspired_o2_floor,
            s.sevoflurane_min_flow,
            s.sevoflurane_min_flow_long,
            s.uptake_model,
            s.circle_volume,
            s.absorbent_capacity,
        ),
        prices=dict(raw.prices),
    )
    if reference is not None:
        check_dials(plan, reference, source)
    return plan


def parse_plan_text(text: str, source: str = "plan", reference=None) -> CasePlan:
    """Read a plan from TOML text. Raises InputError for malformed TOML or bad fields.

    With ``reference`` given, dial settings are also checked against its vaporizer
    maxima (:func:`check_dials`).
    """
    if len(text) > MAX_PLAN_BYTES:
        raise InputError(source, f"{len(text)} characters", f"a plan file is at most {MAX_PLAN_BYTES} bytes")
    return plan_from_dict(parse_toml(text, source, "plan"), source, reference)


def load_plan(path, reference=None) -> CasePlan:
    """Read a plan file (TOML). Raises InputError naming the file and the field.

    With ``reference`` given, dial settings are also checked against its vaporizer
    maxima (:func:`check_dials`).
    """
    p = Path(path)
    text = read_user_text(p, "plan", MAX_PLAN_BYTES)
    return parse_plan_text(text, str(p), reference)


def _q(number: float, unit: str) -> str:
    """A quantity as text that reads back to the same float ("0.35 L/min")."""
    number = float(number)
    short = f"{number:g}"
    return f"{short if float(short) == number else repr(number)} {unit}"


def plan_to_dict(plan: CasePlan) -> dict:
    """The plan in file form (units written out), the inverse of ``plan_from_dict``."""
    s = plan.settings
    pt = plan.patient
    patient = {"weight": _q(pt.weight_kg, "kg"), "age": _q(pt.age_years, "year")}
    if pt.cardiac_output_l_min is not None:
        patient["cardiac_output"] = _q(pt.cardiac_output_l_min, "L/min")
    if pt.vo2_ml_min is not None:
        patient["o2_consumption"] = _q(pt.vo2_ml_min, "mL/min")
    if pt.minute_ventilation_l_min is not None:
        patient["minute_ventilation"] = _q(pt.minute_ventilation_l_min, "L/min")
    phases = []
    for p in plan.phases:
        row: dict[str, Any] = {
            "name": p.name,
            "duration": _q(p.minutes, "min"),
            "o2": _q(p.oxygen_l_min, "L/min"),
            "air": _q(p.air_l_min, "L/min"),
            "n2o": _q(p.nitrous_oxide_l_min, "L/min"),
        }
        if p.dial_pct is not None:
            row["dial"] = _q(p.dial_pct, "%")
        else:
            row["target"] = p.target_mac
        phases.append(row)
    out = {
        "format": PLAN_FORMAT,
        "name": plan.name,
        "agent": plan.agent,
        "patient": patient,
        "settings": {
            "room_temperature": _q(s.temperature_c, "degC"),
            "pressure": _q(s.pressure_kpa, "kPa"),
            "gwp_source": s.gwp_source,
            "capture_efficiency": s.capture_efficiency,
            "min_o2_share": s.min_o2_share,
            "n2o_cutoff_o2_flow": _q(s.min_o2_flow_l_min, "L/min"),
            "ratio_limit": s.ratio_behaviour,
            "inspired_o2_floor": s.inspired_o2_floor,
            "sevoflurane_min_flow": _q(s.sevoflurane_min_flow_l_min, "L/min"),
            "sevoflurane_min_flow_long": _q(s.sevoflurane_min_flow_long_l_min, "L/min"),
            "uptake_model": s.uptake_model,
            "circle_volume": _q(s.circle_volume_l, "L"),
            "absorbent_capacity": _q(s.absorbent_capacity_l_per_kg, "L/kg"),
        },
        "phases": phases,
    }
    if plan.prices:
        out["prices"] = dict(plan.prices)
    return out


def plan_to_toml(plan: CasePlan) -> str:
    """The plan as TOML text in the project's plan format."""
    return tomli_w.dumps(plan_to_dict(plan))
