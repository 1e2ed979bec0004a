"""Names of a package loaded on first use (PEP 562), for the packages whose modules are costly to import."""

from __future__ import annotations

import importlib
from typing import Callable, Mapping, MutableMapping

__all__ = ["lazy_exports"]


def lazy_exports(package: str, homes: Mapping[str, str], namespace: MutableMapping,
                 names) -> tuple[Callable[[str], object], Callable[[], list]]:
    """The module-level ``__getattr__`` and ``__dir__`` of a package whose public names load lazily.

    Parameters
    ----------
    package : str
        The package's ``__name__``, for the error of an unknown name.
    homes : mapping
        Each public name -> the module it lives in.
    namespace : mapping
        The package's ``globals()``: a name once loaded is kept there, so later uses do
        not come back here.
    names : sequence of str
        The package's ``__all__``.

    Returns
    -------
    (__getattr__, __dir__)
        To assign in the package: ``__getattr__, __dir__ = lazy_exports(__name__, _HOME,
        globals(), __all__)``.
    """
    def __getattr__(name: str):
        module = homes.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(module), name)
        namespace[name] = value
        return value

    def __dir__() -> list:
        return sorted(set(namespace) | set(names))

    return __getattr__, __dir__
