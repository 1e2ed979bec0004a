"""A user's input file (a name with its bytes or its path), read with one clear message for each way it can fail."""

from __future__ import annotations

import hashlib
import os
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from model.base.errors import InputError


@dataclass(frozen=True)
class Source:
    """A user's file as a reader takes it: the name its messages give it, and its bytes or its path.

    Parameters
    ----------
    name : str
        The file as the user knows it: an upload's file name, a demo file's name, or a
        path as typed on the command line. Every message about the file names it so.
    data : bytes, optional
        The file's bytes (an upload, or a file made in memory).
    path : str or PathLike, optional
        Where the file is read from. Exactly one of ``data`` and ``path`` is given.
    """

    name: str
    data: bytes | None = field(default=None, repr=False)
    path: Path | None = None

    def __post_init__(self) -> None:
        if (self.data is None) == (self.path is None):
            raise ValueError("a Source has exactly one of data and path")
        if self.path is not None and not isinstance(self.path, Path):
            object.__setattr__(self, "path", Path(self.path))

    @classmethod
    def of(cls, item: Source | str | os.PathLike) -> Source:
        """``item`` if it is a Source, else the file at that path, named by the path as given."""
        if isinstance(item, Source):
            return item
        return cls(str(Path(item)), path=Path(item))

    @property
    def suffix(self) -> str:
        """The file's extension as written (``".csv"``; ``""`` for none)."""
        return (self.path if self.path is not None else Path(self.name)).suffix

    def kind(self, field_name: str) -> str:
        """What the source is, as :func:`path_kind`: always ``"file"`` for bytes."""
        return "file" if self.path is None else path_kind(self.path, field_name)

    def read_bytes(self) -> bytes:
        """The file's bytes (read from its path, or as given). Raises OSError as reading does."""
        if self.path is not None:
            return self.path.read_bytes()
        assert self.data is not None  # exactly one of the two (``__post_init__``)
        return self.data

    def head(self, size: int) -> bytes:
        """The file's first ``size`` bytes, without reading the rest from disk."""
        if self.path is None:
            return self.read_bytes()[:size]
        with open(self.path, "rb") as fh:
            return fh.read(size)

    def digest(self) -> str:
        """A cache key that reads no file from disk.

        It changes with the name and the content (bytes), or with the name and the file's
        place, size and time of change (a path).
        """
        h = hashlib.sha256(self.name.encode() + b"\0")
        if self.path is None:
            h.update(hashlib.sha256(self.read_bytes()).digest())
            return h.hexdigest()
        h.update(str(self.path.resolve()).encode())
        try:
            st = self.path.stat()
            h.update(f"\0{st.st_size}\0{st.st_mtime_ns}".encode())
        except OSError:
            pass  # a missing file: the reader says so
        return h.hexdigest()


def shown_path(path) -> str:
    """A path short enough for a one-line message, keeping its end (the file name)."""
    text = str(path)
    return text if len(text) <= 76 else "..." + text[-73:]


def path_kind(path, field: str) -> str:
    """What a user's path names: ``"file"``, ``"folder"``, ``"missing"`` or ``"other"``.

    Parameters
    ----------
    path : str or PathLike
        The path as given (typed, or read from a file).
    field : str
        Where the path comes from, for the message.

    Raises
    ------
    InputError
        The path cannot be looked up at all: a name too long, a NUL character, no
        permission to the folder, a loop of links (any operating-system error).
    """
    try:
        p = Path(path)
        if p.is_file():
            return "file"
        if p.is_dir():
            return "folder"
        return "missing" if not p.exists() and not p.is_symlink() else "other"
    except (OSError, ValueError) as exc:  # ValueError: an embedded NUL
        why = getattr(exc, "strerror", None) or str(exc) or type(exc).__name__
        raise InputError(field, shown_path(path), f"cannot be looked up ({why}); give the path of a file") from None


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
    except InputError:
        raise  # (a ValueError too: not to be taken for a NUL in the path below)
    except FileNotFoundError:
        raise InputError(
            label, shown_path(p), f"no such file (it does not exist); give the path of a {fmt} {kind} file"
        ) from None
    except IsADirectoryError:
        raise InputError(label, shown_path(p), f"that is a folder; give the path of a {fmt} {kind} file") from None
    except UnicodeDecodeError:
        raise InputError(label, shown_path(p), f"not UTF-8 text; a {kind} file is {fmt} text") from None
    except OSError as exc:
        raise InputError(
            label, shown_path(p), f"cannot be read ({exc.strerror}); give a readable {fmt} {kind} file"
        ) from None
    except ValueError:  # a NUL character in the path (UnicodeDecodeError is caught above)
        raise InputError(
            label, shown_path(p), f"the path holds a NUL character; give the path of a {fmt} {kind} file"
        ) from None


def toml_error(
    source: str, exc: Exception, allowed: str = "the file is not valid TOML (see the plan format in docs/formats.md)"
) -> InputError:
    """One-line InputError for malformed TOML, naming the file, line and column."""
    text = " ".join(str(exc).split())
    match = re.search(r"\s*\(at line (\d+), column (\d+)\)", text)
    where = source
    if match:
        where = f"{source} (line {match.group(1)}, column {match.group(2)})"
        text = text[: match.start()] + text[match.end() :]
    return InputError(where, text.strip() or "malformed text", allowed)


#: Deepest nesting of tables and arrays in a TOML file below the document itself (the
#: documented formats need 2: ``[[phases]]`` is an array of tables).
MAX_TOML_DEPTH = 8


def parse_toml(
    text: str,
    source: str,
    kind: str,
    allowed: str = "the file is not valid TOML (see the plan format in docs/formats.md)",
) -> dict:
    """Parse a user's TOML text, refusing nesting deeper than :data:`MAX_TOML_DEPTH`.

    The one TOML guard of the project: the upload check (pages) and the file readers
    (command line) both call it, so a file refused on one is refused on the other.

    Parameters
    ----------
    text : str
        The TOML text.
    source : str
        Where it comes from (file name), for messages.
    kind : str
        What the file is ("plan", "scenario"), for messages.
    allowed : str
        What to say when the text is not valid TOML.

    Raises
    ------
    InputError
        Not valid TOML (naming line and column), or nested too deeply.
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise toml_error(source, exc, allowed) from None
    except RecursionError:
        raise InputError(
            source, "nesting too deep", f"tables and arrays nest at most {MAX_TOML_DEPTH} deep in a {kind} file"
        ) from None
    depth = toml_depth(data)
    if depth > MAX_TOML_DEPTH:
        raise InputError(
            source, f"nesting {depth} deep", f"tables and arrays nest at most {MAX_TOML_DEPTH} deep in a {kind} file"
        )
    return data


def toml_depth(value, stop: int = MAX_TOML_DEPTH) -> int:
    """Nesting depth of tables and arrays below the document, without recursion.

    The document itself is level 0: ``a = 1`` is 0 deep, ``[t]`` or ``a = [1]`` 1 deep,
    ``a = [[1]]`` 2 deep. Counting stops a level past ``stop``.
    """
    deepest = 0
    stack = [(v, 1) for v in value.values()] if isinstance(value, dict) else [(value, 0)]
    while stack:
        item, level = stack.pop()
        if isinstance(item, (dict, list)):
            deepest = max(deepest, level)
            if deepest > stop:
                break
            stack.extend((v, level + 1) for v in (item.values() if isinstance(item, dict) else item))
    return deepest
