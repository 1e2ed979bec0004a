# The public names of model.present, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.

from .exports import chart_text, html_report, to_csv, to_xlsx
from .palette import (
    AGENT_COLOURS,
    AXIS,
    CO2E_COLOUR,
    COST_COLOUR,
    DANGER,
    FLOW_BAND_COLOURS,
    GRID,
    LESS_COLOUR,
    MORE_COLOUR,
    NO_AGENT_COLOUR,
    PALETTE,
    PRIMARY,
    TEXT,
    agent_colour,
    rgba,
)
from .report_charts import (
    band_figure,
    by_agent_figure,
    monthly_figure,
    report_figures,
    target_figure,
    use_purchase_figure,
    waterfall_figure,
)
from .theme import FONT, TEMPLATE, house_layout, house_style, new_figure
