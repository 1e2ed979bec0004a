"""Charts: the house colours, the house plotly template and the emissions report's figures.

A presentation layer above the emissions report and below the command line, with no
streamlit: the dashboard (``ui/``) builds its charts on it, and ``gas-ledger report --html``
puts the same report figures in its HTML file as the Emissions report page's download.
Importing it imports plotly.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from model.lazy import lazy_exports

# Each public name and the module it lives in, imported on first use (PEP 562): the
# dashboard's first page needs the colours and template, not the report's figures (which
# bring the report and the audit with them).
_HOME = {name: module for module, names in {
    "model.charts.palette": ["AGENT_COLOURS", "AXIS", "CO2E_COLOUR", "COST_COLOUR", "DANGER", "FLOW_BAND_COLOURS",
                             "GRID", "LESS_COLOUR", "MORE_COLOUR", "MUTED", "NO_AGENT_COLOUR", "PALETTE", "PRIMARY",
                             "TEXT", "agent_colour", "rgba"],
    "model.charts.report": ["band_figure", "by_agent_figure", "monthly_figure", "report_figures", "target_figure",
                            "use_purchase_figure", "waterfall_figure"],
    "model.charts.theme": ["FONT", "TEMPLATE", "house_layout", "house_style", "new_figure"],
}.items() for name in names}

__all__ = ["AGENT_COLOURS", "AXIS", "CO2E_COLOUR", "COST_COLOUR", "DANGER", "FLOW_BAND_COLOURS", "FONT", "GRID",
           "LESS_COLOUR", "MORE_COLOUR", "MUTED", "NO_AGENT_COLOUR", "PALETTE", "PRIMARY", "TEMPLATE", "TEXT",
           "agent_colour", "band_figure", "by_agent_figure", "house_layout", "house_style", "monthly_figure",
           "new_figure", "report_figures", "rgba", "target_figure", "use_purchase_figure", "waterfall_figure"]


__getattr__, __dir__ = lazy_exports(__name__, _HOME, globals(), __all__)


if TYPE_CHECKING:   # what static tools read (type checkers, the API pages); at run time __getattr__ imports
    from model.charts.palette import (AGENT_COLOURS, AXIS, CO2E_COLOUR, COST_COLOUR, DANGER, FLOW_BAND_COLOURS, GRID,
                                      LESS_COLOUR, MORE_COLOUR, MUTED, NO_AGENT_COLOUR, PALETTE, PRIMARY, TEXT,
                                      agent_colour, rgba)
    from model.charts.report import (band_figure, by_agent_figure, monthly_figure, report_figures, target_figure,
                                     use_purchase_figure, waterfall_figure)
    from model.charts.theme import FONT, TEMPLATE, house_layout, house_style, new_figure
