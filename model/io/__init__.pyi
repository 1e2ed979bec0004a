# The public names of model.io, listed once: lazy_loader reads this stub to load each name
# on first use (PEP 562), and type checkers and the API pages read it as the package's interface.

from .casemix import casemix_from_frame, casemix_to_csv, casemix_to_frame, load_casemix, parse_casemix_text
from .plans import load_plan, parse_plan_text, plan_from_dict, plan_to_dict, plan_to_toml
from .purchases import load_purchases, read_purchases, write_purchases
from .record_files import DEFAULT_GAP_LIMIT_MIN, expand_paths, inspect_file
from .record_report import ReadReport, Records
from .records import read_records
from .scenario import load_scenario, parse_scenario_text, scenario_from_dict
from .uploads import Upload, check_upload
