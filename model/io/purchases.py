"""Purchases of agents and gases: the purchases file, purchase-based emissions, reconciliation.

A purchases file (CSV or Parquet, documented in docs/formats.md, "Purchases") has one row per
purchase: ``month`` (YYYY-MM), ``item`` (an agent or gas), ``quantity``, ``unit``, for
bottles and cylinders ``size``, and optionally ``site`` (the site bought for; blank: not
assigned to a site). Volatile agents are counted as liquid [mL], gases as gas
volume at room conditions [L]. Purchase-based emissions count everything bought as emitted
(the usual purchase-based method); reconciliation sets purchases against recorded (or
modelled) use per item and month and reports the share nothing recorded explains. For
nitrous oxide that gap is the apparent loss (piped systems leak; cylinders are returned
part-full).
"""

from __future__ import annotations

import csv
import io
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd

from model.base.cells import csv_text, unneutralise
from model.base.errors import InputError
from model.base.files import Source, shown_path
from model.base.units import is_number_text, one_number_and_unit, registry, safe_quantity_text
from model.io.csv_lines import split_csv_lines
from model.io.sites import RESERVED_SITES
from model.reference import DEFAULT_REFERENCE, STANDARD_PRESSURE_KPA, Reference, normalise_agent_name
from model.vapour import molar_volume_l

PURCHASE_COLUMNS = ("month", "item", "quantity", "unit", "size")
#: The optional column naming the site (hospital, unit) a purchase was bought for.
SITE_COLUMN = "site"
#: Site names the emissions report keeps for itself: theatres a site file does not name
#: (``model.report.figures.UNASSIGNED``) and purchases without a site (``NO_SITE``).
#: Longest site name on a purchase line. [characters] Common practice, no source: a site is
#: a short name ("Main theatres"); a long text is a column mixed up.
MAX_SITE_CHARS = 100
GASES = ("nitrous_oxide", "oxygen", "air")
#: Largest quantity on one purchase line, in its unit (bottles, cylinders, mL, kg, ...).
#: Common practice, no source: far above what a hospital buys in a month, small enough that
#: every sum and CO2e figure stays a finite number.
MAX_QUANTITY = 1e9
#: Largest amount on one purchase line once converted. [mL of liquid or L of gas] Common
#: practice, no source (a hospital's yearly oxygen is some 1e8 L).
MAX_AMOUNT = 1e12
#: Smallest amount on one purchase line that is not zero, once converted. [mL of liquid or
#: L of gas] Common practice, no source: a microlitre is far below anything bought, and
#: large enough that a share of it (the reconciliation's unexplained share) stays finite;
#: 1e-320 bottles would be a subnormal number whose reciprocal overflows to infinity.
MIN_AMOUNT = 1e-6
_MONTH = re.compile(r"^[0-9]{4}-(0[1-9]|1[0-2])$")  # ASCII digits only


def _convert(value: float, unit: str, base: str):
    """Convert with pint; returns None when the dimension differs."""
    ureg = registry()
    try:
        if not safe_quantity_text(unit):  # pint would evaluate "9**9**9" for hours
            return None
        return float(ureg.Quantity(value, unit).to(base).magnitude)
    except Exception:
        return None


@dataclass
class PurchasesFile:
    """A purchases file as read: the usable lines, and the lines set aside with their reason."""

    table: pd.DataFrame
    #: One error per line set aside, naming the file, the line and the column.
    set_aside: list[InputError] = field(default_factory=list)

    @property
    def messages(self) -> list[str]:
        """The one-line message of each line set aside."""
        return [str(e) for e in self.set_aside]


def read_purchases(
    path: Source | str | os.PathLike,
    reference: Reference = DEFAULT_REFERENCE,
    temperature_c: float = 20.0,
    pressure_kpa: float = STANDARD_PRESSURE_KPA,
) -> pd.DataFrame:
    """Read a purchases file, refusing it at its first bad line.

    The strict form of :func:`load_purchases` (same parameters), for callers that must
    not go on with a partial file.

    Returns
    -------
    DataFrame
        ``month``, ``item``, ``amount``, ``unit`` and (when the file has the column) ``site``,
        as :attr:`PurchasesFile.table`.

    Raises
    ------
    InputError
        Naming the file, the line and the column of the first bad entry.
    """
    read = load_purchases(path, reference, temperature_c, pressure_kpa)
    if read.set_aside:
        raise read.set_aside[0]
    return read.table


def load_purchases(
    path: Source | str | os.PathLike,
    reference: Reference = DEFAULT_REFERENCE,
    temperature_c: float = 20.0,
    pressure_kpa: float = STANDARD_PRESSURE_KPA,
) -> PurchasesFile:
    """Read a purchases file, setting bad lines aside and keeping every good one.

    Parameters
    ----------
    path : Source or path
        CSV (UTF-8; a line whose first character other than a space or tab is ``#`` is
        a comment) or Parquet. A :class:`model.base.files.Source` (bytes or a path) is
        named by its name in every message; a path by the path as given.
    reference : Reference
        Agent data (bottle volumes, densities, molar masses).
    temperature_c, pressure_kpa : float
        Room conditions for gas volumes bought by mass. [°C], [kPa]

    Returns
    -------
    PurchasesFile
        ``table``: ``month``, ``item``, ``amount`` and ``unit`` ("mL" of liquid for volatile
        agents, "L" of gas at room conditions for gases), and ``site`` when the file has a
        ``site`` column ("" where the line names none; without the column the table is as
        it was before sites existed), one row per usable purchase line; ``set_aside``: one
        error per bad line (month, item, quantity, unit, size or site), naming the file, the
        line and the column.

    Raises
    ------
    InputError
        When the file as a whole cannot be read: missing, wrong format, UTF-16, no
        readable header row, or a required column missing. A line that cannot be read (an
        unclosed quote, a lone CR, the wrong number of fields, not UTF-8) is set aside.
    """
    src = Source.of(path)
    where = src.name
    found = src.kind("purchases file")
    if found != "file":
        raise InputError(
            where,
            shown_path(where),
            "that is a folder; give a purchases file (.csv or .parquet)"
            if found == "folder"
            else "the purchases file does not exist",
        )
    fmt = src.suffix.lower()
    if fmt == ".csv":
        rows, set_aside, columns = _csv_rows(src, where)
        label = "line"
    elif fmt == ".parquet":
        try:
            df = _parquet_frame(src)
        except Exception as exc:  # noqa: BLE001  (pyarrow raises many types for a damaged file)
            raise InputError(where, "the file", f"not a readable Parquet file ({type(exc).__name__})") from None
        df = df.astype(object).where(df.notna(), "").astype(str)  # an empty cell is ""
        df.columns = [str(c).strip().lower() for c in df.columns]
        _check_header(list(df.columns), where)
        _require_columns(list(df.columns), where)
        columns = list(df.columns)
        rows = [
            (i, dict(zip(df.columns, r, strict=True)))
            for i, r in enumerate(df.itertuples(index=False, name=None), start=1)
        ]
        set_aside = []
        label = "row"
    else:
        raise InputError(where, src.suffix or "no extension", "a purchases file ends in .csv or .parquet")
    with_site = SITE_COLUMN in columns
    out = []
    for number, record in rows:
        at = f"{where}, {label} {number}"
        r = SimpleNamespace(**{c: record.get(c, "") for c in (*PURCHASE_COLUMNS, SITE_COLUMN)})
        try:
            line = _purchase_line(r, at, reference, temperature_c, pressure_kpa)
            out.append((*line, _site(r.site, at)) if with_site else line)
        except InputError as err:
            set_aside.append((number, err))
    set_aside.sort(key=lambda pair: pair[0])
    table = pd.DataFrame(out, columns=["month", "item", "amount", "unit", *((SITE_COLUMN,) if with_site else ())])
    return PurchasesFile(table, [err for _, err in set_aside])


def _parquet_frame(src: Source) -> pd.DataFrame:
    """A purchases Parquet file as a table; a date or date-time column is read as its YYYY-MM."""
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.parquet as pq

    table = pq.read_table(src.path if src.path is not None else io.BytesIO(src.read_bytes()))
    for i, fld in enumerate(table.schema):
        if pa.types.is_date(fld.type) or pa.types.is_timestamp(fld.type):
            table = table.set_column(i, fld.name, pc.strftime(table.column(i), format="%Y-%m"))
    return table.to_pandas()


def _check_header(columns: list[str], where: str) -> None:
    """Refuse a header that names a column twice or leaves one unnamed, in one line naming it.

    ``columns`` are the names as compared (stripped, lower case), trailing empty ones removed.
    """
    seen: dict[str, int] = {}
    for k, name in enumerate(columns, start=1):
        if not name:
            raise InputError(f"{where}: header", f"column {k}", "a column without a name; name it or remove the column")
        if name in seen:
            raise InputError(
                f"{where}: header",
                name,
                f"the column '{name}' is named twice (columns {seen[name]} and {k}); name each column once",
            )
        seen[name] = k


def _require_columns(columns: list[str], where: str) -> None:
    missing = [c for c in ("month", "item", "quantity", "unit") if c not in columns]
    if missing:
        raise InputError(f"{where}: columns", ", ".join(columns), "missing column(s): " + ", ".join(missing))


def _csv_rows(src: Source, where: str):
    """The data lines of a purchases CSV as (line number, {column: text}); bad lines set aside.

    The file is cut into lines before its fields are read (:mod:`model.io.csv_lines`), so a
    broken line (an unclosed quote, a lone CR, the wrong number of fields, not UTF-8) is set
    aside alone and every other line keeps its number. A comment is a line whose first
    character other than a space or tab is ``#``; a ``#`` inside a line is text.
    """
    try:
        data = src.read_bytes()
    except OSError as exc:
        raise InputError(where, "the file", f"cannot be read ({exc.strerror or type(exc).__name__})") from None
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise InputError(where, "UTF-16 text", "expected UTF-8 text (CSV UTF-8)")
    lines = split_csv_lines(data)
    content = np.flatnonzero(~lines.blank & ~lines.comment)
    if not len(content):
        raise InputError(where, "the file", "not readable as CSV (no header row)")
    head = content[0]
    header = _csv_fields(lines, head)
    if isinstance(header, str):
        raise InputError(
            f"{where}, line {int(lines.number[head])}", "the header row", f"not readable as CSV ({header})"
        )
    columns = [c.strip().lower() for c in header]
    # Empty names at the end (every line ending in ",", as spreadsheets export) are no column.
    while columns and not columns[-1]:
        columns.pop()
    _check_header(columns, f"{where}, line {int(lines.number[head])}")
    _require_columns(columns, where)
    width = len(header)
    rows, set_aside = [], []
    for i in content[1:]:
        number = int(lines.number[i])
        fields = _csv_fields(lines, i)
        if not isinstance(fields, str) and len(fields) in (width, len(columns)):
            extra = [f for f in fields[len(columns) :] if f.strip()]
            if extra:
                set_aside.append(
                    (
                        number,
                        InputError(
                            f"{where}, line {number}",
                            extra[0],
                            "a value after the last named column; name its column in the header or remove it",
                        ),
                    )
                )
                continue
            fields = fields[: len(columns)]
        if isinstance(fields, str):
            set_aside.append((number, InputError(f"{where}, line {number}", lines.text(i), fields)))
        elif len(fields) != len(columns):
            set_aside.append(
                (
                    number,
                    InputError(
                        f"{where}, line {number}",
                        f"{len(fields)} fields",
                        f"expected {len(columns)} as in the header ({', '.join(columns)}); an extra comma adds a field",
                    ),
                )
            )
        else:
            rows.append((number, dict(zip(columns, fields, strict=True))))
    return rows, set_aside, columns


def _csv_fields(lines, i: int) -> list[str] | str:
    """The fields of line ``i`` (index), or what makes it unreadable."""
    problem = lines.problem(i)
    if problem:
        return problem
    try:
        text = lines.data[lines.starts[i] : lines.ends[i]].tobytes().decode("utf-8")
    except UnicodeDecodeError:
        return "not UTF-8 text; save the file as CSV UTF-8"
    try:
        return next(csv.reader([text], strict=True))
    except (csv.Error, StopIteration) as exc:
        return f"not readable as CSV ({exc})"


def _site(text, at: str) -> str:
    """The site named on a purchase line ("" when blank); InputError naming ``at`` if bad."""
    site = unneutralise(str(text if text is not None else "").strip()).strip()  # as write_purchases wrote it
    if not site:
        return ""
    if not site.isprintable():
        raise InputError(f"{at}: site", site, "expected a site name without tabs or control characters")
    if len(site) > MAX_SITE_CHARS:
        raise InputError(f"{at}: site", site, f"expected a site name of at most {MAX_SITE_CHARS} characters")
    if site.casefold() in RESERVED_SITES:
        raise InputError(
            f"{at}: site",
            site,
            "the report keeps this name for itself ('unassigned': theatres the "
            "site file does not name; 'no site': purchases without one); leave the site blank for a "
            "purchase not bought for one site",
        )
    return site


def _purchase_line(
    r, at: str, reference: Reference, temperature_c: float, pressure_kpa: float
) -> tuple[str, str, float, str]:
    """One purchase line as (month, item, amount, unit); InputError naming ``at`` if bad."""
    month = str(r.month).strip()
    if not _MONTH.match(month):
        raise InputError(f"{at}: month", month, "expected a month as YYYY-MM, e.g. 2025-03")
    key = normalise_agent_name(str(r.item))
    if key not in reference.agents:
        raise InputError(f"{at}: item", r.item, "allowed items are " + ", ".join(reference.agents))
    agent = reference.agents[key]
    text = str(r.quantity).strip()
    if not is_number_text(text):  # float() would read full-width digits and "1_0"
        raise InputError(f"{at}: quantity", r.quantity, "expected a number (digits 0-9)")
    qty = float(text)
    if not np.isfinite(qty) or qty < 0 or qty > MAX_QUANTITY:
        raise InputError(f"{at}: quantity", r.quantity, f"expected a number from 0 to {MAX_QUANTITY:g}")
    unit = str(r.unit).strip()
    size = str(r.size).strip() if r.size is not None else ""
    if agent.kind == "volatile":
        amount = _volatile_ml(qty, unit, size, agent, at)
        base = "mL"
    else:
        amount = _gas_l(qty, unit, size, agent, at, temperature_c, pressure_kpa)
        base = "L"
    if not np.isfinite(amount) or amount > MAX_AMOUNT:
        raise InputError(
            f"{at}: quantity",
            r.quantity,
            f"{amount:g} {base} on one line; at most {MAX_AMOUNT:g} {base} (check the quantity, unit and size)",
        )
    if 0 < amount < MIN_AMOUNT:
        raise InputError(
            f"{at}: quantity",
            r.quantity,
            f"{amount:g} {base} on one line; 0 or at least {MIN_AMOUNT:g} {base} (check the quantity, unit and size)",
        )
    return month, key, amount, base


def _volatile_ml(qty, unit, size, agent, at) -> float:
    if unit.lower() in ("bottle", "bottles"):
        volume = agent.bottle_volume
        if size:
            volume = _convert_text(size, "mL", f"{at}: size", "a bottle volume such as '250 mL'")
        return qty * volume
    ml = _convert(qty, unit, "mL")
    if ml is not None:
        return ml
    grams = _convert(qty, unit, "g")
    if grams is not None:
        return grams / agent.liquid_density
    raise InputError(f"{at}: unit", unit, "expected bottle, a liquid volume (mL, L) or a mass (g, kg)")


def _gas_l(qty, unit, size, agent, at, temperature_c, pressure_kpa) -> float:
    if unit.lower() in ("cylinder", "cylinders"):
        if not size:
            raise InputError(f"{at}: size", "empty", "give the gas volume of one cylinder, e.g. '9000 L'")
        return qty * _convert_text(size, "L", f"{at}: size", "a gas volume such as '9000 L'")
    litres = _convert(qty, unit, "L")
    if litres is not None:
        return litres
    grams = _convert(qty, unit, "g")
    if grams is not None and agent.molar_mass:
        # Ideal gas at room conditions (the inverse of model.emissions.gas_mass_g).
        return grams / agent.molar_mass * float(molar_volume_l(temperature_c, pressure_kpa))
    raise InputError(f"{at}: unit", unit, "expected cylinder, a gas volume (L, m**3) or a mass (kg)")


def _convert_text(text, base, where, example) -> float:
    ureg = registry()
    try:
        # pint would evaluate "9**9**9" for hours, and arithmetic such as "2 * 4500 L"
        if not safe_quantity_text(str(text)) or not one_number_and_unit(str(text)):
            raise ValueError(text)
        q = ureg.Quantity(text)
        value = float(q.to(base).magnitude) if not isinstance(q, (int, float)) else float(q)
    except Exception:
        raise InputError(where, text, f"expected {example}") from None
    if not np.isfinite(value) or value <= 0:
        raise InputError(where, text, f"expected {example}")
    return value


def write_purchases(rows, path, with_site: bool = False) -> Path:
    """Write purchase rows as a CSV purchases file.

    Rows are tuples of ``PURCHASE_COLUMNS`` (and the site last, when ``with_site``) or dicts
    with those keys; ``with_site`` writes the optional ``site`` column (blank: no site).
    """
    p = Path(path)
    columns = [*PURCHASE_COLUMNS, *((SITE_COLUMN,) if with_site else ())]
    df = pd.DataFrame(rows, columns=columns)
    with open(p, "w", encoding="utf-8", newline="") as fh:
        fh.write("# Purchases file (fresh-gas-ledger purchases 1): " + ", ".join(columns) + "\n")
        fh.write(csv_text(df, lineterminator="\n"))  # names a spreadsheet would run are neutralised
    return p
