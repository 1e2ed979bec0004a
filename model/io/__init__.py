"""File formats: plan, case-mix, scenario, record and purchase files; the upload guard; the exports.

Every reader raises :class:`model.errors.InputError` with one line naming the file, the line
and what is allowed; a file of many rows sets each bad row aside and uses the rest.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from model.lazy import lazy_exports

# Each public name and the module it lives in. A module is imported when one of its names is
# first used (PEP 562), not with the package: reading a plan does not load the record
# readers, purchases or scenarios, nor (through the case-mix format) the year's model.
_HOME = {name: module for module, names in {
    "model.io.plans": ["load_plan", "parse_plan_text", "plan_from_dict", "plan_to_dict", "plan_to_toml"],
    "model.io.casemix": ["casemix_from_frame", "casemix_to_csv", "casemix_to_frame", "load_casemix",
                         "parse_casemix_text"],
    "model.io.scenario": ["load_scenario", "parse_scenario_text", "scenario_from_dict"],
    "model.io.records": ["read_records"],
    "model.io.record_files": ["DEFAULT_GAP_LIMIT_MIN", "expand_paths", "inspect_file"],
    "model.io.record_report": ["ReadReport", "Records"],
    "model.io.purchases": ["load_purchases", "read_purchases", "write_purchases"],
    "model.io.uploads": ["Upload", "check_upload"],
    "model.io.exports": ["chart_text", "html_report", "to_csv", "to_xlsx"],
}.items() for name in names}

__all__ = [
    "DEFAULT_GAP_LIMIT_MIN", "ReadReport", "Records", "Upload", "casemix_from_frame", "casemix_to_csv",
    "casemix_to_frame", "chart_text", "check_upload", "expand_paths", "html_report", "inspect_file",
    "load_casemix", "load_plan", "load_purchases", "load_scenario", "parse_casemix_text", "parse_plan_text",
    "parse_scenario_text", "plan_from_dict", "plan_to_dict", "plan_to_toml", "read_purchases", "read_records",
    "scenario_from_dict", "to_csv", "to_xlsx", "write_purchases",
]


__getattr__, __dir__ = lazy_exports(__name__, _HOME, globals(), __all__)


if TYPE_CHECKING:   # what static tools read (type checkers, the API pages); at run time __getattr__ imports
    from model.io.plans import load_plan, parse_plan_text, plan_from_dict, plan_to_dict, plan_to_toml
    from model.io.casemix import (casemix_from_frame, casemix_to_csv, casemix_to_frame, load_casemix,
                                  parse_casemix_text)
    from model.io.scenario import load_scenario, parse_scenario_text, scenario_from_dict
    from model.io.records import read_records
    from model.io.record_files import DEFAULT_GAP_LIMIT_MIN, expand_paths, inspect_file
    from model.io.record_report import ReadReport, Records
    from model.io.purchases import load_purchases, read_purchases, write_purchases
    from model.io.uploads import Upload, check_upload
    from model.io.exports import chart_text, html_report, to_csv, to_xlsx
