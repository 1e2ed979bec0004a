"""Fuzzed CSV lines (hypothesis): the line splitter agrees with Python's csv module on every clean line."""

from __future__ import annotations

import csv

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from model.io.csv_lines import split_csv_lines
from tests.helpers.fuzz import FUZZ


@FUZZ
@given(
    data=st.binary(max_size=400),
    extra=st.lists(
        st.sampled_from([b'"', b",", b"\r", b"\n", b"\r\n", b"a", b" ", b"#", b'""', b"\xef\xbb\xbf"]), max_size=40
    ),
)
def test_line_splitter_agrees_with_the_csv_module_on_every_clean_line(data, extra):
    raw = data + b"".join(extra)
    lines = split_csv_lines(raw)
    # Lines tile the file: starts ascend, each ends at or before its break.
    assert np.all(lines.starts <= lines.ends) and np.all(lines.ends <= lines.breaks)
    assert np.all(np.diff(lines.starts) > 0) if len(lines) > 1 else True
    for i in range(len(lines)):
        if lines.broken[i]:
            continue
        chunk = raw[lines.starts[i] : lines.ends[i]].decode("latin-1")
        # A clean, well-formed line is one record of that many fields (RFC 4180 grammar).
        expected = _rfc4180_fields(chunk)
        if expected is not None:
            assert expected == lines.fields[i], chunk
            assert max(len(next(csv.reader([chunk], strict=True), [])), 1) == expected, chunk


def _rfc4180_fields(line: str) -> int | None:
    """Fields of one line by the RFC 4180 grammar, or None when the line is not well formed.

    Source: RFC 4180 section 2 (a field is quoted as a whole, a quote inside it doubled).
    """
    fields, i, n = 1, 0, len(line)
    at_start = True
    while i < n:
        ch = line[i]
        if at_start and ch == '"':
            i += 1
            while True:
                if i >= n:
                    return None  # never closed
                if line[i] == '"':
                    if i + 1 < n and line[i + 1] == '"':
                        i += 2
                        continue
                    i += 1
                    break
                i += 1
            if i < n and line[i] != ",":
                return None  # text after a closing quote
            at_start = False
            continue
        if ch == '"':
            return None  # a quote inside an unquoted field
        if ch == ",":
            fields += 1
            at_start = True
        else:
            at_start = False
        i += 1
    return fields
