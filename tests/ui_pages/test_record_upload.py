"""Record audit uploads go through the same reader, with the same behaviour, as the command line.

Defect 11 of issue 12: one line not in UTF-8 made the page refuse a whole uploaded record
file, while `gas-ledger audit` sets just that line aside (README, "Case records").
"""

from __future__ import annotations

from model.audit.engine import audit_records
from tests.helpers.pages import page

RECORDS = (
    "case_id,elapsed,agent,o2,air,dial\n"
    "A,0,sevo,1,1,2\nA,1,sevo,1,1,2\nA,2,s\u00e9vo,1,1,2\nA,3,sevo,1,1,2\nA,4,sevo,1,1,2\n"
).encode("cp1252")


def _metric(at, label: str) -> str:
    return next(m.value for m in at.metric if m.label == label)


def test_one_line_not_in_utf8_is_set_aside_on_the_page_as_on_the_command_line(tmp_path):
    """Defect 11: the page sets the bad line aside, names the upload and its line, uses the rest.

    Its counts equal the command line's reader on the same bytes.
    """
    path = tmp_path / "theatre_export.csv"
    path.write_bytes(RECORDS)
    cli = audit_records([path])
    assert cli.report.rows_set_aside == 1

    at = page("record_audit.py")
    at.radio(key="ra_source").set_value("Upload files").run()
    at.get("file_uploader")[0].upload("theatre_export.csv", RECORDS).run()
    assert not at.exception, [e.message for e in at.exception]
    assert not at.error, [e.value for e in at.error]
    assert _metric(at, "Rows set aside") == f"{cli.report.rows_set_aside:,}"
    assert _metric(at, "Rows used") == f"{cli.report.summary()['rows_valid']:,}"
    issues = next(df.value for df in at.dataframe if "message" in df.value.columns)
    assert issues[["file", "line or row", "problem"]].values.tolist() == [["theatre_export.csv", 4, "not UTF-8 text"]]
    shown = " ".join(str(v) for v in issues.values.ravel())
    assert "/tmp" not in shown and "gas-ledger-audit" not in shown


def test_record_file_missing_columns_is_named_as_uploaded_not_by_its_temporary_copy():
    at = page("record_audit.py")
    at.radio(key="ra_source").set_value("Upload files").run()
    at.get("file_uploader")[0].upload("theatre_export.csv", b"case_id,elapsed,agent\nA,0,sevo\n").run()
    assert not at.exception, [e.message for e in at.exception]
    message = " ".join(e.value for e in at.error)
    assert "theatre\\_export\\.csv" in message and "missing required column" in message
    assert "gas\\-ledger\\-audit" not in message and "/tmp" not in message
