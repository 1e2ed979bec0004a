"""What made an export: the one provenance block every CSV, workbook and HTML file carries.

Every export of a case, a comparison, a sweep, a year, an audit and an emissions report
opens with the same block, built by :func:`provenance` and written by
:mod:`model.present.exports`: the safety state and the lowest predicted inspired O2 first,
then the program and its version, the time the file was made, each input file as the user
named it with its row count and content hash (SHA-256), the prices and the GWP source in
use, and the settings. A file that leaves its program can then be traced to what made it.
"""

from __future__ import annotations

import hashlib
import importlib.metadata
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from datetime import UTC, datetime

import pandas as pd

#: The program's name as every export gives it.
PROGRAM = "Fresh Gas Ledger"
#: Heading of the block (the first sheet of a workbook, a section of the HTML file).
HEADING = "About this file"
#: The safety rows' names, the first two rows of every block.
SAFETY_ROW = "safety"
LOWEST_O2_ROW = "lowest predicted inspired O2"


def program_version() -> str:
    """The installed version of fresh-gas-ledger (its package metadata)."""
    try:
        return importlib.metadata.version("fresh-gas-ledger")
    except importlib.metadata.PackageNotFoundError:
        return "unknown (run from a source folder that is not installed)"


def content_hash(data: bytes | str) -> str:
    """SHA-256 of a file's content, as 64 hex digits (text is hashed as UTF-8)."""
    if isinstance(data, str):
        data = data.encode("utf-8")
    return hashlib.sha256(data).hexdigest()


@dataclass(frozen=True)
class InputFile:
    """One input of an export, as the user named it.

    Parameters
    ----------
    role : str
        What the file is to this export ("case records", "purchases", "plan", ...).
    name : str
        The file as the user knows it (an upload's name, a demo file's name, a path as typed,
        or a saved item with its version).
    sha256 : str
        SHA-256 of its content (:func:`content_hash`).
    rows : int, optional
        How many rows (or, with ``rows_unit``, phases or case types) it holds.
    rows_unit : str
        What ``rows`` counts ("rows", "phases", "case types").
    """

    role: str
    name: str
    sha256: str
    rows: int | None = None
    rows_unit: str = "rows"

    def text(self) -> str:
        """The file in one line: its name, its rows and its content hash."""
        count = "" if self.rows is None else f"{int(self.rows):,} {self.rows_unit}; "
        return f"{self.name} ({count}SHA-256 {self.sha256})"


def input_file(role: str, name: str, content, rows: int | None = None, rows_unit: str = "rows") -> InputFile:
    """An :class:`InputFile` from its content.

    ``content`` is the file's bytes or text, or an object with ``read_bytes()`` (a
    :class:`model.base.files.Source`, a ``pathlib.Path``).
    """
    data = content.read_bytes() if hasattr(content, "read_bytes") else content
    return InputFile(role, str(name), content_hash(data), rows, rows_unit)


def time_text(when: datetime) -> str:
    """A time for people: "4 Dec 2026, 21:30 UTC"."""
    when = when.astimezone(UTC) if when.tzinfo else when.replace(tzinfo=UTC)
    return f"{when.day} {when:%b %Y, %H:%M} UTC"


@dataclass(frozen=True)
class Provenance:
    """The provenance block of one export (built by :func:`provenance`)."""

    what: str
    safety: str
    lowest_inspired_o2_pct: float | None
    files: tuple[InputFile, ...]
    prices: str
    gwp_source: str
    settings: tuple[tuple[str, str], ...]
    made_at: datetime
    program: str = field(default_factory=lambda: f"{PROGRAM} {program_version()}")

    def rows(self) -> list[tuple[str, str]]:
        """The block as (name, value) rows, in the order every export shows them."""
        o2 = self.lowest_inspired_o2_pct
        out = [
            (SAFETY_ROW, self.safety),
            (
                LOWEST_O2_ROW,
                f"{o2:.1f} %"
                if o2 is not None and math.isfinite(o2)
                else "not predicted (no case plan is simulated for this file)",
            ),
            ("export of", self.what),
            ("program", self.program),
            ("made", time_text(self.made_at)),
        ]
        if self.files:
            out += [(f"input: {f.role}", f.text()) for f in self.files]
        else:
            out.append(("input files", "none (built-in values only)"))
        out += [("prices in use", self.prices), ("GWP source", self.gwp_source)]
        out += list(self.settings)
        return out

    def frame(self) -> pd.DataFrame:
        """The block as a two-column table (``about``, ``value``), every value as text."""
        rows = self.rows()
        return pd.DataFrame({"about": [r[0] for r in rows], "value": [r[1] for r in rows]})


def safety_state(unsafe: bool, hazards: Iterable[str] = ()) -> str:
    """The safety row: "UNSAFE PRACTICE: <the hazards>" or that no hazard is predicted."""
    hazards = list(dict.fromkeys(str(h) for h in hazards))
    if unsafe:
        if not hazards:
            return "UNSAFE PRACTICE: a hazard is predicted (hypoxic mixture or O2 running out)"
        more = f"; and {len(hazards) - 1} more hazard(s), listed with the warnings" if len(hazards) > 1 else ""
        return f"UNSAFE PRACTICE: {hazards[0]}{more}"
    return "no hazard predicted (estimates; local protocols decide)"


def provenance(
    what: str,
    *,
    unsafe: bool | None,
    lowest_inspired_o2_pct: float | None = None,
    hazards: Iterable[str] = (),
    files: Iterable[InputFile] = (),
    prices: str,
    gwp_source: str,
    settings: Mapping[str, object] | None = None,
    made_at: datetime | None = None,
    not_assessed_because: str = "case records say what was delivered; no inspired O2 is predicted",
) -> Provenance:
    """The provenance block of an export: the one function every export's block comes from.

    Parameters
    ----------
    what : str
        What the file is ("Case plan: Adult sevoflurane", "Record audit", ...).
    unsafe : bool or None
        Whether a hazard is predicted (a hypoxic mixture, O2 running out); None where
        nothing is predicted (case records: what was delivered, not a plan).
    lowest_inspired_o2_pct : float, optional
        The lowest predicted inspired O2 of the export's plans or case types. [%]
    hazards : iterable of str
        The hazards' texts, named in the safety row of an unsafe export.
    files : iterable of InputFile
        The inputs, as the user named them (:func:`input_file`).
    prices, gwp_source : str
        The prices in use with their origin, and the GWP source, in words.
    settings : mapping, optional
        Other settings that made the figures (name -> value, shown as text).
    made_at : datetime, optional
        When the file is made (default now, UTC).
    not_assessed_because : str
        Why no safety state is given, where ``unsafe`` is None.
    """
    if unsafe is None:
        state = f"not assessed: {not_assessed_because}"
    else:
        state = safety_state(unsafe, hazards)
    return Provenance(
        what=str(what),
        safety=state,
        lowest_inspired_o2_pct=None if lowest_inspired_o2_pct is None else float(lowest_inspired_o2_pct),
        files=tuple(files),
        prices=str(prices),
        gwp_source=str(gwp_source),
        settings=tuple((str(k), _text(v)) for k, v in (settings or {}).items()),
        made_at=made_at or datetime.now(UTC),
    )


def _text(value) -> str:
    if value is None:
        return "none"
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)
