"""The change log of the reference values: who changed which value, from what to what, when.

Worked out from the saved versions of the overrides (each version is a whole set of values
with its author and time), so it can never disagree with what was saved: each version is
compared with the one before it, value by value.
"""

from __future__ import annotations

import json
from collections.abc import Iterable
from dataclasses import dataclass

from model.reference import Reference


@dataclass(frozen=True)
class Change:
    """One value changed by one saved version. ``old``/``new`` None: the built-in default."""

    version: int
    saved_at: str
    author: str
    note: str
    path: str
    old: object
    new: object


def flatten(overrides: dict, prefix: str = "") -> dict[str, object]:
    """The leaves of an overrides mapping by dotted path (``prices.bottle.sevoflurane``)."""
    out: dict[str, object] = {}
    for key, value in overrides.items():
        path = f"{prefix}{key}"
        if isinstance(value, dict):
            out.update(flatten(value, path + "."))
        else:
            out[path] = value
    return out


def _body(text: str) -> dict:
    try:
        data = json.loads(text)
    except ValueError:
        return {}
    return data if isinstance(data, dict) else {}


def changes_between(before: dict, after: dict) -> list[tuple[str, object, object]]:
    """The values two sets of overrides differ in: ``(path, old, new)`` by dotted path, in order.

    Parameters
    ----------
    before, after : dict
        Overrides mappings (``Reference.with_overrides``); a value absent from one is the
        built-in default there (``None`` in the result).

    Returns
    -------
    list of tuple
        One ``(path, old, new)`` per value that differs; empty when the two give the same values.
    """
    old, new = flatten(before), flatten(after)
    return [(p, old.get(p), new.get(p)) for p in sorted(set(old) | set(new)) if old.get(p) != new.get(p)]


def reference_changes(versions: Iterable) -> list[Change]:
    """Every value changed by each version of the overrides, newest first.

    Parameters
    ----------
    versions : iterable of model.store.Version
        The saved versions of one overrides item, in any order.

    Returns
    -------
    list of Change
        One row per changed value, newest version first, paths in order within a version.
    """
    ordered = sorted(versions, key=lambda v: v.version)
    rows: list[Change] = []
    before: dict = {}
    for v in ordered:
        after = _body(v.body)
        for path, old, new in changes_between(before, after):
            rows.append(Change(v.version, v.saved_at, v.author, v.note, path, old, new))
        before = after
    return sorted(rows, key=lambda c: -c.version)


def default_value(reference: Reference, path: str):
    """The built-in value a dotted overrides path replaces (None where there is none).

    There is none for user GWP values. With it the change log can say "from the default 0.3"
    instead of "default".
    """
    parts = path.split(".")
    try:
        if parts[0] == "prices" and len(parts) == 3 and parts[1] == "bottle":
            return reference.prices.bottle.get(parts[2])
        if parts[0] == "prices" and len(parts) == 2:
            return getattr(reference.prices, parts[1], None)
        if parts[0] == "agents" and len(parts) == 3:
            return getattr(reference.agents[parts[1]], parts[2], None)
        if path == "mac.set":
            return reference.mac_set
    except (KeyError, AttributeError):
        return None
    return None


def shown(reference: Reference, path: str, value) -> str:
    """A value of the change log as text; None (the default) shown as the built-in value."""
    if value is None:
        built_in = default_value(reference, path)
        return "none (built-in default)" if built_in is None else f"{_text(built_in)} (built-in default)"
    return _text(value)


def _text(value) -> str:
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return f"{value:g}"
    return str(value)
