"""Personal feedback without shaming: one anaesthetist's months beside the department's spread.

Identifiers never leave this module in clear: each is replaced by a keyed hash (HMAC-SHA256,
RFC 2104, with Python's ``hmac``) whose key the department holds and passes in; the key is
never stored or returned. A person with fewer cases than the minimum is not shown, and
months are compared only with people who reach the minimum in that month.
"""

from __future__ import annotations

import hashlib
import hmac
from dataclasses import dataclass

import numpy as np
import pandas as pd

from model.base.errors import InputError
from model.trends.measures import monthly_measures

#: Fewest cases of a person (over the records, and in a month for that month's comparison)
#: before anything of theirs is shown. Common practice, no source (small numbers identify
#: people and swing by chance).
MIN_CASES = 20
#: Shortest key accepted. [characters] Common practice, no source.
MIN_KEY_CHARS = 16
#: Hex characters of the hash kept in a pseudonym (48 bits).
PSEUDONYM_HEX = 12


def keyed_hash(text: str, key: str | bytes) -> str:
    """HMAC-SHA256 of ``text`` (UTF-8) under ``key``, as hex.

    References
    ----------
    Krawczyk H, Bellare M, Canetti R. HMAC: Keyed-Hashing for Message Authentication.
    RFC 2104, 1997; SHA-256 test vectors in RFC 4231.
    """
    k = key.encode("utf-8") if isinstance(key, str) else bytes(key)
    return hmac.new(k, str(text).encode("utf-8"), hashlib.sha256).hexdigest()


def _checked_key(key) -> str | bytes:
    if key is None or len(key) < MIN_KEY_CHARS:
        raise InputError(
            "pseudonym key",
            "missing" if not key else f"{len(key)} characters",
            f"the department's key, at least {MIN_KEY_CHARS} characters, kept apart from the records",
        )
    return key


def pseudonymise(ids, key) -> np.ndarray:
    """Pseudonyms "P-<12 hex>" of identifiers (trimmed, case ignored) under the department's key.

    Raises
    ------
    InputError
        When the key is missing or shorter than ``MIN_KEY_CHARS``.
    """
    k = _checked_key(key)
    s = pd.Series(ids, dtype=object).fillna("").astype(str).str.strip().str.casefold()
    uniq = {v: "P-" + keyed_hash(v, k)[:PSEUDONYM_HEX] for v in pd.unique(s)}
    return s.map(uniq).to_numpy(dtype=object)


def _per_person(cases: pd.DataFrame, key) -> pd.DataFrame:
    if "anaesthetist" not in cases.columns:
        raise InputError("records", "anaesthetist", "an anaesthetist column is needed for personal feedback")
    c = cases.drop(columns=["theatre"]).assign(theatre=pseudonymise(cases["anaesthetist"], key))
    c = c.drop(columns=["anaesthetist"])
    return monthly_measures(c, "theatre").rename(columns={"group": "person"})


@dataclass(frozen=True)
class Feedback:
    """One person's months beside the department's spread (only their own pseudonym)."""

    person: str
    measure: str
    shown: bool
    table: pd.DataFrame
    note: str

    def to_dict(self) -> dict:
        """Machine-readable form (the pseudonym only)."""
        from model.base.jsonable import to_json_value

        return to_json_value(
            {
                "person": self.person,
                "measure": self.measure,
                "shown": self.shown,
                "note": self.note,
                "months": self.table.to_dict("records"),
            }
        )


def personal_feedback(
    cases: pd.DataFrame, person: str, key, measure: str = "co2e_kg_per_case", min_cases: int = MIN_CASES
) -> Feedback:
    """A person's monthly measure beside the median and quartiles of everyone who reached the minimum.

    Parameters
    ----------
    cases : DataFrame
        The audit's case table with an ``anaesthetist`` column (identifiers in clear).
    person : str
        The person's identifier in clear, or their pseudonym ("P-...").
    key : str or bytes
        The department's key (never stored).
    measure : str
        A column of :func:`model.trends.monthly_measures`.
    min_cases : int
        Fewest cases for the person to be shown at all, and for a person-month to count.

    Returns
    -------
    Feedback
        ``table``: ``month``, ``cases`` (the person's), ``value`` (theirs; NaN under the
        minimum that month), ``department_q1``, ``department_median``, ``department_q3``,
        ``people`` (how many people reached the minimum that month). Empty with
        ``shown=False`` when the person has fewer than ``min_cases`` cases.
    """
    per = _per_person(cases, key)
    if measure not in per.columns:
        raise InputError("measure", measure, "a monthly measure, e.g. co2e_kg_per_case")
    me = person if str(person).startswith("P-") else str(pseudonymise([person], key)[0])
    mine = per[per["person"] == me]
    if int(mine["cases"].sum()) < min_cases:
        return Feedback(me, measure, False, pd.DataFrame(), f"fewer than {min_cases} cases: nothing is shown")
    counted = per[per["cases"] >= min_cases]
    spread = counted.groupby("month")[measure].describe()[["25%", "50%", "75%", "count"]]
    spread.columns = ["department_q1", "department_median", "department_q3", "people"]
    t = mine[["month", "cases", measure]].rename(columns={measure: "value"}).set_index("month")
    t.loc[t["cases"] < min_cases, "value"] = np.nan
    t = t.join(spread, how="left").reset_index()
    t["people"] = t["people"].fillna(0).astype(np.int64)
    note = (
        f"months with fewer than {min_cases} of your cases are left blank; "
        "others are compared with everyone who reached it"
    )
    return Feedback(me, measure, True, t, note)


def people_list(cases: pd.DataFrame, key, min_cases: int = MIN_CASES) -> pd.DataFrame:
    """Pseudonyms and case counts of the people who reach the minimum (for editors only; no names)."""
    per = _per_person(cases, key)
    total = per.groupby("person", as_index=False)["cases"].sum()
    return total[total["cases"] >= min_cases].sort_values("person").reset_index(drop=True)


def attach_staff(cases: pd.DataFrame, staff: pd.DataFrame, where: str = "staff file") -> tuple[pd.DataFrame, list[str]]:
    """The audit's cases with an ``anaesthetist`` column from a table ``case_id, anaesthetist``.

    Returns
    -------
    tuple
        The cases that have an anaesthetist (others are left out), and messages naming what
        was set aside (never an identifier: a row is named by its line).

    Raises
    ------
    InputError
        When the table lacks either column.
    """
    missing = [c for c in ("case_id", "anaesthetist") if c not in staff.columns]
    if missing:
        raise InputError(where, ", ".join(missing), "columns case_id and anaesthetist")
    s = staff[["case_id", "anaesthetist"]].astype(str).apply(lambda col: col.str.strip())
    notes = []
    blank = (s["case_id"] == "") | (s["anaesthetist"] == "") | staff["anaesthetist"].isna()
    for i in np.flatnonzero(blank.to_numpy()):
        notes.append(f"{where}, line {i + 2}: an empty case_id or anaesthetist; row set aside")
    s = s[~blank.to_numpy()]
    twice = s["case_id"].duplicated(keep=False)
    if twice.any():
        notes.append(f"{where}: {int(s.loc[twice, 'case_id'].nunique())} case(s) named more than once; left out")
        s = s[~twice]
    c = cases.merge(s, on="case_id", how="inner", validate="many_to_one")
    left = int(cases["case_id"].nunique() - c["case_id"].nunique())
    if left:
        notes.append(f"{left} case(s) of the records have no anaesthetist in the {where}; left out of the feedback")
    return c, notes
