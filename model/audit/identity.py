"""Which samples are one case: a case is its file and its case id, unless the files show one case cut in two.

Record systems number cases per export (every day's file may start again at case 1), so
the same case id in two files is two cases unless the files agree that it is one: the
same theatre (both empty counts as the same), the same day for elapsed-minute files, and
times that meet, the later part starting no later than the gap limit after the earlier
part ends (a case cut across two exports, or exported twice). Parts that agree are one
case; the others keep the case id with their file's name (``A [day-2.csv]``) and the
reading summary says so, since ids that collide are worth a look.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from model.io.record_reading import Records

#: Examples of colliding case ids named in the note.
NOTE_EXAMPLES = 3


def colliding_ids(records: Records) -> pd.DataFrame:
    """Each part (file, case id) of a case id with valid samples in more than one file.

    Columns ``_fileno``, ``case_id``, ``theatre``, ``first``, ``last`` [min] and ``day``.
    """
    with records.guard():
        return records.con.sql("""
            WITH parts AS (
              SELECT _fileno, case_id, lower(trim(coalesce(min(theatre), ''))) AS theatre,
                min(t_min) AS first, max(t_min) AS last, CAST(min(start_hint) AS DATE) AS day
              FROM prepared WHERE problem_a IS NULL GROUP BY _fileno, case_id)
            SELECT * FROM parts WHERE case_id IN (
              SELECT case_id FROM parts GROUP BY case_id HAVING count(*) > 1)
            ORDER BY case_id, first, _fileno
        """).df()


def split_parts(records: Records, parts: pd.DataFrame) -> pd.DataFrame:
    """The parts that are cases of their own: ``_fileno``, ``case_id`` and ``new_id``.

    ``parts`` is :func:`colliding_ids`. Parts chain in time order while they agree (see
    the module docstring); a case id whose parts make one chain stays one case.
    """
    gap = float(records.gap_limit_min)
    elapsed = {i for i, f in enumerate(records.files) if "time" not in f.columns}
    rows = []
    for case_id, group in parts.groupby("case_id", sort=False):
        chains: list[list] = []
        for r in group.itertuples(index=False):
            last = chains[-1][-1] if chains else None
            if (
                last is not None
                and r.theatre == last.theatre
                and r.first <= max(p.last for p in chains[-1]) + gap
                and (not ({r.fileno, last.fileno} & elapsed) or _same_day(r.day, last.day))
            ):
                chains[-1].append(r)
            else:
                chains.append([r])
        if len(chains) == 1:
            continue
        for chain in chains:
            name = Path(records.files[chain[0].fileno].name).name
            for r in chain:
                rows.append((int(r.fileno), case_id, f"{case_id} [{name}]"))
    return pd.DataFrame(rows, columns=["_fileno", "case_id", "new_id"])


def _some_files(records: Records, filenos) -> str:
    """The names of the first few files, and how many more."""
    names = list(dict.fromkeys(Path(records.files[int(i)].name).name for i in filenos))
    more = f" and {len(names) - NOTE_EXAMPLES} more files" if len(names) > NOTE_EXAMPLES else ""
    return ", ".join(names[:NOTE_EXAMPLES]) + more


def _same_day(a, b) -> bool:
    return (pd.isna(a) and pd.isna(b)) or (not pd.isna(a) and not pd.isna(b) and a == b)


def keep_cases_apart(records: Records) -> bool:
    """Give each part of a colliding case id that does not agree with the others its own case.

    Re-creates the ``raw`` view with those case ids (joined from a small table of them), so
    every view and engine above it sees them as separate cases, and adds a note to the
    reading summary. Returns whether any case id was split.
    """
    if getattr(records, "_cases_kept_apart", None) is not None:  # done for this record set already
        return bool(records._cases_kept_apart)
    records._cases_kept_apart = False
    parts = colliding_ids(records)
    if parts.empty:
        return False
    parts = parts.rename(columns={"_fileno": "fileno"})
    split = split_parts(records, parts)
    if split.empty:
        return False
    con = records.con
    con.register("gl_case_keys", split)
    con.execute(
        "CREATE OR REPLACE TEMP VIEW raw AS SELECT r.* REPLACE (coalesce(k.new_id, r.case_id) AS case_id) "
        f"FROM ({records.raw_sql}) AS r LEFT JOIN gl_case_keys AS k ON r._fileno = k._fileno AND r.case_id = k.case_id"
    )
    ids = list(dict.fromkeys(split["case_id"]))
    shown = "; ".join(
        f"'{c}' in " + _some_files(records, split.loc[split["case_id"] == c, "_fileno"]) for c in ids[:NOTE_EXAMPLES]
    )
    more = f" and {len(ids) - NOTE_EXAMPLES} more" if len(ids) > NOTE_EXAMPLES else ""
    records.report.notes.append(
        f"{len(ids)} case id(s) appear in more than one file with another theatre or at another time "
        f"({shown}{more}): each file's case is counted as a case of its own, shown with its file "
        f"(e.g. '{split['new_id'].iloc[0]}'). Check that the exports do not reuse case ids."
    )
    records._cases_kept_apart = True
    return True
