"""Line-by-line CSV reading: split a file into lines first, so a broken line never takes its neighbours.

The project's CSV formats hold one record per line (README.md, "Case records" and
"Purchases"). A general CSV parser lets a quoted field run on over line breaks, so one
opening quote that is never closed swallows every line after it, and a lone carriage return
ends a record in some readers and not in others. Here the bytes are cut at line feeds first
(a CR just before the LF belongs to the line break); each line is then checked on its own,
vectorised over the whole file with numpy:

- ``quote``: an odd number of ``"`` on the line (a quote opened and never closed);
- ``cr``: a carriage return not followed by a line feed;
- ``nul``: a NUL byte;
- ``fields``: the number of fields outside quotes (commas outside quotes + 1), which is
  exact for every line without the problems above, trailing empty fields included.

A line without those problems is one complete CSV record whose fields any CSV parser reads
alike, so it can be handed to one (duckdb, :mod:`csv`) on its own or with other such lines.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

_LF, _CR, _QUOTE, _COMMA, _NUL, _HASH = 10, 13, 34, 44, 0, 35
_BLANK_BYTES = np.array([32, 9, 13], dtype=np.uint8)  # space, tab, CR
_BOM = b"\xef\xbb\xbf"


@dataclass
class CsvLines:
    """The lines of a CSV file, each with its checks (arrays of one entry per line)."""

    #: The file's bytes (byte-order mark included, as read).
    data: np.ndarray
    #: Byte offset of each line's first byte, and one past its last (line break excluded).
    starts: np.ndarray
    ends: np.ndarray
    #: One past the line break (equal to ``ends`` for a last line without one).
    breaks: np.ndarray
    #: Line number, from 1.
    number: np.ndarray
    #: The line holds nothing but spaces and tabs.
    blank: np.ndarray
    #: The first character that is not a space or tab is ``#``.
    comment: np.ndarray
    #: Odd count of ``"``, a lone CR, a NUL byte.
    quote: np.ndarray
    cr: np.ndarray
    nul: np.ndarray
    #: Fields outside quotes (commas outside quotes + 1).
    fields: np.ndarray

    def __len__(self) -> int:
        return len(self.starts)

    @property
    def broken(self) -> np.ndarray:
        """Lines no CSV parser should read (unclosed quote, lone CR, NUL)."""
        return self.quote | self.cr | self.nul

    def problem(self, i: int) -> str | None:
        """Plain words for what makes line ``i`` (index) unreadable, or None."""
        if self.nul[i]:
            return "holds a NUL byte (the file looks binary)"
        if self.cr[i]:
            return "holds a carriage return (CR) not followed by a line feed; lines end in LF or CR LF"
        if self.quote[i]:
            return 'an odd number of quotes (") on this line: a quote never closed, or a stray one'
        return None

    def text(self, i: int) -> str:
        """Line ``i`` (index) decoded as UTF-8 (undecodable bytes replaced)."""
        return self.data[self.starts[i] : self.ends[i]].tobytes().decode("utf-8", errors="replace")

    def keep_bytes(self, keep: np.ndarray) -> bytes:
        """The lines where ``keep`` is true, each ended by one LF (a CR LF becomes LF)."""
        n = len(self.data)
        idx = np.flatnonzero(keep)
        delta = np.zeros(n + 1, dtype=np.int8)
        np.add.at(delta, self.starts[idx], 1)
        np.add.at(delta, self.breaks[idx], -1)
        mask = np.cumsum(delta[:n], dtype=np.int8) > 0
        # Drop the CR of a CR LF line break; the LF stays.
        crlf = idx[(self.breaks[idx] - self.ends[idx]) == 2]
        mask[self.ends[crlf]] = False
        out = self.data[mask].tobytes()
        if len(idx) and self.breaks[idx[-1]] == self.ends[idx[-1]]:
            out += b"\n"  # the last line had no line break
        return out


def split_csv_lines(data) -> CsvLines:
    """Cut CSV bytes into lines and check each line on its own.

    Parameters
    ----------
    data : bytes or ndarray of uint8
        The whole file. A UTF-8 byte-order mark at the start is not part of line 1.

    Returns
    -------
    CsvLines
        One entry per line (a final line break does not start an empty last line).
    """
    arr = np.frombuffer(data, dtype=np.uint8) if isinstance(data, (bytes, bytearray, memoryview)) else data
    n = len(arr)
    first = 3 if arr[:3].tobytes() == _BOM else 0
    nl = np.flatnonzero(arr == _LF)
    starts = np.concatenate(([first], nl + 1)).astype(np.int64)
    breaks = np.concatenate((nl + 1, [n])).astype(np.int64)
    if len(starts) > 1 and starts[-1] >= n:  # the file ends with a line break
        starts, breaks = starts[:-1], breaks[:-1]
    if n <= first:
        starts = breaks = np.zeros(0, dtype=np.int64)
    ends = breaks.copy()
    has_lf = (ends > starts) & (arr[np.maximum(ends - 1, 0)] == _LF) if n else np.zeros(0, bool)
    ends[has_lf] -= 1
    has_crlf = (ends > starts) & (arr[np.maximum(ends - 1, 0)] == _CR) & has_lf if n else has_lf
    ends[has_crlf] -= 1

    def per_line(positions):
        """How many of the sorted byte ``positions`` fall inside each line's content."""
        return np.searchsorted(positions, ends) - np.searchsorted(positions, starts)

    quotes = np.flatnonzero(arr == _QUOTE)
    n_quotes = per_line(quotes)
    cr = per_line(np.flatnonzero(arr == _CR)) > 0
    nul = per_line(np.flatnonzero(arr == _NUL)) > 0
    filled = np.flatnonzero(~np.isin(arr, _BLANK_BYTES))
    n_filled = per_line(filled)
    blank = n_filled == 0
    first_filled = np.searchsorted(filled, starts)
    comment = (
        ~blank & (arr[filled[np.minimum(first_filled, max(len(filled) - 1, 0))]] == _HASH)
        if len(filled)
        else np.zeros(len(starts), bool)
    )
    # A comma is outside quotes when an even number of quotes precede it on its line.
    commas = np.flatnonzero(arr == _COMMA)
    line_of = np.searchsorted(starts, commas, side="right") - 1
    inside = (np.searchsorted(quotes, commas) - np.searchsorted(quotes, starts[line_of])) % 2 == 1
    outside = commas[~inside] if len(commas) else commas
    fields = per_line(outside) + 1
    return CsvLines(
        arr, starts, ends, breaks, np.arange(1, len(starts) + 1), blank, comment, n_quotes % 2 == 1, cr, nul, fields
    )
