"""File formats: plan, case-mix, scenario, record and purchase files; the upload guard; the exports.

Every reader raises :class:`model.base.errors.InputError` with one line naming the file, the line
and what is allowed; a file of many rows sets each bad row aside and uses the rest.
"""

import lazy_loader as _lazy

# Each name loads its module when first used; the names are listed once, in __init__.pyi.
__getattr__, __dir__, __all__ = _lazy.attach_stub(__name__, __file__)
