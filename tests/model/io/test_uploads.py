"""The upload guard: documented formats only, size limit from the app config, binary junk refused."""

import bz2
import gzip
import io
import lzma
import tarfile
import zipfile
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model import parse_plan_text
from model.base.errors import InputError
from model.io.uploads import (
    KINDS,
    MAX_LINE_CHARS,
    MAX_PARQUET_COLUMNS,
    MAX_TOML_BYTES,
    MAX_TOML_DEPTH,
    UPLOAD_LIMIT_ENV,
    check_upload,
    upload_limit_bytes,
    upload_limit_mb,
)

ROOT = Path(__file__).resolve().parents[3]
PLAN = (ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml").read_bytes()
CSV = b"case_id,minute,o2,air,n2o,dial\nFGH-1,0,0.5,0.5,0,2.0\nFGH-1,1,0.5,0.5,0,2.0\n"


def _refused(name, data, kind, *words):
    with pytest.raises(InputError) as info:
        check_upload(name, data, kind)
    message = str(info.value)
    assert "\n" not in message
    for word in words:
        assert word.lower() in message.lower(), message
    return message


# --- what is accepted -----------------------------------------------------------------


def test_demo_plan_passes_and_parses_from_the_returned_text():
    upload = check_upload("lap_chole_low_flow.toml", PLAN, "plan")
    assert upload.format == "toml" and upload.kind == "plan"
    assert parse_plan_text(upload.text).agent == "sevoflurane"


def test_csv_passes_with_and_without_a_byte_order_mark():
    assert check_upload("r.csv", CSV, "records").text.startswith("case_id")
    assert check_upload("r.CSV", b"\xef\xbb\xbf" + CSV, "records").text.startswith("case_id")


def test_parquet_passes_with_its_bytes():
    buffer = io.BytesIO()
    pd.DataFrame({"case_id": ["FGH-1"], "o2": [0.5]}).to_parquet(buffer)
    upload = check_upload("r.parquet", buffer.getvalue(), "purchases")
    assert upload.format == "parquet" and upload.text is None


def test_folder_part_of_the_name_is_dropped():
    assert check_upload("C:\\Users\\x\\plan.toml", PLAN, "plan").name == "plan.toml"
    assert check_upload("../../plan.toml", PLAN, "plan").name == "plan.toml"


# --- formats --------------------------------------------------------------------------


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_each_kind_refuses_formats_it_does_not_document(kind):
    for ext in ("xlsx", "json", "exe", "gz", "zip", "txt", ""):
        if ext in KINDS[kind]:
            continue
        _refused(f"file.{ext}" if ext else "file", b"a=1\n", kind, kind, "must end in")


def test_unknown_kind_is_refused():
    _refused("p.toml", PLAN, "photos", "upload kind", "allowed kinds")


def _zip(data):
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("plan.toml", data)
    return buffer.getvalue()


def _tar(data):
    buffer = io.BytesIO()
    with tarfile.open(fileobj=buffer, mode="w") as t:
        info = tarfile.TarInfo("plan.toml")
        info.size = len(data)
        t.addfile(info, io.BytesIO(data))
    return buffer.getvalue()


@pytest.mark.parametrize(
    "pack, what",
    [
        (_zip, "zip"),
        (gzip.compress, "gzip"),
        (bz2.compress, "bzip2"),
        (lzma.compress, "xz"),
        (_tar, "tar"),
    ],
)
def test_archives_are_refused_even_under_a_documented_name(pack, what):
    # Source: the archive formats' own writers in Python's standard library.
    _refused("plan.toml", pack(PLAN), "plan", what, "archive")
    _refused("records.csv", pack(CSV), "records", what)


def test_a_workbook_named_csv_is_refused():
    # Source: openpyxl writes the xlsx (zip) container.
    import openpyxl

    buffer = io.BytesIO()
    openpyxl.Workbook().save(buffer)
    _refused("records.csv", buffer.getvalue(), "records", "workbook")


def test_parquet_named_csv_and_csv_named_parquet_are_refused():
    buffer = io.BytesIO()
    pd.DataFrame({"a": [1]}).to_parquet(buffer)
    _refused("r.csv", buffer.getvalue(), "records", "parquet")
    _refused("r.parquet", CSV, "records", "parquet")


def test_truncated_parquet_is_refused():
    buffer = io.BytesIO()
    pd.DataFrame({"a": range(1000)}).to_parquet(buffer)
    data = buffer.getvalue()
    _refused("r.parquet", data[: len(data) // 2] + b"PAR1", "records", "parquet")


def test_parquet_with_too_many_columns_is_refused():
    buffer = io.BytesIO()
    pd.DataFrame({f"c{i}": [0] for i in range(MAX_PARQUET_COLUMNS + 1)}).to_parquet(buffer)
    _refused("r.parquet", buffer.getvalue(), "records", "columns")


# --- size -----------------------------------------------------------------------------


def test_limit_comes_from_the_package(monkeypatch):
    import tomllib
    from importlib import resources

    monkeypatch.delenv(UPLOAD_LIMIT_ENV, raising=False)
    shipped = tomllib.loads(resources.files("model.io").joinpath("upload_limits.toml").read_text(encoding="utf-8"))
    assert upload_limit_mb() == shipped["max_upload_mb"]
    assert upload_limit_bytes() == shipped["max_upload_mb"] * 1024 * 1024
    assert (MAX_TOML_BYTES, MAX_LINE_CHARS, MAX_PARQUET_COLUMNS) == (
        shipped["max_toml_bytes"],
        shipped["max_line_chars"],
        shipped["max_parquet_columns"],
    )
    # The limits SECURITY.md states (25 MB uploads, 1 MB TOML, 10,000-character lines,
    # 200 columns and 5,000,000 rows of Parquet).
    assert dict(shipped) == {
        "max_upload_mb": 25,
        "max_toml_bytes": 1_000_000,
        "max_line_chars": 10_000,
        "max_parquet_rows": 5_000_000,
        "max_parquet_columns": 200,
    }


def test_a_bad_limits_file_is_one_line(monkeypatch, tmp_path):
    import model.io.uploads as uploads

    class Files:
        def joinpath(self, name):
            return tmp_path / name

    monkeypatch.setattr(uploads.resources, "files", lambda package: Files())
    (tmp_path / uploads.LIMITS_FILE).write_text("max_upload_mb = 0\n", encoding="utf-8")
    with pytest.raises(InputError, match="max_upload_mb.*at least 1"):
        uploads._read_limits()
    (tmp_path / uploads.LIMITS_FILE).write_text("max_upload_mb = \n", encoding="utf-8")
    with pytest.raises(InputError, match="cannot read the upload limits"):
        uploads._read_limits()


def test_environment_overrides_the_limit_as_in_streamlit(monkeypatch):
    monkeypatch.setenv(UPLOAD_LIMIT_ENV, "1")
    assert upload_limit_bytes() == 1024 * 1024
    big = b"case_id,minute\n" + b"FGH-1,0\n" * (1024 * 1024 // 8 + 10)
    _refused("r.csv", big, "records", "largest", "1 MB")
    monkeypatch.setenv(UPLOAD_LIMIT_ENV, "lots")
    _refused("r.csv", CSV, "records", UPLOAD_LIMIT_ENV)


def test_csv_over_the_limit_is_refused_and_at_the_limit_accepted(monkeypatch):
    monkeypatch.setenv(UPLOAD_LIMIT_ENV, "2")
    limit = 2 * 1024 * 1024
    row = b"FGH-1,0,0.5\n"
    header = b"case_id,minute,o2\n"
    body = row * ((limit - len(header)) // len(row))
    at_limit = header + body + b"x" * (limit - len(header) - len(body))
    assert len(at_limit) == limit
    assert check_upload("r.csv", at_limit, "records").format == "csv"
    _refused("r.csv", at_limit + b"\n", "records", f"{limit + 1} bytes")


def test_toml_over_its_own_cap_is_refused():
    data = b"# " + b"x" * 100 + b"\n"
    data = data * (MAX_TOML_BYTES // len(data) + 1)
    _refused("p.toml", data, "plan", "largest TOML")


def test_empty_file_is_refused():
    _refused("p.toml", b"", "plan", "empty")


# --- text content ---------------------------------------------------------------------


def test_nul_byte_is_refused_with_its_line():
    _refused("p.toml", b'name = "a"\nagent = "sevo\x00"\n', "plan", "line 2", "NUL")


def test_control_characters_are_refused():
    _refused("r.csv", b"case_id\nFGH\x1b[31m\n", "records", "line 2", "U+001B")


def test_utf16_is_refused_with_advice():
    _refused("p.toml", "name = 'a'".encode("utf-16"), "plan", "UTF-16", "UTF-8")


def test_windows_1252_text_is_refused_with_its_line():
    data = "case_type,cases_per_year\nCaf\u00e9,10\n".encode("cp1252")
    _refused("m.csv", data, "casemix", "line 2", "0xe9", "UTF-8")


def test_a_records_csv_line_not_in_utf8_is_left_to_the_reader():
    """Defect 11 of issue 12: one bad line must not refuse a whole record file.

    The records reader sets that line aside (README, "Case records"), on the page as on the command line.
    """
    data = "case_id,name\nFGH-1,Caf\u00e9\nFGH-2,ok\n".encode("cp1252")
    up = check_upload("r.csv", data, "records")
    assert up.data == data
    assert up.text.splitlines()[2] == "FGH-2,ok"
    # Other checks still apply to record files: binary content is refused whole.
    _refused("r.csv", b"case_id\nFGH\x00\n", "records", "line 2", "NUL")


def test_huge_line_is_refused_with_its_line():
    data = b"case_id,note\nFGH-1," + b"x" * (MAX_LINE_CHARS + 1) + b"\n"
    _refused("r.csv", data, "records", "line 2", "characters")
    ok = b"case_id,note\nFGH-1," + b"x" * (MAX_LINE_CHARS - 6) + b"\n"
    assert check_upload("r.csv", ok, "records").text.endswith("x\n")


@pytest.mark.parametrize(
    "text",
    [
        "a = " + "[" * 3000 + "]" * 3000,  # past the parser's recursion
        "a = " + "[\n" * 3000 + "]\n" * 3000,  # the same on short lines
        "a = " + "{b = " * 20 + "1" + "}" * 20,  # inline tables
        "[" + ".".join(["t"] * 20) + "]\nx = 1\n",  # dotted table header
        ".".join(["k"] * 20) + " = 1\n",  # dotted key
    ],
)
def test_deep_toml_nesting_is_refused(text):
    _refused("p.toml", text.encode(), "plan", "nest")


def test_nesting_at_the_limit_is_accepted():
    text = ".".join(["k"] * MAX_TOML_DEPTH) + " = 1\n"
    assert check_upload("s.toml", text.encode(), "settings").text == text


def test_invalid_toml_is_refused_as_toml():
    _refused("p.toml", b"name = \n", "plan", "not valid TOML")


# --- fuzz: the guard itself never fails otherwise -------------------------------------

_FUZZ = settings(
    max_examples=1500, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large]
)


@_FUZZ
@given(name=st.text(max_size=40), data=st.binary(max_size=2000), kind=st.sampled_from(sorted(KINDS)))
def test_guard_returns_or_raises_input_error_for_any_bytes(name, data, kind):
    try:
        upload = check_upload(name, data, kind)
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    assert upload.data == data and upload.format in KINDS[kind]
    if upload.text is not None:
        # What passed is clean text: no NUL or stray control characters, short lines.
        assert "\x00" not in upload.text
        assert all(len(line.removesuffix("\r")) <= MAX_LINE_CHARS for line in upload.text.split("\n"))


@_FUZZ
@given(
    prefix=st.sampled_from(
        [
            b"PK\x03\x04",
            b"\x1f\x8b",
            b"BZh",
            b"\xfd7zXZ\x00",
            b"PAR1",
            b"%PDF",
            b"\x7fELF",
            b"MZ",
            b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1",
        ]
    ),
    rest=st.binary(max_size=500),
    kind=st.sampled_from(sorted(KINDS)),
)
def test_binary_signatures_never_pass_as_text(prefix, rest, kind):
    fmt = next(f for f in KINDS[kind] if f != "parquet")
    with pytest.raises(InputError):
        check_upload(f"file.{fmt}", prefix + rest, kind)
