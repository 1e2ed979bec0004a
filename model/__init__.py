"""Fresh Gas Ledger model: consumption, cost and emissions of anaesthetic gases and vapours.

Pure functions over numpy arrays and small dataclasses; no user interface code here. The
physics and accounting are flat modules of this package; file formats are in
:mod:`model.io`, the department's year in :mod:`model.year`, the record audit in
:mod:`model.audit`, the store in :mod:`model.store` and the command line in :mod:`model.cli`.
What is listed in ``__all__`` here and in each subpackage is the public API.
"""

import lazy_loader as _lazy

# Each name loads its module when first used; the names are listed once, in __init__.pyi.
__getattr__, __dir__, __all__ = _lazy.attach_stub(__name__, __file__)
