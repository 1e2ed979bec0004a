"""A department's case mix: case types with yearly counts, durations, agents and flow practice.

A case-mix file is CSV in the project's own format (documented in docs/formats.md, "Case-mix and
scenario files"): one row per case type, a header row naming the columns, lines starting
with ``#`` ignored. Each row names a case plan file (the flow practice of that type, in the
plan format of :mod:`model.io.plans`) relative to the case-mix file.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable, Mapping
from dataclasses import replace
from pathlib import Path

import pandas as pd

from model.base.cells import csv_text, unneutralise
from model.base.errors import InputError
from model.base.files import path_kind, read_user_text, shown_path
from model.base.units import check_range, to_base
from model.io.plans import load_plan
from model.plan import CasePlan
from model.reference import VOLATILES
from model.year.inputs import CaseMix, CaseType

CASE_MIX_COLUMNS = (
    "case_type",
    "cases_per_year",
    "median_duration",
    "duration_spread",
    *VOLATILES,
    "n2o_share",
    "band",
    "weight",
    "age",
    "plan",
)
REQUIRED_COLUMNS = ("case_type", "cases_per_year", "median_duration", "plan")
#: Largest case-mix file read. [bytes]
MAX_CASE_MIX_BYTES = 2_000_000
#: Most case types in one mix.
MAX_CASE_TYPES = 500
#: Most cases of one type per year (a very large hospital does some tens of thousands in all).
MAX_CASES_PER_TYPE = 1_000_000
#: Tolerance on the sum of agent shares. [1]
SHARE_TOLERANCE = 0.005


def _number(
    raw: str,
    where: str,
    unit: str,
    low: float,
    high: float,
    default=None,
    low_open=False,
    shown_unit: str | None = None,
) -> float:
    if raw is None or str(raw).strip() == "":
        if default is None:
            raise InputError(where, "nothing", "this field is required")
        return default
    value = to_base(str(raw).strip(), unit, where)
    return check_range(value, where, low, high, shown_unit if shown_unit is not None else unit, low_open, typed=raw)


def _share(raw, where: str) -> float:
    if raw is None or str(raw).strip() == "":
        return 0.0
    text = str(raw).strip()
    # A plain number is a fraction; "30 %", "30 percent", "3000 ppm" are converted by pint.
    value = to_base(text, "dimensionless", where)
    return check_range(value, where, 0.0, 1.0, "", typed=text)


def _count(raw, where: str) -> int:
    if raw is None or str(raw).strip() == "":
        raise InputError(where, "nothing", "this field is required (cases per year)")
    text = str(raw).strip().replace("_", "")
    try:
        value = float(text)
    except ValueError:
        raise InputError(where, raw, "expected a whole number of cases per year") from None
    if not math.isfinite(value) or value != int(value):
        raise InputError(where, raw, "expected a whole number of cases per year")
    return int(check_range(int(value), where, 0, MAX_CASES_PER_TYPE, ""))


def case_type_from_row(row: Mapping[str, object], plan_for: Callable[[str, str], CasePlan], where: str) -> CaseType:
    """Validate one case-mix row (values as text or numbers) into a :class:`CaseType`.

    Parameters
    ----------
    row : mapping
        Column name -> value, in the case-mix file's columns.
    plan_for : callable
        ``plan_for(name, where)`` returns the case plan named in the ``plan`` column.
    where : str
        Where the row sits (file and line), for error messages.

    Raises
    ------
    InputError
        Naming the row and the field.
    """

    def get(key):
        v = row.get(key)
        if v is None or (isinstance(v, float) and math.isnan(v)):
            return None
        return v

    name = unneutralise(str(get("case_type") or "").strip()).strip()
    if not name:
        raise InputError(f"{where}, case_type", "nothing", "every case type needs a name")
    if len(name) > 120:
        raise InputError(f"{where}, case_type", name, "at most 120 characters")
    count = _count(get("cases_per_year"), f"{where}, cases_per_year")
    median = _number(get("median_duration"), f"{where}, median_duration", "min", 0.0, 24 * 60, low_open=True)
    spread = _number(
        get("duration_spread"), f"{where}, duration_spread", "dimensionless", 0.0, 2.0, default=0.0, shown_unit=""
    )
    shares = {a: _share(get(a), f"{where}, {a}") for a in VOLATILES}
    total = sum(shares.values())
    if abs(total - 1.0) > SHARE_TOLERANCE:
        raise InputError(
            f"{where}, agent shares",
            f"{total:g}",
            "the shares of " + ", ".join(VOLATILES) + " must add up to 1 (100 %)",
        )
    shares = {a: s / total for a, s in shares.items()}
    n2o = _share(get("n2o_share"), f"{where}, n2o_share")
    patient_group = unneutralise(str(get("band") or "adult").strip()).strip()[:40] or "adult"
    weight = _number(get("weight"), f"{where}, weight", "kg", 0.5, 350.0, default=70.0)
    age = _number(get("age"), f"{where}, age", "year", 0.0, 120.0, default=40.0)
    plan_name = unneutralise(str(get("plan") or "").strip()).strip()
    if not plan_name:
        raise InputError(f"{where}, plan", "nothing", "name the case plan file of this type's flow practice")
    plan = plan_for(plan_name, f"{where}, plan")
    plan = replace(plan, patient=replace(plan.patient, weight_kg=weight, age_years=age))
    ctype = CaseType(name, count, median, spread, shares, n2o, plan, plan_name, patient_group, weight, age)
    if median <= ctype.fixed_min:
        raise InputError(
            f"{where}, median_duration",
            f"{median:g} min",
            f"must be longer than the plan's fixed phases ({ctype.fixed_min:g} min)",
        )
    return ctype


def _check_names(types, source):
    seen = set()
    for t in types:
        if t.name in seen:
            raise InputError(f"{source}: case_type", t.name, "each case type name appears once")
        seen.add(t.name)


def parse_case_mix_text(
    text: str, source: str = "case mix", plan_for: Callable[[str, str], CasePlan] | None = None
) -> CaseMix:
    """Read a case mix from CSV text.

    Parameters
    ----------
    text : str
        The CSV text (header row first; ``#`` lines ignored).
    source : str
        Name of the file, for error messages.
    plan_for : callable, optional
        ``plan_for(name, where)`` returns a plan by the name in the ``plan`` column. By
        default plan names are files relative to the current folder.

    Raises
    ------
    InputError
        Naming the file, line and column.
    """
    if len(text) > MAX_CASE_MIX_BYTES:
        raise InputError(source, f"{len(text)} characters", f"a case-mix file is at most {MAX_CASE_MIX_BYTES} bytes")
    plans: dict[str, CasePlan] = {}
    loader = plan_for or (lambda name, where: _load_plan_file(Path(name), name, where))

    def cached(name, where):
        if name not in plans:
            plans[name] = loader(name, where)
        return plans[name]

    reader = csv.reader(io.StringIO(text))
    header = None
    types: list[CaseType] = []
    try:
        for row in reader:
            line = reader.line_num
            if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
                continue
            if header is None:
                header = [h.strip().lower() for h in row]
                unknown = [h for h in header if h not in CASE_MIX_COLUMNS]
                if unknown:
                    raise InputError(
                        f"{source}: line {line}", unknown[0], "allowed columns are " + ", ".join(CASE_MIX_COLUMNS)
                    )
                missing = [c for c in REQUIRED_COLUMNS if c not in header]
                if missing:
                    raise InputError(f"{source}: header", missing[0], "this column is required")
                continue
            if len(row) > len(header):
                raise InputError(
                    f"{source}: line {line}", f"{len(row)} fields", f"the header has {len(header)} columns"
                )
            if len(types) >= MAX_CASE_TYPES:
                raise InputError(source, f"more than {MAX_CASE_TYPES} case types", "split the mix")
            # A short row leaves its last columns empty (a long one was refused above).
            record = dict(zip(header, row, strict=False))
            types.append(case_type_from_row(record, cached, f"{source}: line {line}"))
    except csv.Error as exc:
        raise InputError(f"{source}: line {reader.line_num}", "the row", f"not valid CSV ({exc})") from None
    if header is None or not types:
        raise InputError(source, "no case types", "a case mix needs a header row and at least one case type")
    _check_names(types, source)
    return CaseMix(tuple(types), source, dict(plans))


def _load_plan_file(path: Path, name: str, where: str) -> CasePlan:
    if path_kind(path, where) != "file":
        raise InputError(where, name, f"no plan file at {shown_path(path)}")
    return load_plan(path)


def load_case_mix(path) -> CaseMix:
    """Read a case-mix file (CSV); plan names are files relative to its folder."""
    p = Path(path)
    text = read_user_text(p, "case-mix", MAX_CASE_MIX_BYTES, "CSV", encoding="utf-8-sig")
    folder = p.parent
    return parse_case_mix_text(text, str(p), lambda name, where: _load_plan_file(folder / name, name, where))


def case_mix_from_frame(frame: pd.DataFrame, plans: Mapping[str, CasePlan], source: str = "table") -> CaseMix:
    """A case mix from an edited table (columns as in the file), with plans given by name.

    Rows are numbered from 1 in error messages.
    """

    def plan_for(name, where):
        if name not in plans:
            raise InputError(where, name, "known plans are " + ", ".join(sorted(plans)))
        return plans[name]

    types = []
    for i, record in enumerate(frame.to_dict("records"), start=1):
        if all(v is None or (isinstance(v, float) and math.isnan(v)) or str(v).strip() == "" for v in record.values()):
            continue
        record = {str(k).strip().lower(): v for k, v in record.items()}
        types.append(case_type_from_row(record, plan_for, f"{source}: row {i}"))
    if not types:
        raise InputError(source, "no case types", "a case mix needs at least one case type")
    _check_names(types, source)
    return CaseMix(tuple(types), source, dict(plans))


def case_mix_to_frame(mix: CaseMix) -> pd.DataFrame:
    """The case mix as a table in file form (durations in min, shares as fractions)."""
    rows = []
    for t in mix.types:
        rows.append(
            {
                "case_type": t.name,
                "cases_per_year": t.cases_per_year,
                "median_duration": t.median_min,
                "duration_spread": t.spread,
                **{a: round(t.agent_shares.get(a, 0.0), 6) for a in VOLATILES},
                "n2o_share": t.n2o_share,
                "band": t.patient_group,
                "weight": t.weight_kg,
                "age": t.age_years,
                "plan": t.plan_name,
            }
        )
    return pd.DataFrame(rows, columns=list(CASE_MIX_COLUMNS))


def case_mix_to_csv(mix: CaseMix) -> str:
    """The case mix as CSV text in the case-mix file format.

    Names a spreadsheet would run as a formula (``=``, ``+``, ``-``, ``@``, tab, carriage
    return, also after leading spaces) are written with a leading apostrophe
    (:func:`model.base.cells.csv_text`); the case-mix reader takes it off again.
    """
    return csv_text(case_mix_to_frame(mix), lineterminator="\n")
