"""Cautions of a computed case: their severities (hazard first) and the checks that raise them."""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pandas as pd

from model.plan import CasePlan

__all__ = [
    "Caution",
    "SEVERITIES",
    "SLOW_TARGET_MIN",
    "STANDING_CAUTION",
    "STANDING_CAUTION_SHORT",
    "by_severity",
    "case_warnings",
    "is_unsafe",
    "severity_of",
    "warnings_as_records",
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


class Caution(str):
    """A warning's text (a ``str``, so it prints and compares as text) with its severity.

    ``severity`` is one of :data:`SEVERITIES`.
    """

    severity: str

    def __new__(cls, text: str, severity: str = "caution"):
        if severity not in SEVERITIES:
            raise ValueError(f"severity {severity!r}: allowed are " + ", ".join(SEVERITIES))
        obj = super().__new__(cls, text)
        obj.severity = severity
        return obj

    def __reduce__(self):
        return (Caution, (str(self), self.severity))

    def __add__(self, other):
        return Caution(str(self) + str(other), self.severity)

    def __radd__(self, other):
        return Caution(str(other) + str(self), self.severity)


def severity_of(warning) -> str:
    """The severity of a warning (plain text counts as ``"caution"``)."""
    return getattr(warning, "severity", "caution")


def by_severity(warnings) -> list:
    """The warnings most severe first, in their order within a severity, each text once."""
    unique = list(dict.fromkeys(warnings))
    return sorted(unique, key=lambda w: SEVERITIES.index(severity_of(w)))


def is_unsafe(warnings) -> bool:
    """Whether any warning is a hazard (hypoxic mixture predicted, or the circle runs out of O2)."""
    return any(severity_of(w) == "hazard" for w in warnings)


def warnings_as_records(warnings) -> list[dict]:
    """Warnings as ``{"severity": ..., "text": ...}``, most severe first (for files and JSON)."""
    return [{"severity": severity_of(w), "text": str(w)} for w in by_severity(warnings)]


def case_warnings(
    plan: CasePlan, phases: pd.DataFrame, agent, totals: dict | None = None, timecourse: pd.DataFrame | None = None
) -> list[str]:
    """Cautions for a computed plan: altered mixes, sevoflurane flow, inspired O2, targets.

    Returns
    -------
    list of Caution
        Most severe first (:data:`SEVERITIES`): hazards (hypoxic mixture, O2 running out),
        then cautions, then labelling notes.
    """
    s = plan.settings
    floor_pct = s.inspired_o2_floor * 100.0
    rows = [SimpleNamespace(**r) for r in phases.to_dict("records")]
    out = []
    for i, row in enumerate(rows, start=1):
        p = plan.phases[i - 1]
        label = f"phase {i} ({row.phase})"
        if row.flows_altered:
            out.append(
                Caution(
                    f"{label}: the O2/N2O ratio limit altered the requested mix "
                    f"(O2 {p.o2_l_min:g} -> {row.o2_l_min:.2f} L/min, N2O {p.n2o_l_min:g} -> "
                    f"{row.n2o_l_min:.2f} L/min)",
                    "caution",
                )
            )
        if agent.name == "sevoflurane" and row.fgf_l_min < s.sevoflurane_min_flow_l_min:
            out.append(
                Caution(
                    f"{label}: sevoflurane at {row.fgf_l_min:.2f} L/min is under the set minimum of "
                    f"{s.sevoflurane_min_flow_l_min:g} L/min; follow local protocol and labelling",
                    "labelling",
                )
            )
        if row.fd_o2_pct / 100.0 < s.inspired_o2_floor:
            out.append(
                Caution(
                    f"{label}: fresh gas O2 {row.fd_o2_pct:.0f} % is under the inspired O2 floor of "
                    f"{floor_pct:.0f} %; inspired O2 in a circle is lower still",
                    "hazard",
                )
            )
        elif math.isfinite(row.lowest_safe_fd_o2_pct) and row.fd_o2_pct < row.lowest_safe_fd_o2_pct - 1e-9:
            out.append(
                Caution(
                    f"{label}: at {row.fgf_l_min:.2f} L/min, fresh gas O2 {row.fd_o2_pct:.0f} % is under "
                    f"the {row.lowest_safe_fd_o2_pct:.0f} % that keeps inspired O2 above {floor_pct:.0f} % "
                    f"at steady state (O2 consumption {totals['vo2_ml_min']:.0f} mL/min)"
                    if totals
                    else f"{label}: fresh gas O2 under the lowest safe share",
                    "caution",
                )
            )
        elif not math.isfinite(row.lowest_safe_fd_o2_pct):
            out.append(
                Caution(
                    f"{label}: fresh gas flow {row.fgf_l_min:.2f} L/min does not exceed the O2 "
                    f"consumption; no fresh gas mix keeps inspired O2 above {floor_pct:.0f} %",
                    "hazard",
                )
            )
        if row.mode == "target":
            if not math.isfinite(row.time_to_target_min):
                out.append(
                    Caution(
                        f"{label}: the end-tidal target of {row.target_mac:g} MAC is not reached "
                        f"within the phase at {row.fgf_l_min:.2f} L/min (vaporizer maximum "
                        f"{agent.vaporizer_max:g} %); raise the flow or allow longer",
                        "caution",
                    )
                )
            elif row.time_to_target_min > SLOW_TARGET_MIN:
                out.append(
                    Caution(
                        f"{label}: end-tidal reaches the target of {row.target_mac:g} MAC only after "
                        f"{row.time_to_target_min:.0f} min at {row.fgf_l_min:.2f} L/min",
                        "caution",
                    )
                )
    if totals is not None:
        if totals["min_inspired_o2_pct"] < floor_pct:
            t_min = totals["min_inspired_o2_time_min"]
            out.append(
                Caution(
                    f"predicted inspired O2 falls to {totals['min_inspired_o2_pct']:.0f} % (at "
                    f"{t_min:.0f} min), under the floor of {floor_pct:.0f} %: hypoxic mixture; raise the "
                    f"O2 share or the flow",
                    "hazard",
                )
            )
        if totals["o2_shortfall_l"] > 1e-6:
            out.append(
                Caution(
                    f"the circle runs out of O2 for the patient's consumption "
                    f"({totals['o2_shortfall_l']:.2f} L short): O2 inflow must at least match "
                    f"consumption",
                    "hazard",
                )
            )
    if agent.name == "sevoflurane" and timecourse is not None and len(timecourse) > 1:
        t = timecourse["time_min"].to_numpy()
        et = timecourse["end_tidal_mac"].to_numpy()
        mac_min = np.concatenate([[0.0], np.cumsum(np.diff(t) * 0.5 * (et[1:] + et[:-1]))])
        ends = np.cumsum(phases["duration_min"].to_numpy())
        starts = ends - phases["duration_min"].to_numpy()
        for i, row in enumerate(rows, start=1):
            if row.fgf_l_min >= s.sevoflurane_min_flow_long_l_min:
                continue
            late = (t > starts[i - 1]) & (t <= ends[i - 1]) & (mac_min > 60.0)
            if late.any():
                out.append(
                    Caution(
                        f"phase {i} ({row.phase}): sevoflurane at {row.fgf_l_min:.2f} L/min beyond 1 "
                        f"MAC-hour is under the set minimum of {s.sevoflurane_min_flow_long_l_min:g} "
                        f"L/min; follow local protocol and labelling",
                        "labelling",
                    )
                )
    return by_severity(out)
