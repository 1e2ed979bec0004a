"""The one error type the model raises for bad user input."""

from __future__ import annotations

import reprlib

# A value shown in a message is cut short, however deep or long (a nested table of a
# thousand levels would otherwise exhaust the recursion limit in repr).
_REPR = reprlib.Repr()
_REPR.maxlevel, _REPR.maxdict, _REPR.maxlist, _REPR.maxtuple, _REPR.maxset = 3, 4, 4, 4, 4
_REPR.maxstring = _REPR.maxother = 60


class InputError(ValueError):
    """Bad user input: a field, a file or a flag.

    The message is one line a user can act on: it names the field (or file and row),
    the value found and what is allowed. Front ends print it as is, never a traceback.
    """

    def __init__(self, field: str, value, allowed: str):
        self.field = field
        self.value = value
        self.allowed = allowed
        shown = _REPR.repr(value) if not isinstance(value, str) else f"'{_one_line(value)}'"
        if len(shown) > 80:
            # Keep both ends: a long file path stays recognisable by its file name.
            shown = shown[:38] + "..." + shown[-39:]
        super().__init__(_one_line(f"{field}: got {shown}; {allowed}"))


def _one_line(text: str) -> str:
    """Control characters (newlines, tabs, escapes) shown as their escape codes."""
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii") for c in text)
