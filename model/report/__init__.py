"""The emissions report, read from the record audit's results.

Reporting periods, sites, intensity, baseline and target, and the LMDI decomposition of
what drove the change.
"""

from model.report.lmdi import FACTORS, Decomposition, PeriodMix, decompose, lmdi_additive, logmean
from model.report.periods import Period, month_shares, parse_period
from model.report.report import EmissionsReport, PeriodReport, build_report
from model.report.target import Target, TargetStatus, parse_target, target_path_t, target_status

__all__ = [
    "Decomposition",
    "EmissionsReport",
    "FACTORS",
    "Period",
    "PeriodMix",
    "PeriodReport",
    "Target",
    "TargetStatus",
    "build_report",
    "decompose",
    "lmdi_additive",
    "logmean",
    "month_shares",
    "parse_period",
    "parse_target",
    "target_path_t",
    "target_status",
]
