"""Cautions of a computed case: their severities (hazard first) and the checks that raise them."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import pandas as pd

from model.plan import CasePlan
from model.reference import Agent

__all__ = [
    "CAUTION_CODES",
    "Caution",
    "CautionGroup",
    "FLOW_UNDER_O2_CONSUMPTION",
    "FRESH_GAS_O2_UNDER_FLOOR",
    "FRESH_GAS_O2_UNDER_SAFE_SHARE",
    "LOW_INSPIRED_O2",
    "O2_SHORTFALL",
    "RATIO_ALTERED",
    "SEVERITIES",
    "SEVOFLURANE_LOW_FLOW",
    "SEVOFLURANE_LOW_FLOW_CODES",
    "SEVOFLURANE_LOW_FLOW_LONG",
    "SLOW_TARGET_MIN",
    "STANDING_CAUTION",
    "STANDING_CAUTION_SHORT",
    "by_severity",
    "case_cautions",
    "group_cautions",
    "code_of",
    "is_unsafe",
    "severity_of",
    "cautions_as_records",
]


#: The standing caution every result carries: shown on every page, printed by every command,
#: written into every JSON output, report and export (docs/methods.md, "Cautions the results
#: always carry").
STANDING_CAUTION = (
    "Estimates support planning, budgeting and reporting; they are not a prescription. "
    "Flows, mixes and dial settings for a patient follow local protocols, the workstation's "
    "instructions for use and licensed practice, with inspired O2 and end-tidal agent monitored."
)
#: The standing caution in one line, for places too small for the whole of it.
STANDING_CAUTION_SHORT = (
    "Planning estimates, not a prescription: follow local protocols and monitor inspired O2 and end-tidal agent."
)

#: A target reached later than this after a phase starts is reported. [min]
#: Common practice, no source.
SLOW_TARGET_MIN = 5.0

#: Severities of a caution, most severe first: ``"hazard"`` a predicted hypoxic mixture or
#: O2 running out (the plan is unsafe as written), ``"caution"`` a mix altered by the ratio
#: limit, a fresh gas O2 share under what keeps inspired O2 up at steady state, a slow or
#: unreached target, ``"labelling"`` a flow under the set sevoflurane minimum (labelling
#: and local protocol). Common practice, no source.
SEVERITIES = ("hazard", "caution", "labelling")

#: Codes of the cautions :func:`case_cautions` raises, one per check: results and flags are
#: read from these, never from a caution's wording.
#: The O2/N2O ratio limit altered a phase's requested mix (caution).
RATIO_ALTERED = "ratio_altered"
#: A sevoflurane phase's fresh gas flow is under the set minimum (labelling).
SEVOFLURANE_LOW_FLOW = "sevo_low_flow"
#: A sevoflurane phase's flow is under the set minimum for beyond 1 MAC-hour (labelling).
SEVOFLURANE_LOW_FLOW_LONG = "sevo_low_flow_long"
#: A phase's fresh gas O2 share is under the inspired O2 floor (hazard).
FRESH_GAS_O2_UNDER_FLOOR = "fresh_gas_o2_under_floor"
#: A phase's fresh gas O2 share is under what keeps inspired O2 above the floor at steady state (caution).
FRESH_GAS_O2_UNDER_SAFE_SHARE = "fresh_gas_o2_under_safe_share"
#: A phase's fresh gas flow does not exceed the patient's O2 consumption (hazard).
FLOW_UNDER_O2_CONSUMPTION = "flow_under_o2_consumption"
#: A phase's end-tidal target is not reached within the phase (caution).
TARGET_UNREACHABLE = "target_unreachable"
#: A phase's end-tidal target is reached only after :data:`SLOW_TARGET_MIN` (caution).
TARGET_SLOW = "target_slow"
#: Predicted inspired O2 falls under the floor: a hypoxic mixture (hazard).
LOW_INSPIRED_O2 = "low_o2"
#: The circle runs out of O2 for the patient's consumption (hazard).
O2_SHORTFALL = "o2_shortfall"
CAUTION_CODES = (
    RATIO_ALTERED,
    SEVOFLURANE_LOW_FLOW,
    SEVOFLURANE_LOW_FLOW_LONG,
    FRESH_GAS_O2_UNDER_FLOOR,
    FRESH_GAS_O2_UNDER_SAFE_SHARE,
    FLOW_UNDER_O2_CONSUMPTION,
    TARGET_UNREACHABLE,
    TARGET_SLOW,
    LOW_INSPIRED_O2,
    O2_SHORTFALL,
)
#: The codes behind a case's ``sevoflurane_low_flow_caution`` flag.
SEVOFLURANE_LOW_FLOW_CODES = (SEVOFLURANE_LOW_FLOW, SEVOFLURANE_LOW_FLOW_LONG)


class Caution(str):
    """A warning's text (a ``str``, so it prints and compares as text) with its severity and code.

    ``severity`` is one of :data:`SEVERITIES`; ``code`` one of :data:`CAUTION_CODES`, or
    empty for a caution no check of this module raised (e.g. one the year model words).
    """

    severity: str
    code: str

    def __new__(cls, text: str, severity: str = "caution", code: str = ""):
        """A caution of ``text``; raises ValueError for an unknown severity or code."""
        if severity not in SEVERITIES:
            raise ValueError(f"severity {severity!r}: allowed are " + ", ".join(SEVERITIES))
        if code and code not in CAUTION_CODES:
            raise ValueError(f"code {code!r}: allowed are " + ", ".join(CAUTION_CODES))
        obj = super().__new__(cls, text)
        obj.severity = severity
        obj.code = code
        return obj

    def __reduce__(self):
        return (Caution, (str(self), self.severity, self.code))

    def __add__(self, other):
        return Caution(str(self) + str(other), self.severity, self.code)

    def __radd__(self, other):
        return Caution(str(other) + str(self), self.severity, self.code)


def severity_of(warning) -> str:
    """The severity of a warning (plain text counts as ``"caution"``)."""
    return getattr(warning, "severity", "caution")


def code_of(warning) -> str:
    """The code of a warning (:data:`CAUTION_CODES`; empty for plain text or an uncoded caution)."""
    return getattr(warning, "code", "")


def by_severity(cautions) -> list:
    """The cautions most severe first, in their order within a severity, each text once."""
    unique = list(dict.fromkeys(cautions))
    return sorted(unique, key=lambda c: SEVERITIES.index(severity_of(c)))


def is_unsafe(cautions) -> bool:
    """Whether any caution is a hazard (hypoxic mixture predicted, or the circle runs out of O2)."""
    return any(severity_of(c) == "hazard" for c in cautions)


def cautions_as_records(cautions) -> list[dict]:
    """Cautions as ``{"severity": ..., "text": ...}``, most severe first (for files and JSON)."""
    return [{"severity": severity_of(c), "text": str(c)} for c in by_severity(cautions)]


_NUMBER = re.compile(r"(?<![A-Za-z])\d[\d,]*(?:\.\d+)?")
#: Gas formulae, whose digits are not figures.
_FORMULAE = re.compile(r"\b(?:N2O|CO2|O2)\b")


class CautionGroup(NamedTuple):
    """Cautions that say the same thing, shown once.

    ``text`` is the shared message with each figure that differs given as its range
    ("falls to 5-28 %"); ``applies_to`` the subjects (case types, or a plan's phases) in the
    order first met; ``variants`` the practice variants the message was raised for ("changed
    practice, sevoflurane with N2O"), and ``members`` how many cautions it stands for.
    """

    severity: str
    text: str
    applies_to: tuple
    variants: tuple
    members: int

    def line(self) -> str:
        """The group in one line: subjects, the message, and the variants in brackets."""
        head = f"{', '.join(self.applies_to)}: " if self.applies_to else ""
        tail = f" ({'; '.join(self.variants)})" if self.variants else ""
        return f"{head}{self.text}{tail}"


def _split(warning: str) -> tuple[list[str], str, str]:
    """(subjects, variant, message) of a caution written "subjects: [variant: ]message"."""
    subject, sep, rest = str(warning).partition(": ")
    if not sep:
        return [], "", str(warning)
    head, sep2, tail = rest.partition(": ")
    if sep2 and not any(ch.isdigit() for ch in _FORMULAE.sub("", head)) and "%" not in head:
        return subject.split(", "), head, tail
    return subject.split(", "), "", rest


def group_cautions(warnings) -> list[CautionGroup]:
    """Identical cautions grouped: one per severity and message, most severe first.

    Two cautions are the same when their messages match once their figures are set aside
    (a year's "predicted inspired O2 falls to 17 %" of one case type and "... to 5 %" of
    another): the group names every subject and variant, and each figure as its range.
    Hazards come first, then cautions of the middle severity, then labelling notes.

    Parameters
    ----------
    warnings : iterable of str or Caution
        Texts written "subjects: message" (a plan's phase, or a year's case types, then the
        practice variant), as :func:`case_cautions` and the year model write them.
    """
    groups: dict[tuple[str, str], dict] = {}
    for w in by_severity(warnings):
        subjects, variant, message = _split(w)
        key = (severity_of(w), _NUMBER.sub("#", message))
        g = groups.setdefault(key, {"subjects": {}, "variants": {}, "numbers": [], "members": 0})
        g["subjects"].update(dict.fromkeys(subjects))
        if variant:
            g["variants"][variant] = None
        g["numbers"].append(_NUMBER.findall(message))
        g["members"] += 1
    out = []
    for (severity, masked), g in groups.items():
        columns = list(zip(*g["numbers"], strict=True))
        parts = masked.split("#")
        text = parts[0]
        for col, part in zip(columns, parts[1:], strict=True):
            values = sorted(set(col), key=lambda v: float(v.replace(",", "")))
            text += values[0] if len(values) == 1 else f"{values[0]}-{values[-1]}"
            text += part
        out.append(CautionGroup(severity, text, tuple(g["subjects"]), tuple(g["variants"]), g["members"]))
    return sorted(out, key=lambda g: SEVERITIES.index(g.severity))


class _Row(NamedTuple):
    """The figures of one computed phase the checks read (columns of ``CaseResult.phases``)."""

    phase: str
    flows_altered: bool
    oxygen_l_min: float
    nitrous_oxide_l_min: float
    fgf_l_min: float
    fd_o2_pct: float
    lowest_safe_fd_o2_pct: float
    mode: str
    target_mac: float
    time_to_target_min: float


@dataclass(frozen=True)
class _Case:
    """What every check of one case reads: the plan's settings, the agent and the case totals."""

    plan: CasePlan
    agent: Agent
    totals: dict | None

    @property
    def floor_pct(self) -> float:
        """The inspired O2 floor, in percent."""
        return self.plan.settings.inspired_o2_floor * 100.0


def _ratio_altered(case: _Case, i: int, row: _Row) -> Caution | None:
    if not row.flows_altered:
        return None
    p = case.plan.phases[i - 1]
    return Caution(
        f"{_label(i, row)}: the O2/N2O ratio limit altered the requested mix "
        f"(O2 {p.oxygen_l_min:g} -> {row.oxygen_l_min:.2f} L/min, N2O {p.nitrous_oxide_l_min:g} -> "
        f"{row.nitrous_oxide_l_min:.2f} L/min)",
        "caution",
        RATIO_ALTERED,
    )


def _sevoflurane_low_flow(case: _Case, i: int, row: _Row) -> Caution | None:
    minimum = case.plan.settings.sevoflurane_min_flow_l_min
    if case.agent.name != "sevoflurane" or not row.fgf_l_min < minimum:
        return None
    return Caution(
        f"{_label(i, row)}: sevoflurane at {row.fgf_l_min:.2f} L/min is under the set minimum of "
        f"{minimum:g} L/min; follow local protocol and labelling",
        "labelling",
        SEVOFLURANE_LOW_FLOW,
    )


def _under_floor(case: _Case, row: _Row) -> bool:
    return row.fd_o2_pct / 100.0 < case.plan.settings.inspired_o2_floor


def _fresh_gas_o2_under_floor(case: _Case, i: int, row: _Row) -> Caution | None:
    if not _under_floor(case, row):
        return None
    return Caution(
        f"{_label(i, row)}: fresh gas O2 {row.fd_o2_pct:.0f} % is under the inspired O2 floor of "
        f"{case.floor_pct:.0f} %; inspired O2 in a circle is lower still",
        "hazard",
        FRESH_GAS_O2_UNDER_FLOOR,
    )


def _fresh_gas_o2_under_safe_share(case: _Case, i: int, row: _Row) -> Caution | None:
    safe = row.lowest_safe_fd_o2_pct
    if _under_floor(case, row) or not math.isfinite(safe) or not row.fd_o2_pct < safe - 1e-9:
        return None
    label, totals = _label(i, row), case.totals
    return Caution(
        f"{label}: at {row.fgf_l_min:.2f} L/min, fresh gas O2 {row.fd_o2_pct:.0f} % is under "
        f"the {safe:.0f} % that keeps inspired O2 above {case.floor_pct:.0f} % "
        f"at steady state (O2 consumption {totals['vo2_ml_min']:.0f} mL/min)"
        if totals
        else f"{label}: fresh gas O2 under the lowest safe share",
        "caution",
        FRESH_GAS_O2_UNDER_SAFE_SHARE,
    )


def _flow_under_o2_consumption(case: _Case, i: int, row: _Row) -> Caution | None:
    if _under_floor(case, row) or math.isfinite(row.lowest_safe_fd_o2_pct):
        return None
    return Caution(
        f"{_label(i, row)}: fresh gas flow {row.fgf_l_min:.2f} L/min does not exceed the O2 "
        f"consumption; no fresh gas mix keeps inspired O2 above {case.floor_pct:.0f} %",
        "hazard",
        FLOW_UNDER_O2_CONSUMPTION,
    )


def _target_unreachable(case: _Case, i: int, row: _Row) -> Caution | None:
    if row.mode != "target" or math.isfinite(row.time_to_target_min):
        return None
    return Caution(
        f"{_label(i, row)}: the end-tidal target of {row.target_mac:g} MAC is not reached "
        f"within the phase at {row.fgf_l_min:.2f} L/min (vaporizer maximum "
        f"{case.agent.vaporizer_max:g} %); raise the flow or allow longer",
        "caution",
        TARGET_UNREACHABLE,
    )


def _target_slow(case: _Case, i: int, row: _Row) -> Caution | None:
    t = row.time_to_target_min
    if row.mode != "target" or not math.isfinite(t) or not t > SLOW_TARGET_MIN:
        return None
    return Caution(
        f"{_label(i, row)}: end-tidal reaches the target of {row.target_mac:g} MAC only after "
        f"{t:.0f} min at {row.fgf_l_min:.2f} L/min",
        "caution",
        TARGET_SLOW,
    )


#: The checks of each phase, in the order their cautions are listed within a severity.
_PHASE_CHECKS = (
    _ratio_altered,
    _sevoflurane_low_flow,
    _fresh_gas_o2_under_floor,
    _fresh_gas_o2_under_safe_share,
    _flow_under_o2_consumption,
    _target_unreachable,
    _target_slow,
)


def _low_inspired_o2(case: _Case) -> Caution | None:
    totals = case.totals
    if totals is None or not totals["min_inspired_o2_pct"] < case.floor_pct:
        return None
    return Caution(
        f"predicted inspired O2 falls to {totals['min_inspired_o2_pct']:.0f} % (at "
        f"{totals['min_inspired_o2_time_min']:.0f} min), under the floor of {case.floor_pct:.0f} %: "
        f"hypoxic mixture; raise the O2 share or the flow",
        "hazard",
        LOW_INSPIRED_O2,
    )


def _o2_shortfall(case: _Case) -> Caution | None:
    totals = case.totals
    if totals is None or not totals["o2_shortfall_l"] > 1e-6:
        return None
    return Caution(
        f"the circle runs out of O2 for the patient's consumption "
        f"({totals['o2_shortfall_l']:.2f} L short): O2 inflow must at least match "
        f"consumption",
        "hazard",
        O2_SHORTFALL,
    )


def _sevoflurane_low_flow_long(
    case: _Case, rows: list[_Row], phases: pd.DataFrame, timecourse: pd.DataFrame | None
) -> list[Caution]:
    """Phases of a sevoflurane case under the long-case minimum flow after 1 MAC-hour of end-tidal agent."""
    if case.agent.name != "sevoflurane" or timecourse is None or len(timecourse) <= 1:
        return []
    minimum = case.plan.settings.sevoflurane_min_flow_long_l_min
    t = timecourse["time_min"].to_numpy()
    et = timecourse["end_tidal_mac"].to_numpy()
    mac_min = np.concatenate([[0.0], np.cumsum(np.diff(t) * 0.5 * (et[1:] + et[:-1]))])
    ends = np.cumsum(phases["duration_min"].to_numpy())
    starts = ends - phases["duration_min"].to_numpy()
    out = []
    for i, row in enumerate(rows, start=1):
        if row.fgf_l_min >= minimum:
            continue
        late = (t > starts[i - 1]) & (t <= ends[i - 1]) & (mac_min > 60.0)
        if late.any():
            out.append(
                Caution(
                    f"{_label(i, row)}: sevoflurane at {row.fgf_l_min:.2f} L/min beyond 1 "
                    f"MAC-hour is under the set minimum of {minimum:g} "
                    f"L/min; follow local protocol and labelling",
                    "labelling",
                    SEVOFLURANE_LOW_FLOW_LONG,
                )
            )
    return out


def _label(i: int, row: _Row) -> str:
    return f"phase {i} ({row.phase})"


def case_cautions(
    plan: CasePlan, phases: pd.DataFrame, agent, totals: dict | None = None, timecourse: pd.DataFrame | None = None
) -> list[Caution]:
    """Cautions for a computed plan: altered mixes, sevoflurane flow, inspired O2, targets.

    Each check raises at most one caution (with its code, :data:`CAUTION_CODES`) per phase,
    or, for the predicted inspired O2 and the O2 shortfall, per case.

    Returns
    -------
    list of Caution
        Most severe first (:data:`SEVERITIES`): hazards (hypoxic mixture, O2 running out),
        then cautions, then labelling notes.
    """
    case = _Case(plan, agent, totals)
    rows = [_Row(**{f: r[f] for f in _Row._fields}) for r in phases.to_dict("records")]
    found = [check(case, i, row) for i, row in enumerate(rows, start=1) for check in _PHASE_CHECKS]
    found += [_low_inspired_o2(case), _o2_shortfall(case)]
    found += _sevoflurane_low_flow_long(case, rows, phases, timecourse)
    return by_severity([c for c in found if c is not None])
