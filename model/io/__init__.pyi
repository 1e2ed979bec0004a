# The public names of model.io, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.
# Each name is written `name as name`, a stub's mark of a re-export (PEP 484), so type
# checkers take it as public.

from .case_mix import case_mix_from_frame as case_mix_from_frame
from .case_mix import case_mix_to_csv as case_mix_to_csv
from .case_mix import case_mix_to_frame as case_mix_to_frame
from .case_mix import load_case_mix as load_case_mix
from .case_mix import parse_case_mix_text as parse_case_mix_text
from .plans import load_plan as load_plan
from .plans import parse_plan_text as parse_plan_text
from .plans import plan_from_dict as plan_from_dict
from .plans import plan_to_dict as plan_to_dict
from .plans import plan_to_toml as plan_to_toml
from .purchases import load_purchases as load_purchases
from .purchases import read_purchases as read_purchases
from .purchases import write_purchases as write_purchases
from .record_files import DEFAULT_GAP_LIMIT_MIN as DEFAULT_GAP_LIMIT_MIN
from .record_files import expand_paths as expand_paths
from .record_files import inspect_file as inspect_file
from .record_reading import ReadSummary as ReadSummary
from .record_reading import Records as Records
from .records import read_records as read_records
from .scenario import load_scenario as load_scenario
from .scenario import parse_scenario_text as parse_scenario_text
from .scenario import scenario_from_dict as scenario_from_dict
from .uploads import Upload as Upload
from .uploads import check_upload as check_upload
