"""Record CSV files read line by line: each bad line set aside alone, files of one layout read as one table."""

from __future__ import annotations

import os

import numpy as np

from model.base.errors import InputError
from model.io.csv_lines import split_csv_lines
from model.io.record_files import RecordFile, _sql_str


def csv_lines(rf: RecordFile):
    """The lines of a CSV file to read: (bytes of the lines kept, their line numbers, rows set aside, longest).

    The file is cut into lines first (:func:`model.io.csv_lines.split_csv_lines`): a line
    with an unclosed quote, a lone CR, a NUL byte or the wrong number of fields is set
    aside on its own; the others are each one complete record.
    """
    try:
        raw = np.frombuffer(rf.data, dtype=np.uint8) if rf.data is not None else np.fromfile(rf.path, dtype=np.uint8)
        lines = split_csv_lines(raw)
    except OSError as exc:
        raise InputError(rf.name, "the file", f"cannot be read ({exc.strerror or type(exc).__name__})") from None
    header = rf.skip_lines  # index of the header line
    n_fields = len(rf.names) if rf.names else len(rf.types)
    if header >= len(lines) or lines.broken[header]:
        what = lines.problem(header) if header < len(lines) else "missing"
        raise InputError(f"{rf.name}, line {header + 1}", "the header row", f"not readable as CSV ({what})")
    data = np.arange(len(lines)) > header
    data &= ~lines.blank
    broken = data & lines.broken
    wrong = data & ~lines.broken & (lines.fields != n_fields)
    keep = data & ~broken & ~wrong
    rej_rows = []
    for i in np.flatnonzero(broken | wrong):
        line = int(lines.number[i])
        if broken[i]:
            kind, msg = "unreadable", f"cannot be read as CSV: {lines.problem(int(i))}"
        else:
            kind, msg = "field_count", f"expected {n_fields} fields as in the header, found {int(lines.fields[i])}"
        rej_rows.append((rf.name, line, kind, None, None, f"{rf.name}: line {line}: {msg}"))
    longest = int((lines.ends - lines.starts).max()) if len(lines) else 0
    return lines.keep_bytes(keep) if keep.any() else b"", lines.number[keep], rej_rows, longest


def csv_table(con, group: list[tuple[int, RecordFile]], index: int, folder: str):
    """Read CSV files of one layout as text columns with their file and line numbers; bad lines go to the report.

    The files' good lines (:func:`csv_lines`) are read by duckdb as one file under one
    header (a few files or thousands cost one read), which sets aside what it still cannot
    read (invalid UTF-8, a stray quote inside a field). Line numbers are those of each file.

    Returns
    -------
    table : pyarrow.Table
        The mapped columns, ``_fileno`` and ``_row``.
    rej_rows : list
        The rows set aside, in file and line order.
    rows_of : dict
        Rows of each file (lines read, set-aside ones included).
    """
    import duckdb
    import pyarrow as pa

    rf = group[0][1]
    n_fields = len(rf.names) if rf.names else len(rf.types)
    rej_rows: list = []
    numbers, filenos, rows_of = [], [], {}
    longest = 0
    clean = os.path.join(folder, f"lines_{index}.csv")
    with open(clean, "wb") as fh:
        # Columns by place (a header may repeat a name or leave one empty): one header line.
        fh.write((",".join(f"c{k}" for k in range(n_fields)) + "\n").encode())
        for i, spec in group:
            kept, kept_numbers, rejected, long_line = csv_lines(spec)
            fh.write(kept)
            numbers.append(kept_numbers)
            filenos.append(np.full(len(kept_numbers), i, dtype=np.int64))
            rej_rows.extend(rejected)
            rows_of[i] = len(kept_numbers) + len(rejected)
            longest = max(longest, long_line)
    kept_numbers = np.concatenate(numbers) if numbers else np.zeros(0, dtype=np.int64)
    kept_files = np.concatenate(filenos) if filenos else np.zeros(0, dtype=np.int64)
    rej = f"rejects_{index}"
    scan = f"rejects_scan_{index}"
    columns = "{" + ", ".join(f"'c{k}': 'VARCHAR'" for k in range(n_fields)) + "}"
    names = {i: spec.name for i, spec in group}
    try:
        rel = con.sql(
            f"SELECT * FROM read_csv({_sql_str(clean)}, all_varchar=true, header=true, "
            f"delim=',', quote='\"', escape='\"', auto_detect=false, new_line='\\n', "
            f"columns={columns}, max_line_size={max(longest + 16, 2_097_152)}, "
            f"store_rejects=true, rejects_table={_sql_str(rej)}, rejects_scan={_sql_str(scan)}, "
            f"strict_mode=true, null_padding=false)"
        )
        table = rel.arrow()
        if hasattr(table, "read_all"):
            table = table.read_all()
        rejects = con.sql(
            f"SELECT line, min(error_type) AS error_type FROM {rej} GROUP BY line ORDER BY line"
        ).fetchall()
    except duckdb.Error as exc:
        # duckdb's words may quote the clean copy's place: name the user's file instead.
        where = rf.name if len(group) == 1 else ", ".join(names.values())[:200]
        first = (str(exc).replace(clean, where).strip().splitlines() or [type(exc).__name__])[0]
        raise InputError(where, "the file", f"not readable as CSV ({first})") from None
    finally:
        try:
            os.remove(clean)
        except OSError:
            pass
    # duckdb numbers the lines of the clean file, its header line 1.
    rejected = np.array([r[0] for r in rejects], dtype=np.int64) - 2
    accepted = np.ones(len(kept_numbers), dtype=bool)
    accepted[rejected[(rejected >= 0) & (rejected < len(kept_numbers))]] = False
    rows, files = kept_numbers[accepted], kept_files[accepted]
    if len(rows) != table.num_rows:  # never expected: each clean line is one record
        raise InputError(
            rf.name if len(group) == 1 else ", ".join(names.values())[:200],
            "the file",
            f"not readable as CSV ({table.num_rows} records in {len(rows)} lines); save it again as CSV UTF-8",
        )
    header = rf.names or list(rf.types)
    mapped = list(dict.fromkeys(col.source for col in rf.columns.values()))
    table = pa.table({src: table.column(header.index(src)) for src in mapped})
    table = table.append_column("_fileno", pa.array(files, type=pa.int64()))
    table = table.append_column("_row", pa.array(rows, type=pa.int64()))
    kinds = {
        "INVALID ENCODING": "encoding",
        "INVALID UNICODE": "encoding",
        "TOO MANY COLUMNS": "field_count",
        "MISSING COLUMNS": "field_count",
    }
    for line, err in rejects:
        k = int(line) - 2
        if not 0 <= k < len(kept_numbers):
            continue
        number, name = int(kept_numbers[k]), names[int(kept_files[k])]
        kind = kinds.get(err, "unreadable")
        if kind == "encoding":
            msg = "not valid UTF-8 text; save the file as UTF-8 (CSV UTF-8)"
        elif kind == "field_count":
            msg = f"expected {n_fields} fields as in the header"
        else:
            msg = f"cannot be read as CSV ({err.lower()})"
        rej_rows.append((name, number, kind, None, None, f"{name}: line {number}: {msg}"))
    order = {i: k for k, (i, _) in enumerate(group)}
    by_name = {spec.name: order[i] for i, spec in group}
    rej_rows.sort(key=lambda r: (by_name.get(r[0], 0), r[1]))
    con.execute(f"DROP TABLE IF EXISTS {rej}; DROP TABLE IF EXISTS {scan}")
    return table, rej_rows, rows_of
