# The public names of model.year, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.

from .compare import Comparison, compare_years, nonzero_rows
from .inputs import MAX_DRAWS, MONTHS, CaseMix, CaseType, Practice, Sampling, Scenario, stretch_phase
from .result import YearResult, compute_year, headline_figures
from .simulate import YearInputs, year_inputs
