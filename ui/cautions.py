"""Warnings on the pages, most severe first, repeats grouped.

Hazards (hypoxic mixture, O2 running out) in their own style next to the headline figures,
then cautions, then labelling notes.

The severity of each warning comes from the model (:class:`model.cautions.Caution`).
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from model.cautions import group_cautions, is_unsafe

from .common import md

#: Shown with the figures of a plan, a year or a comparison whose practice is unsafe as written.
UNSAFE = "UNSAFE PRACTICE"
#: Hazards listed in the red box; the rest follow in an expander under it.
BANNER_LINES = 3
#: A list of cautions longer than this starts folded.
OPEN_UP_TO = 4
_HEADINGS = {"hazard": "Unsafe as planned", "caution": "Check before use", "labelling": "Labelling and local protocol"}


def grouped(warnings) -> list[tuple[str, str, list[str]]]:
    """(severity, text, subjects) per group of identical cautions, most severe first.

    Cautions that differ only in their figures or practice variant are one group
    (:func:`model.cautions.group_cautions`): its subjects are every case type or phase it
    applies to, its figures given as ranges.
    """
    out = []
    for g in group_cautions(warnings):
        text = g.text + (f" ({'; '.join(g.variants)})" if g.variants else "")
        out.append((g.severity, text, list(g.applies_to)))
    return out


def _line(text: str, subjects: list[str]) -> str:
    return (f"{'; '.join(subjects)}: " if subjects else "") + text


def unsafe_banner(warnings, what: str = "this plan") -> bool:
    """The hazards in one red box (next to the headline figures); returns whether there are any."""
    hazards = [(t, s) for sev, t, s in grouped(warnings) if sev == "hazard"]
    if not hazards:
        return False
    lines = "\n".join(f"- {md(_line(t, s))}" for t, s in hazards[:BANNER_LINES])
    more = len(hazards) - BANNER_LINES
    st.error(
        f"**{UNSAFE}: {md(what)} is unsafe as written.** Its figures (and any saving they show) assume "
        f"a practice the model predicts to be hypoxic or to run out of O2:\n\n{lines}"
        + (f"\n\n... and {more} more below." if more > 0 else ""),
        icon=":material/dangerous:",
    )
    if more > 0:
        with st.expander(f"All {len(hazards)} hazards", icon=":material/dangerous:"):
            for t, s in hazards:
                st.error(md(_line(t, s)))
    return True


def show_other_warnings(warnings) -> None:
    """Cautions, then labelling notes (hazards are in :func:`unsafe_banner`), repeats grouped."""
    rest = [(sev, t, s) for sev, t, s in grouped(warnings) if sev != "hazard"]
    for severity in ("caution", "labelling"):
        items = [(t, s) for sev, t, s in rest if sev == severity]
        if not items:
            continue
        with st.expander(
            f"{_HEADINGS[severity]} ({len(items)})",
            expanded=severity == "caution" and len(items) <= OPEN_UP_TO,
            icon=":material/warning:" if severity == "caution" else ":material/menu_book:",
        ):
            icon = ":material/warning:" if severity == "caution" else ":material/menu_book:"
            for t, s in items:
                st.warning(md(_line(t, s)), icon=icon)


def warnings_table(warnings) -> pd.DataFrame:
    """The warnings as a table for downloads: severity, text, applies to."""
    rows = [{"severity": sev, "warning": t, "applies to": "; ".join(s)} for sev, t, s in grouped(warnings)]
    return pd.DataFrame(rows, columns=["severity", "warning", "applies to"])


def caution_lines(warnings) -> list[str]:
    """The warnings for an HTML report, most severe first, each with its severity."""
    return [f"{sev.upper()}: {_line(t, s)}" for sev, t, s in grouped(warnings)]


def safety_text(warnings) -> str:
    """One line for an export's inputs: unsafe (and why, in short) or no hazard predicted."""
    if not is_unsafe(warnings):
        return "no hypoxic mixture or O2 shortfall predicted"
    n = sum(1 for sev, _, _ in grouped(warnings) if sev == "hazard")
    return f"{UNSAFE}: {n} hazard(s) predicted (hypoxic mixture or O2 running out); see the warnings"
