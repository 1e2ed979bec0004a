"""Presentation: tables in words, exports, the house colours and template, and every chart builder.

:mod:`~model.present.readable` (column headings in words, rounded figures),
:mod:`~model.present.exports` (CSV, Excel and self-contained HTML, formula cells neutralised),
:mod:`~model.present.report_document` (the emissions report as HTML and xlsx),
:mod:`~model.present.palette` and :mod:`~model.present.theme` (the house colours and plotly
template), and the figures of a case (:mod:`~model.present.case_charts`), a year
(:mod:`~model.present.year_charts`) and the emissions report (:mod:`~model.present.report_charts`).
No streamlit: the dashboard (``ui/``, ``pages/``) and the command line draw from the same builders.
"""

import lazy_loader as _lazy

# Each name loads its module when first used; the names are listed once, in __init__.pyi.
__getattr__, __dir__, __all__ = _lazy.attach_stub(__name__, __file__)
