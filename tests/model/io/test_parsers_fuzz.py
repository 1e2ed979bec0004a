"""Fuzzing the case-mix, scenario, record and purchase parsers: a result or an InputError.

Inputs are raw bytes, CSV-looking text, and well-formed CSV or TOML with wrong columns,
units, numbers and names. The invariant of every test: the parser returns its result or
raises ``model.base.errors.InputError``, never any other exception and never a hang.
Record files are read through duckdb (about 0.2 s a file), so the full read gets fewer
examples than the header and unit parsing in front of it, which is fuzzed in thousands.
"""

import os
from pathlib import Path

import pytest
from fuzzing import scratch  # noqa: F401  (a fixture)
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from model import load_plan
from model.base.errors import InputError
from model.io import purchases, record_files, records, scenario
from model.io.casemix import CASEMIX_COLUMNS, parse_casemix_text
from model.year.inputs import CaseMix

ROOT = Path(__file__).resolve().parents[1]
YEAR = ROOT / "demo_data" / "year"
RECORDS = ROOT / "demo_data" / "records"
DEMO_PLAN = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")

# In CI (CI=true) the examples are derandomized, so a run is repeatable; local runs explore.
FUZZ = settings(
    max_examples=1500,
    deadline=None,
    derandomize=bool(os.environ.get("CI")),
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
        HealthCheck.function_scoped_fixture,
    ],
)
STRUCTURED = settings(FUZZ, max_examples=400)
# Each example reads a file through duckdb: kept small so the file stays well under a minute.
DUCKDB = settings(FUZZ, max_examples=60)


def _only_input_error(call, *args, **kwargs):
    try:
        return call(*args, **kwargs)
    except InputError as exc:
        assert str(exc).strip()
        return None


# --- cells a spreadsheet from another system could hold -------------------------------

_cells = st.one_of(
    st.text(alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"), max_size=15),
    st.integers(-(10**20), 10**20).map(str),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.sampled_from(
        [
            "",
            " ",
            "nan",
            "NaN",
            "inf",
            "-1",
            "0",
            "1e308",
            "1e-320",
            "0,5",
            "1.5.2",
            "2 L/min",
            "500 mL/min",
            "9**9**9",
            "10**400",
            "9^9^9",
            "m**3",
            "75 min",
            "1.5 h",
            "30 %",
            "120%",
            "sevo",
            "Sevoflurane",
            "N2O",
            "xenon",
            "none",
            "2025-13",
            "2025-02",
            "2025-02-30T25:61",
            "=SUM(A1:A9)",
            "+1",
            "@x",
            '"',
            '""',
            "'",
            "\t",
            "a,b",
            "\u202e",
            "é",
            "𝟙",
            "1_000",
            "0x1F",
            "½",
        ]
    ),
)


def _csv_line(cells) -> str:
    out = []
    for cell in cells:
        if any(ch in cell for ch in ',"\n\r'):
            cell = '"' + cell.replace('"', '""') + '"'
        out.append(cell)
    return ",".join(out)


def _table(columns_pool):
    """CSV text: a header from the pool (plus strangers) and rows of random cells."""
    return st.builds(
        lambda header, rows, raw_quote: "\n".join(
            [_csv_line(header)] + [_csv_line(r) if not raw_quote else ",".join(r) for r in rows]
        ),
        st.lists(
            st.one_of(st.sampled_from(columns_pool), st.text(max_size=8)), min_size=0, max_size=len(columns_pool) + 2
        ),
        st.lists(st.lists(_cells, max_size=len(columns_pool) + 2), max_size=5),
        st.booleans(),
    )


def _mangled(text: str):
    """The demo text with one line replaced, deleted, doubled or garbled."""
    lines = text.splitlines()

    @st.composite
    def build(draw):
        out = list(lines)
        i = draw(st.integers(0, len(out) - 1))
        how = draw(st.sampled_from(["cells", "delete", "duplicate", "garble", "truncate"]))
        if how == "cells":
            n = max(1, out[i].count(",") + 1)
            out[i] = _csv_line(draw(st.lists(_cells, min_size=n - 1, max_size=n + 1)))
        elif how == "delete":
            del out[i]
        elif how == "duplicate":
            out.insert(i, out[i])
        elif how == "garble":
            pos = draw(st.integers(0, len(out[i])))
            out[i] = out[i][:pos] + draw(st.text(max_size=4)) + out[i][pos:]
        else:
            out = out[: i + 1]
            out[i] = out[i][: draw(st.integers(0, len(out[i])))]
        return "\n".join(out) + "\n"

    return build()


# --- case mix -------------------------------------------------------------------------

CASEMIX_TEXT = (YEAR / "fernhollow_casemix.csv").read_text()


def _plan_for(name, where):
    if name.startswith("plans/"):
        return DEMO_PLAN
    raise InputError(where, name, "no such plan (fuzz)")


def _casemix(text):
    result = _only_input_error(parse_casemix_text, text, "fuzz.csv", _plan_for)
    if result is not None:
        assert isinstance(result, CaseMix) and result.types
        assert all(t.cases_per_year >= 0 and t.median_min > 0 for t in result.types)
    return result


@STRUCTURED
@given(_table(list(CASEMIX_COLUMNS)))
def test_casemix_with_wrong_columns_and_cells_gives_mix_or_input_error(text):
    _casemix(text)


@STRUCTURED
@given(_mangled(CASEMIX_TEXT))
def test_demo_casemix_with_one_line_mangled_gives_mix_or_input_error(text):
    _casemix(text)


@FUZZ
@given(st.binary(max_size=2000))
def test_casemix_from_raw_bytes_gives_mix_or_input_error(data):
    _casemix(data.decode("utf-8", errors="replace"))


@FUZZ
@given(st.text(alphabet=st.sampled_from(list(',"\n\r #abcdeilnmoprstuv0123456789.-%/')), max_size=300))
def test_casemix_from_csv_like_text_gives_mix_or_input_error(text):
    _casemix(CASEMIX_TEXT.splitlines()[5] + "\n" + text)


# --- scenario files -------------------------------------------------------------------

SCENARIO_TEXT = (YEAR / "baseline_2l.toml").read_text()


@pytest.fixture(scope="module")
def demo_mix():
    from model.io.casemix import load_casemix

    return load_casemix(YEAR / "fernhollow_casemix.csv")


@STRUCTURED
@given(text=_mangled(SCENARIO_TEXT))
def test_demo_scenario_with_one_line_mangled_gives_scenario_or_input_error(text, demo_mix):
    _only_input_error(scenario.parse_scenario_text, text, "fuzz.toml", YEAR, demo_mix)


@FUZZ
@given(data=st.binary(max_size=1500))
def test_scenario_from_raw_bytes_gives_scenario_or_input_error(data, demo_mix):
    _only_input_error(scenario.parse_scenario_text, data.decode("utf-8", errors="replace"), "fuzz.toml", YEAR, demo_mix)


# --- case records ---------------------------------------------------------------------

RECORD_COLUMNS = sorted({alias for _, aliases in record_files.FIELDS.values() for alias in aliases})
RECORD_TEXT = "\n".join((RECORDS / "fernhollow_birch_cases.csv").read_text().splitlines()[:40]) + "\n"


def _write(folder: Path, name: str, data: bytes) -> Path:
    path = folder / name
    path.write_bytes(data)
    return path


def _read_records(path):
    result = _only_input_error(records.read_records, [str(path)], threads=1)
    if result is not None:
        report = result.report
        result.con.close()
        return report
    return None


@st.composite
def _column_names(draw):
    name = draw(st.one_of(st.sampled_from(RECORD_COLUMNS), st.text(max_size=10)))
    unit = draw(
        st.one_of(
            st.just(""),
            st.sampled_from(
                [
                    "L/min",
                    "mL/min",
                    "%",
                    "fraction",
                    "min",
                    "s",
                    "h",
                    "kg",
                    "9**9**9",
                    "m**3",
                    "10**400",
                    "L/min/min",
                    "furlong",
                    "",
                    "pct",
                    "1",
                ]
            ),
            st.text(max_size=8),
        )
    )
    brackets = draw(st.sampled_from(["[]", "()"]))
    return f"{name} {brackets[0]}{unit}{brackets[1]}" if unit else name


@settings(FUZZ, max_examples=800)
@given(
    names=st.lists(_column_names(), max_size=12),
    units_line=st.lists(
        st.tuples(st.sampled_from(RECORD_COLUMNS + ["x"]), st.sampled_from(["mL/min", "%", "9**9**9", "h", "", "zz"])),
        max_size=4,
    ),
)
def test_record_header_gives_columns_or_input_error(names, units_line):
    declared = {k: v for k, v in units_line}
    result = _only_input_error(record_files.map_columns, names, declared, "fuzz.csv")
    if result is not None:
        columns, ignored = result
        assert all(c.factor > 0 for c in columns.values() if c.factor)


@FUZZ
@given(line=st.text(max_size=80))
def test_record_units_line_gives_units_or_input_error(line):
    result = _only_input_error(record_files._parse_units_line, "# units: " + line, "fuzz.csv, line 1")
    assert result is None or isinstance(result, dict)


@settings(FUZZ, max_examples=500)
@given(data=st.binary(max_size=1500))
def test_record_file_header_from_raw_bytes_gives_columns_or_input_error(data, scratch):
    path = _write(scratch, "inspect.csv", data)
    _only_input_error(record_files.inspect_file, path)


@DUCKDB
@given(text=_mangled(RECORD_TEXT))
def test_demo_records_with_one_line_mangled_give_report_or_input_error(text, scratch):
    _read_records(_write(scratch, "mangled.csv", text.encode()))


@DUCKDB
@given(text=_table(RECORD_COLUMNS[:12] + ["case_id", "elapsed", "agent", "o2", "air", "dial"]))
def test_record_table_with_wrong_cells_gives_report_or_input_error(text, scratch):
    _read_records(_write(scratch, "table.csv", text.encode()))


@DUCKDB
@given(data=st.binary(min_size=1, max_size=1500))
def test_record_file_from_raw_bytes_gives_report_or_input_error(data, scratch):
    header = b"case_id,elapsed,agent,o2,air,dial\n"
    _read_records(_write(scratch, "raw.csv", header + data))


@settings(DUCKDB, max_examples=30)
@given(data=st.binary(min_size=1, max_size=600))
def test_damaged_parquet_records_give_report_or_input_error(data, scratch):
    good = (RECORDS / "fernhollow_2025.parquet").read_bytes()
    assume(len(good) > 64)
    cut = len(data) % (len(good) - 8) + 4
    damaged = good[:cut] + data + good[cut + len(data) :]
    _read_records(_write(scratch, "damaged.parquet", damaged[: len(good)]))


# --- purchases ------------------------------------------------------------------------

PURCHASE_TEXT = (RECORDS / "fernhollow_purchases_2025.csv").read_text()


def _read_purchases(path):
    read = _only_input_error(purchases.load_purchases, path)
    if read is None:
        return None
    result = read.table
    assert set(result.columns) >= {"month", "item", "amount", "unit"}
    assert (result["amount"] >= 0).all()
    if purchases.SITE_COLUMN in result.columns:  # the optional site: a short printable name or blank
        sites = result[purchases.SITE_COLUMN]
        assert all(
            isinstance(v, str) and v == v.strip() and v.isprintable() and len(v) <= purchases.MAX_SITE_CHARS
            for v in sites
        )
    # Each line set aside is named by its file and line.
    assert all(m.startswith(f"{path}, ") and m.strip() for m in read.messages)
    return result


@STRUCTURED
@given(text=_table([*purchases.PURCHASE_COLUMNS, purchases.SITE_COLUMN]))
def test_purchase_table_with_wrong_cells_gives_rows_or_input_error(text, scratch):
    _read_purchases(_write(scratch, "table.csv", text.encode()))


@STRUCTURED
@given(text=_mangled(PURCHASE_TEXT))
def test_demo_purchases_with_one_line_mangled_give_rows_or_input_error(text, scratch):
    _read_purchases(_write(scratch, "mangled.csv", text.encode()))


@settings(FUZZ, max_examples=800)
@given(data=st.binary(max_size=1500))
def test_purchases_from_raw_bytes_give_rows_or_input_error(data, scratch):
    _read_purchases(_write(scratch, "raw.csv", b"month,item,quantity,unit,size\n" + data))


@settings(FUZZ, max_examples=300)
@given(
    unit=st.sampled_from(
        [
            "bottle",
            "mL",
            "L",
            "m**3",
            "kg",
            "cylinder",
            "9**9**9",
            "9^9^9",
            "10**400",
            "L**9**9",
            "((9**9)**9)**9 L",
            "furlong",
            "",
        ]
    ),
    size=st.sampled_from(["", "250 mL", "9000 L", "9**9**9 L", "10**400 L", "-1 L", "x"]),
    item=st.sampled_from(["sevoflurane", "nitrous_oxide", "oxygen", "air", "xenon"]),
    quantity=st.sampled_from(["1", "0", "-1", "1e308", "nan", "inf", "x"]),
)
def test_purchase_units_and_sizes_give_rows_or_input_error(unit, size, item, quantity, scratch):
    text = f"month,item,quantity,unit,size\n2025-01,{item},{quantity},{unit},{size}\n"
    _read_purchases(_write(scratch, "units.csv", text.encode()))


# --- crashes the fuzzing found, kept as plain checks ----------------------------------


def test_found_record_header_with_a_lone_carriage_return_is_an_input_error(scratch):
    assert _only_input_error(record_files.inspect_file, _write(scratch, "cr.csv", b"\r\x01")) is None


def test_found_record_line_with_nul_before_carriage_return_is_set_aside_alone(scratch):
    data = b"case_id,elapsed,agent,o2,air,dial\n\x00\rA,0,sevo,1,1,2\nA,1,sevo,1,1,2\n"
    report = _read_records(_write(scratch, "nul.csv", data))
    assert report.issues[["row", "kind"]].values.tolist() == [[2, "unreadable"]]


def test_found_power_in_a_record_unit_is_refused_without_evaluating_it(scratch):
    data = b"case_id,elapsed,agent,o2 [L/min**9**9**9],air,dial\nA,0,sevo,1,1,2\n"
    assert _only_input_error(record_files.inspect_file, _write(scratch, "pow.csv", data)) is None


def test_found_power_in_a_purchase_unit_is_refused_without_evaluating_it(scratch):
    for name, line, column in (
        ("pow.csv", b"2025-01,oxygen,2,cylinder,9**9**9 L", "size"),
        ("pow2.csv", b"2025-01,oxygen,2,L**9**9,", "unit"),
    ):
        read = purchases.load_purchases(_write(scratch, name, b"month,item,quantity,unit,size\n" + line + b"\n"))
        assert read.table.empty
        assert len(read.messages) == 1 and f"line 2: {column}" in read.messages[0]
