"""Reading a user's input file as text, with one clear message for each way it can fail."""

from __future__ import annotations

import re
from pathlib import Path

from model.errors import InputError


def shown_path(path) -> str:
    """A path short enough for a one-line message, keeping its end (the file name)."""
    text = str(path)
    return text if len(text) <= 76 else "..." + text[-73:]


def read_user_text(path, kind: str, max_bytes: int, fmt: str = "TOML", encoding: str = "utf-8") -> str:
    """The text of a user's file (plan, settings, case mix, scenario).

    Parameters
    ----------
    path : str or PathLike
        The file.
    kind : str
        What the file is, for messages ("plan", "case-mix").
    max_bytes : int
        Largest file read. [bytes]
    fmt : str
        Its format, for messages ("TOML", "CSV").
    encoding : str
        Text encoding ("utf-8", or "utf-8-sig" to accept a byte-order mark).

    Raises
    ------
    InputError
        Named ``"<kind> file"``, with the path: missing, a folder, too large, not UTF-8 text,
        or unreadable.
    """
    p = Path(path)
    label = f"{kind} file"
    try:
        size = p.stat().st_size
        if size > max_bytes:
            raise InputError(label, shown_path(p), f"{size} bytes; a {kind} file is at most {max_bytes} bytes")
        return p.read_bytes().decode(encoding)
    except FileNotFoundError:
        raise InputError(label, shown_path(p), f"no such file (it does not exist); give the path of a {fmt} {kind} file") from None
    except IsADirectoryError:
        raise InputError(label, shown_path(p), f"that is a folder; give the path of a {fmt} {kind} file") from None
    except UnicodeDecodeError:
        raise InputError(label, shown_path(p), f"not UTF-8 text; a {kind} file is {fmt} text") from None
    except OSError as exc:
        raise InputError(label, shown_path(p), f"cannot be read ({exc.strerror}); give a readable {fmt} {kind} file") from None


def toml_error(source: str, exc: Exception,
               allowed: str = "the file is not valid TOML (see the plan format in docs/formats.md)") -> InputError:
    """One-line InputError for malformed TOML, naming the file, line and column."""
    text = " ".join(str(exc).split())
    match = re.search(r"\s*\(at line (\d+), column (\d+)\)", text)
    where = source
    if match:
        where = f"{source} (line {match.group(1)}, column {match.group(2)})"
        text = text[:match.start()] + text[match.end():]
    return InputError(where, text.strip() or "malformed text", allowed)
