"""One conversion of computed values (numpy scalars, NaN, dataclasses, paths, times) to JSON values."""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math
from os import PathLike

import numpy as np
import pandas as pd

__all__ = ["infinite_paths", "to_json_value"]


def to_json_value(value):
    """``value`` as plain JSON values: what ``json.dumps(..., allow_nan=False)`` writes.

    Parameters
    ----------
    value : object
        A figure or a structure of figures: Python or numpy numbers and booleans, strings,
        None, dicts, lists, tuples, numpy arrays, dataclass instances, paths, dates and
        times, pandas timestamps, ``pd.NaT`` and ``pd.NA``.

    Returns
    -------
    object
        The same value in JSON terms: numpy scalars as Python ``bool``, ``int`` or
        ``float``; a float that is not finite (NaN, inf) and a missing time or value
        (``pd.NaT``, ``pd.NA``) as None; a tuple or array as a list; a dataclass as a dict
        of its fields; a path as its text; a date or time in ISO 8601 form. Dicts and lists
        are converted item by item (a numpy key becomes a Python one); finite floats keep
        their exact value. Any other object is returned unchanged.

    Notes
    -----
    JSON has no NaN or infinity (RFC 8259, section 6), so a figure that could not be worked
    out is written as null.
    """
    if value is None or isinstance(value, (str, bool)):
        return value
    if value is pd.NaT or value is pd.NA:
        return None
    if isinstance(value, np.generic):
        return to_json_value(value.item())  # the Python bool, int, float, str or time it holds
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, int):
        return value
    if isinstance(value, dict):
        return {_key(k): to_json_value(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_json_value(v) for v in value]
    if isinstance(value, np.ndarray):
        return to_json_value(value.tolist())
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_json_value(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, PathLike):
        return str(value)
    if isinstance(value, (_dt.date, _dt.time)):  # pd.Timestamp and datetime are dates too
        return value.isoformat()
    return value


def _key(key):
    """A dict key JSON writes: text, a whole number, a boolean, None or a finite float."""
    if isinstance(key, np.generic):
        key = key.item()
    if key is None or isinstance(key, (str, bool, int)):
        return key
    if isinstance(key, float) and math.isfinite(key):
        return key
    return str(key)


def infinite_paths(value, limit: int = 3) -> list[str]:
    """Where a structure of figures holds an infinite number (+inf or -inf), as paths.

    Parameters
    ----------
    value : object
        What :func:`to_json_value` takes (dicts, lists, tuples, arrays, dataclasses, numbers);
        pandas DataFrames and Series are looked into as well.
    limit : int
        At most this many paths are returned.

    Returns
    -------
    list of str
        Paths such as ``"totals.liquid_agent_ml"`` or ``"phases[2].bottles"``; empty when
        every number is finite or NaN. A NaN is "no figure" (written null, or "-" in text);
        an infinity is never a figure, so output holding one is refused, not written.
    """
    found: list[str] = []

    def walk(v, path: str) -> None:
        if len(found) >= limit:
            return
        if isinstance(v, pd.DataFrame):
            numbers = v.select_dtypes(include="number")
            if not numbers.empty and not np.isinf(numbers.to_numpy(dtype=float, na_value=0.0)).any():
                v = v.drop(columns=numbers.columns)  # every number finite (checked at once); look at the rest
            v = v.to_dict("records")
        elif isinstance(v, (pd.Series, np.ndarray)):
            v = list(v.tolist()) if isinstance(v, np.ndarray) else v.tolist()
        elif dataclasses.is_dataclass(v) and not isinstance(v, type):
            v = {f.name: getattr(v, f.name) for f in dataclasses.fields(v)}
        if isinstance(v, np.generic):
            v = v.item()
        if isinstance(v, float):
            if math.isinf(v):
                found.append(path or "value")
        elif isinstance(v, dict):
            for k, item in v.items():
                walk(item, f"{path}.{k}" if path else str(k))
        elif isinstance(v, (list, tuple)):
            for i, item in enumerate(v):
                walk(item, f"{path}[{i + 1}]")

    walk(value, "")
    return found
