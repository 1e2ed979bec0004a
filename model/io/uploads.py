"""The guard every uploaded file passes before a parser reads it.

``check_upload(name, data, kind)`` accepts only the documented formats of each kind of file,
checks the size against the package's upload limit (``upload_limits.toml``) and sniffs the content: archives,
office documents, images, executables and other binary junk, NUL bytes or control characters
in text, text not in UTF-8 (except a records CSV's lines, which its reader sets aside one by
one, as on the command line), over-long lines and deeply nested TOML are refused with one
``InputError`` line naming the file. It returns the bytes and, for text formats, the decoded
text, so the caller hands the same text to its parser.
"""

from __future__ import annotations

import io
import os
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from importlib import resources
from pathlib import PurePath
from types import MappingProxyType

from model.base.errors import InputError
from model.base.files import MAX_TOML_DEPTH, parse_toml  # noqa: F401  (MAX_TOML_DEPTH: part of this module's API)

#: The package's data file of upload limits (read with importlib.resources, so an installed
#: package needs no checkout); scripts/dashboard.sh hands its ``max_upload_mb`` to Streamlit.
LIMITS_FILE = "upload_limits.toml"
#: Streamlit's environment form of ``server.maxUploadSize``; it wins over the package's limit,
#: for Streamlit and for this guard alike.
UPLOAD_LIMIT_ENV = "STREAMLIT_SERVER_MAX_UPLOAD_SIZE"


def _read_limits() -> Mapping[str, int]:
    """The limits of ``LIMITS_FILE``, each a whole number of at least 1."""
    where = f"{__package__}/{LIMITS_FILE}"
    try:
        limits = tomllib.loads(resources.files(__package__).joinpath(LIMITS_FILE).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(where, "the file", f"cannot read the upload limits ({exc})") from None
    for key, value in limits.items():
        if isinstance(value, bool) or not isinstance(value, int) or value < 1:
            raise InputError(f"{where}: {key}", value, "expected a whole number, at least 1")
    return MappingProxyType(limits)


#: The upload limits as the package ships them (``LIMITS_FILE``).
LIMITS = _read_limits()

#: Formats each kind of upload may come in (file extension -> format).
KINDS: Mapping[str, tuple[str, ...]] = MappingProxyType(
    {
        "plan": ("toml",),
        "settings": ("toml",),
        "scenario": ("toml",),
        "casemix": ("csv", "toml"),
        "sites": ("csv",),
        "records": ("csv", "parquet"),
        "purchases": ("csv", "parquet"),
    }
)
#: Kinds read line by line whose reader sets a line that is not UTF-8 aside and uses the rest
#: (``model.io.records.read_records``, as on the command line): the guard leaves such a line
#: to it rather than refusing the whole file.
LINE_BY_LINE_KINDS = ("records",)

#: Largest TOML file (plans, settings, scenarios, case mixes). [bytes] Same as plan files.
MAX_TOML_BYTES = LIMITS["max_toml_bytes"]
#: Longest line in a text upload. [characters]
MAX_LINE_CHARS = LIMITS["max_line_chars"]
#: Most rows and columns in a Parquet upload (its data may be compressed far below its size).
MAX_PARQUET_ROWS = LIMITS["max_parquet_rows"]
MAX_PARQUET_COLUMNS = LIMITS["max_parquet_columns"]

# Leading bytes of formats that are never one of ours. (offset, magic, what it is)
_SIGNATURES = (
    (0, b"PK\x03\x04", "a zip archive (or an Excel/OpenDocument workbook)"),
    (0, b"PK\x05\x06", "an empty zip archive"),
    (0, b"PK\x07\x08", "a split zip archive"),
    (0, b"\x1f\x8b", "a gzip archive"),
    (0, b"BZh", "a bzip2 archive"),
    (0, b"\xfd7zXZ\x00", "an xz archive"),
    (0, b"7z\xbc\xaf\x27\x1c", "a 7-Zip archive"),
    (0, b"Rar!\x1a\x07", "a RAR archive"),
    (0, b"\x28\xb5\x2f\xfd", "a zstd archive"),
    (0, b"\x04\x22\x4d\x18", "an lz4 archive"),
    (257, b"ustar", "a tar archive"),
    (0, b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "an old Excel/Office document"),
    (0, b"%PDF", "a PDF document"),
    (0, b"\x89PNG", "a PNG image"),
    (0, b"\xff\xd8\xff", "a JPEG image"),
    (0, b"GIF8", "a GIF image"),
    (0, b"\x7fELF", "a program (ELF)"),
    (0, b"MZ", "a Windows program"),
    (0, b"SQLite format 3\x00", "an SQLite database"),
    (0, b"{\\rtf", "an RTF document"),
)
_PARQUET_MAGIC = b"PAR1"
# Control characters refused in text: all but tab, line feed, form feed, carriage return.
_CONTROL = re.compile("[\x00-\x08\x0b\x0e-\x1f\x7f]")
_CONTROL_OR_BREAK = re.compile("[\x00-\x1f\x7f\x85\u2028\u2029]")
# A line longer than the limit, its line break (LF or CR LF) not counted.
_LONG_LINE = re.compile(f"^[^\n]{{{MAX_LINE_CHARS}}}(?!\r?(?:\n|\\Z))", re.MULTILINE)


@dataclass(frozen=True)
class Upload:
    """An upload that passed the guard."""

    #: File name as uploaded, without any folder part.
    name: str
    #: One of ``KINDS``.
    kind: str
    #: "toml", "csv" or "parquet".
    format: str
    data: bytes
    #: The decoded UTF-8 text (byte-order mark removed) for toml and csv; None for parquet.
    #: For records CSV, a byte that is not UTF-8 shows as U+FFFD: give ``data`` to the reader.
    text: str | None


def upload_limit_mb() -> int:
    """The app's upload limit, Streamlit's ``server.maxUploadSize``, in MB.

    Read from the environment variable ``STREAMLIT_SERVER_MAX_UPLOAD_SIZE`` if set (as
    Streamlit does), else the package's ``max_upload_mb`` (``LIMITS_FILE``), the value
    scripts/dashboard.sh gives Streamlit.
    """
    env = os.environ.get(UPLOAD_LIMIT_ENV, "").strip()
    if not env:
        return LIMITS["max_upload_mb"]
    try:
        value = int(env)
    except ValueError:
        raise InputError(UPLOAD_LIMIT_ENV, env, "expected a whole number of MB") from None
    if value < 1:
        raise InputError(UPLOAD_LIMIT_ENV, env, "expected at least 1 MB")
    return value


def upload_limit_bytes() -> int:
    """The app's upload limit in bytes (Streamlit counts a MB as 1024 * 1024 bytes)."""
    return upload_limit_mb() * 1024 * 1024


def check_upload(name: str, data: bytes, kind: str) -> Upload:
    """Check an uploaded file before any parser reads it.

    Parameters
    ----------
    name : str
        The file name as uploaded (``UploadedFile.name``); its extension picks the format.
    data : bytes
        The whole content (``UploadedFile.getvalue()``).
    kind : str
        What the upload is for: one of ``KINDS`` ("plan", "settings", "scenario", "casemix",
        "records", "purchases").

    Returns
    -------
    Upload
        Name, kind, format, the bytes, and the decoded text for TOML and CSV.

    Raises
    ------
    InputError
        One line naming the file (and line, where there is one), what was found and what
        is accepted.
    """
    if kind not in KINDS:
        raise InputError("upload kind", kind, "allowed kinds are " + ", ".join(KINDS))
    if isinstance(data, (bytearray, memoryview)):
        data = bytes(data)
    if not isinstance(data, bytes):
        raise InputError("upload", type(data).__name__, "expected the file's bytes")
    # The name is shown in messages: drop any folder part and make control characters visible.
    shown = _CONTROL_OR_BREAK.sub("?", PurePath(str(name or "").replace("\\", "/")).name).strip()
    if not shown:
        raise InputError("upload", "no file name", "the file needs a name ending in " + _extensions(kind))
    where = f"{kind} upload '{shown}'"
    fmt = shown.rsplit(".", 1)[-1].lower() if "." in shown else ""
    if fmt not in KINDS[kind]:
        raise InputError(where, shown, f"a {kind} file must end in " + _extensions(kind))

    size = len(data)
    limit = upload_limit_bytes()
    if fmt == "toml":
        limit = min(limit, MAX_TOML_BYTES)
    if size > limit:
        raise InputError(where, f"{size} bytes", f"the largest {fmt.upper()} upload is {_size(limit)}")
    if size == 0:
        raise InputError(where, "an empty file", f"expected a {fmt.upper()} file")

    found = _sniff(data)
    if found is not None:
        raise InputError(
            where,
            found,
            f"expected a plain {fmt.upper()} file; unpack or export it first (archives and office files are not read)",
        )
    if fmt == "parquet":
        _check_parquet(data, where)
        return Upload(shown, kind, fmt, data, None)
    if data.startswith(_PARQUET_MAGIC):
        raise InputError(where, "a Parquet file", f"expected {fmt.upper()} text; name a Parquet file '.parquet'")
    text = _decode_text(data, where, lenient=kind in LINE_BY_LINE_KINDS and fmt == "csv")
    _check_lines(text, where)
    if fmt == "toml":
        _check_toml(text, where)
    return Upload(shown, kind, fmt, data, text)


def _extensions(kind: str) -> str:
    return " or ".join("." + f for f in KINDS[kind])


def _size(n: int) -> str:
    return f"{n / (1024 * 1024):g} MB" if n >= 1024 * 1024 else f"{n:,} bytes"


def _sniff(data: bytes) -> str | None:
    for offset, magic, what in _SIGNATURES:
        if data[offset : offset + len(magic)] == magic:
            return what
    return None


def _decode_text(data: bytes, where: str, lenient: bool = False) -> str:
    """The text of an upload.

    With ``lenient``, bytes that are not UTF-8 become U+FFFD and the file's reader (which
    reads the bytes themselves) names and sets aside their lines.
    """
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise InputError(where, "UTF-16 text", "save the file as UTF-8 text")
    nul = data.find(b"\x00")
    if nul >= 0:
        line = data.count(b"\n", 0, nul) + 1
        raise InputError(
            f"{where}, line {line}", "a NUL byte", "expected plain text; the file looks binary or is not UTF-8"
        )
    try:
        text = data.decode("utf-8-sig", errors="replace" if lenient else "strict")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise InputError(
            f"{where}, line {line}",
            f"byte 0x{data[exc.start]:02x}",
            "expected UTF-8 text; save it as UTF-8 (in spreadsheet programs: CSV UTF-8)",
        ) from None
    found = _CONTROL.search(text)
    if found is not None:
        bad = found.start()
        line = text.count("\n", 0, bad) + 1
        raise InputError(
            f"{where}, line {line}",
            f"control character U+{ord(text[bad]):04X}",
            "expected plain text (tabs and line breaks only)",
        )
    return text


def _check_lines(text: str, where: str) -> None:
    found = _LONG_LINE.search(text)
    if found is not None:
        start = text.rfind("\n", 0, found.start()) + 1
        end = text.find("\n", start)
        length = (len(text) if end < 0 else end) - start
        if text[start : start + length].endswith("\r"):
            length -= 1  # the CR of a CR LF line break
        raise InputError(
            f"{where}, line {text.count(chr(10), 0, start) + 1}",
            f"{length} characters",
            f"a line is at most {MAX_LINE_CHARS:,} characters",
        )


def _check_toml(text: str, where: str) -> None:
    parse_toml(text, where, "TOML", "not valid TOML")


def _check_parquet(data: bytes, where: str) -> None:
    if len(data) < 12 or not (data.startswith(_PARQUET_MAGIC) and data.endswith(_PARQUET_MAGIC)):
        raise InputError(where, "not a Parquet file", "expected a Parquet file (it starts and ends with 'PAR1')")
    footer = int.from_bytes(data[-8:-4], "little")
    if footer <= 0 or footer > len(data) - 12:
        raise InputError(where, "a damaged Parquet footer", "expected a complete Parquet file")
    import pyarrow.parquet as pq

    try:
        meta = pq.read_metadata(io.BytesIO(data))
    except Exception as exc:  # pyarrow raises several types for damaged files
        raise InputError(
            where, "a damaged Parquet file", f"could not read its metadata ({type(exc).__name__})"
        ) from None
    if meta.num_columns > MAX_PARQUET_COLUMNS:
        raise InputError(where, f"{meta.num_columns} columns", f"at most {MAX_PARQUET_COLUMNS} columns")
    if meta.num_rows > MAX_PARQUET_ROWS:
        raise InputError(where, f"{meta.num_rows:,} rows", f"at most {MAX_PARQUET_ROWS:,} rows per upload")
