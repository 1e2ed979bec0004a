"""What reading case records gives: the records, the count of each problem and the set-aside rows with messages."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import pandas as pd

from model.io.record_files import DEFAULT_GAP_LIMIT_MIN, MAX_FLOW_L_MIN, MAX_TOTAL_FLOW_L_MIN, RecordFile, file_failures
from model.io.record_times import explain_bad_time
from model.reference import DEFAULT_REFERENCE, Reference

if TYPE_CHECKING:
    import duckdb

    from model.io.duckdb_connection import LazyConnection

ISSUE_KINDS = (
    "encoding",
    "field_count",
    "unreadable",
    "text_in_number",
    "bad_time",
    "missing_value",
    "unknown_agent",
    "negative_flow",
    "absurd_flow",
    "absurd_setting",
    "duplicate_time",
    "time_backwards",
)
#: Most row-level messages kept in a report (counts are always complete).
DEFAULT_MAX_MESSAGES = 2000


@dataclass
class ReadSummary:
    """Counts and row-numbered messages from reading and checking records."""

    files: list[str]
    rows_read: int = 0
    rows_valid: int = 0
    #: Rows set aside, by issue kind (every kind of ``ISSUE_KINDS`` present, zeros included).
    set_aside: dict[str, int] = field(default_factory=lambda: {k: 0 for k in ISSUE_KINDS})
    #: Row-level messages (file, row, kind, column, value, message); at most ``max_messages``.
    issues: pd.DataFrame = field(
        default_factory=lambda: pd.DataFrame(columns=["file", "row", "kind", "column", "value", "message"])
    )
    gaps: int = 0
    gap_minutes: float = 0.0
    #: One row per gap (file, row, case_id, from_min, to_min, minutes, message); capped.
    gap_list: pd.DataFrame = field(
        default_factory=lambda: pd.DataFrame(columns=["file", "row", "case_id", "minutes", "message"])
    )
    notes: list[str] = field(default_factory=list)
    gap_limit_min: float = DEFAULT_GAP_LIMIT_MIN
    #: Rows of each file, in the order of ``files`` (Parquet: from its footer; CSV: lines
    #: read, set-aside ones included).
    file_rows: list[int] = field(default_factory=list)

    @property
    def rows_set_aside(self) -> int:
        """Rows set aside, of every kind."""
        return int(sum(self.set_aside.values()))

    def summary(self) -> dict:
        """Plain-dict form with stable keys (for JSON)."""
        return {
            "files": list(self.files),
            "file_rows": [int(n) for n in self.file_rows],
            "rows_read": int(self.rows_read),
            "rows_valid": int(self.rows_valid),
            "rows_set_aside": self.rows_set_aside,
            "set_aside_by_kind": {k: int(v) for k, v in self.set_aside.items()},
            "gaps": int(self.gaps),
            "gap_minutes_not_counted": float(self.gap_minutes),
            "gap_limit_min": float(self.gap_limit_min),
            "messages_shown": int(len(self.issues)),
            "notes": list(self.notes),
        }


# --------------------------------------------------------------------------------------
# Reading


@dataclass
class Records:
    """Checked records held as a duckdb view, with the report of the reading.

    ``con`` is the duckdb connection; the view ``checked`` has one row per sample read
    (``problem`` NULL for valid rows) and ``valid`` the valid samples with ``dt_min``
    (minutes the sample holds, 0 for the last sample of a case and over a gap), ``gap``,
    ``fgf``, ``dose_pct`` and ``band``.
    """

    con: duckdb.DuckDBPyConnection | LazyConnection
    files: list[RecordFile]
    report: ReadSummary
    gap_limit_min: float
    reference: Reference = DEFAULT_REFERENCE
    _tmpdir: str | None = None
    #: The private folder of Parquet bytes written for duckdb (see ``read_records``), if any.
    _written_dir: str | None = None
    #: The ``prepared`` query of each file on its own (same columns and checks), for
    #: engines that work file by file.
    file_sql: list = field(default_factory=list)
    #: Rows of each file (Parquet: from its footer; CSV: lines read, set-aside ones included).
    file_rows: list = field(default_factory=list)
    #: CSV files read as one table (one layout): (their indices, the ``prepared`` query of
    #: them all), so engines working file by file may take them at once.
    csv_groups: list = field(default_factory=list)
    #: The query of the ``raw`` view (every file's rows), for views made over it again.
    raw_sql: str = ""
    #: Agent text as read (trimmed) -> (reference agent name or "none", vaporizer maximum [%]).
    agent_map: dict = field(default_factory=dict)
    #: The time zone of times written without a UTC offset (None: read as written).
    time_zone: str | None = None
    #: Whether colliding case ids were kept apart (:mod:`model.audit.identity`; None: not looked at).
    _cases_kept_apart: bool | None = field(default=None, init=False, repr=False)
    #: Rows the reader rejected before the checks (set by the reader).
    _rejected: int = field(default=0, init=False, repr=False)
    #: Most row-level messages kept in the report (set by the reader).
    _max_messages: int = field(default=DEFAULT_MAX_MESSAGES, init=False, repr=False)

    def guard(self):
        """A block in which any failure reading the files becomes one InputError naming the file.

        Queries of the views read the files lazily (a damaged Parquet page fails only when
        it is decoded): run them inside ``with records.guard():``.
        """
        return file_failures(self.files)

    def close(self) -> None:
        """Close the duckdb connection and remove its spill folder."""
        import shutil

        try:
            self.con.close()
        finally:
            for folder in (self._tmpdir, self._written_dir):
                if folder:
                    shutil.rmtree(folder, ignore_errors=True)


def finish_report(
    recs: Records, counts: dict[str, int], rows_valid: int, gaps: int, gap_minutes: float, time_rows=None, gap_rows=None
) -> ReadSummary:
    """Fill the report's counts and row-numbered messages (at most ``max_messages``).

    With ``time_rows`` and ``gap_rows`` given (the in-memory engine found them), only the
    row-level problems are fetched (from the ``prepared`` view, no window); without them,
    everything comes from the ``checked`` and ``valid`` views.
    """
    rep = recs.report
    con = recs.con
    for k in ISSUE_KINDS:
        rep.set_aside[k] = 0
    for kind in rep.issues["kind"]:
        rep.set_aside[kind] += 1
    for k, v in counts.items():
        if k in rep.set_aside:
            rep.set_aside[k] += int(v)
    rep.rows_valid = int(rows_valid)
    rep.rows_read = rep.rows_valid + rep.rows_set_aside
    rep.gaps = int(gaps)
    rep.gap_minutes = float(gap_minutes)
    limit = max(recs._max_messages - len(rep.issues), 0)
    files = dict(enumerate(recs.files))
    cols = """_fileno, _row, {problem}, case_id, agent_raw, t_min, txt_col, txt_val, bad_time, o2, air, n2o,
        dial, end_tidal, o2_share, n2o_share, fgf_in, parts_mode, {prev}"""
    new = []
    if time_rows is None:
        if limit and sum(counts.values()):
            rows = con.sql(
                f"SELECT {cols.format(problem='problem', prev='prev_max')} FROM checked "
                f"WHERE problem IS NOT NULL ORDER BY _fileno, _row LIMIT {limit}"
            ).fetchall()
            new = [_issue_row(files[r[0]], r, recs.reference, recs.time_zone) for r in rows]
    else:
        if limit and sum(v for k, v in counts.items() if k not in ("duplicate_time", "time_backwards")):
            rows = con.sql(
                f"SELECT {cols.format(problem='problem_a', prev='NULL')} FROM prepared "
                f"WHERE problem_a IS NOT NULL ORDER BY _fileno, _row LIMIT {limit}"
            ).fetchall()
            new = [_issue_row(files[r[0]], r, recs.reference, recs.time_zone) for r in rows]
        for f, row, kind, case_id, t_min, prev_max in time_rows[:limit]:
            r = (f, row, kind, case_id, None, t_min) + (None,) * 12 + (prev_max,)
            new.append(_issue_row(files[f], r, recs.reference, recs.time_zone))
    if new:
        rep.issues = pd.concat([rep.issues, pd.DataFrame(new, columns=rep.issues.columns)], ignore_index=True)
    rep.issues = rep.issues.sort_values(["file", "row"], kind="stable").head(recs._max_messages)
    rep.issues = rep.issues.reset_index(drop=True)
    if gaps and gap_rows is None:
        gap_rows = con.sql(f"""SELECT _fileno, _row, case_id, t_min, dt_raw FROM valid WHERE gap
            ORDER BY _fileno, _row LIMIT {max(recs._max_messages, 1)}""").fetchall()
    if gap_rows:
        rep.gap_list = pd.DataFrame(
            [
                (
                    files[f].name,
                    int(r),
                    c,
                    float(d),
                    f"{files[f].name}: {files[f].row_label} {int(r)}: case {c}: {d:g} min to the next sample "
                    f"(limit {recs.gap_limit_min:g} min); the interval is not counted",
                )
                for f, r, c, t, d in gap_rows
            ],
            columns=["file", "row", "case_id", "minutes", "message"],
        )
    return rep


def _fmt_num(x) -> str:
    return "empty" if x is None else f"{x:g}"


def _issue_row(rf: RecordFile, r, reference: Reference, time_zone: str | None = None):
    (
        _,
        row,
        kind,
        case_id,
        agent_raw,
        t_min,
        txt_col,
        txt_val,
        bad_time,
        o2,
        air,
        n2o,
        dial,
        et,
        o2s,
        n2os,
        fgf,
        parts,
        prev_max,
    ) = r
    col, val = None, None
    if kind == "text_in_number":
        col, val = rf.columns[txt_col].source, txt_val
        msg = f"column '{col}' holds '{val}', expected a number"
    elif kind == "bad_time":
        col = rf.columns["time" if "time" in rf.columns else "date"].source
        val = bad_time
        why = explain_bad_time(val, time_zone) if "time" in rf.columns else "expected a date such as 2025-03-04"
        msg = f"column '{col}' holds '{val}', {why}"
    elif kind == "missing_value":
        empty = []
        if case_id is None:
            empty.append(rf.columns["case_id"].source)
        if t_min is None:
            empty.append(rf.columns["time" if "time" in rf.columns else "elapsed"].source)
        if agent_raw is None:
            empty.append(rf.columns["agent"].source)
        if parts and o2 is None and air is None and n2o is None or (not parts and (fgf is None or o2s is None)):
            empty.append("every flow" if parts else "fgf or o2_share")
        if not empty:
            empty.append("dial and end-tidal")
        col = empty[0]
        msg = "empty " + ", ".join(empty) + "; the row is set aside"
    elif kind == "unknown_agent":
        col, val = rf.columns["agent"].source, agent_raw
        allowed = ", ".join(k for k, v in reference.agents.items() if v.kind == "volatile")
        msg = f"agent '{agent_raw}' is unknown; allowed are {allowed}, none"
    elif kind == "negative_flow":
        col = "flow"
        shown = (("o2", o2), ("air", air), ("n2o", n2o)) if parts else (("fgf", fgf),)
        val = ", ".join(f"{n} {_fmt_num(v)}" for n, v in shown if v is not None and v < 0)
        msg = f"negative flow ({val} L/min)"
    elif kind == "absurd_flow":
        col = "flow"
        total = sum(v for v in (o2, air, n2o) if v is not None)
        val = f"O2 {_fmt_num(o2)}, air {_fmt_num(air)}, N2O {_fmt_num(n2o)} L/min"
        msg = (
            f"flows {val} (total {total:g}) exceed {MAX_FLOW_L_MIN:g} L/min per gas or "
            f"{MAX_TOTAL_FLOW_L_MIN:g} L/min in total"
        )
    elif kind == "absurd_setting":
        col = "setting"
        val = f"dial {_fmt_num(dial)} %, end-tidal {_fmt_num(et)} %"
        if not parts:
            val += f", O2 share {_fmt_num(o2s)} %, N2O share {_fmt_num(n2os)} %"
        msg = f"{val}: outside what the agent's vaporizer or the gas mix allows"
    elif kind == "duplicate_time":
        col = "time"
        val = _fmt_num(t_min)
        msg = f"case {case_id}: the same time as an earlier sample; the later one is set aside"
    else:  # time_backwards
        col = "time"
        val = _fmt_num(t_min)
        msg = (
            f"case {case_id}: time earlier than an earlier sample of the case "
            f"(by {prev_max - t_min:g} min); the rows of a case must be in time order"
        )
    return (
        rf.name,
        int(row),
        kind,
        col,
        None if val is None else str(val),
        f"{rf.name}: {rf.row_label} {int(row)}: {msg}",
    )
