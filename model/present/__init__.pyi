# The public names of model.present, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.
# Each name is written `name as name`, a stub's mark of a re-export (PEP 484), so type
# checkers take it as public.

from .exports import chart_text as chart_text
from .exports import html_export as html_export
from .exports import to_csv as to_csv
from .exports import to_xlsx as to_xlsx
from .palette import AGENT_COLOURS as AGENT_COLOURS
from .palette import AXIS as AXIS
from .palette import CO2E_COLOUR as CO2E_COLOUR
from .palette import COST_COLOUR as COST_COLOUR
from .palette import DANGER as DANGER
from .palette import FLOW_BAND_COLOURS as FLOW_BAND_COLOURS
from .palette import GRID as GRID
from .palette import LESS_COLOUR as LESS_COLOUR
from .palette import MORE_COLOUR as MORE_COLOUR
from .palette import NO_AGENT_COLOUR as NO_AGENT_COLOUR
from .palette import PALETTE as PALETTE
from .palette import PRIMARY as PRIMARY
from .palette import TEXT as TEXT
from .palette import agent_colour as agent_colour
from .palette import rgba as rgba
from .report_charts import by_agent_figure as by_agent_figure
from .report_charts import flow_band_figure as flow_band_figure
from .report_charts import monthly_figure as monthly_figure
from .report_charts import report_figures as report_figures
from .report_charts import target_figure as target_figure
from .report_charts import use_purchase_figure as use_purchase_figure
from .report_charts import waterfall_figure as waterfall_figure
from .stock_charts import stock_chart as stock_chart
from .theme import FONT as FONT
from .theme import TEMPLATE as TEMPLATE
from .theme import house_layout as house_layout
from .theme import house_style as house_style
from .theme import new_figure as new_figure
from .trend_charts import control_chart_figure as control_chart_figure
from .trend_charts import trends_html as trends_html
