# The public names of model.year, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.
# Each name is written `name as name`, a stub's mark of a re-export (PEP 484), so type
# checkers take it as public.

from .compare import Comparison as Comparison
from .compare import compare_years as compare_years
from .compare import nonzero_rows as nonzero_rows
from .inputs import MAX_DRAWS as MAX_DRAWS
from .inputs import MONTHS as MONTHS
from .inputs import CaseMix as CaseMix
from .inputs import CaseType as CaseType
from .inputs import Practice as Practice
from .inputs import Sampling as Sampling
from .inputs import Scenario as Scenario
from .inputs import stretch_phase as stretch_phase
from .result import YearResult as YearResult
from .result import compute_year as compute_year
from .result import headline_figures as headline_figures
from .simulate import YearInputs as YearInputs
from .simulate import year_inputs as year_inputs
from .uncertainty import PhysiologySpread as PhysiologySpread
from .uncertainty import low_flow_target_plan as low_flow_target_plan
from .uncertainty import physiology_spread as physiology_spread
from .uncertainty import sensitivity_table as sensitivity_table
