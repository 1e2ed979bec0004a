"""Trends of practice over months: monthly measures, control charts, interrupted time series.

Monthly measures from the record audit's cases, individuals and p-charts with their signal
rules, run-chart rules for short series, and segmented regression around a programme start.
"""

from model.trends.feedback import MIN_CASES, Feedback, people_list, personal_feedback, pseudonymise
from model.trends.its import InterruptedSeries, interrupted_series, newey_west_lag
from model.trends.measures import LEVELS, MEASURES, monthly_measures
from model.trends.spc import RULES, anhoj_limits, anhoj_signals, p_limits, rule_signals, signal_sentences, xmr_limits
from model.trends.summary import CHART_MEASURES, Trends, build_trends

__all__ = [
    "CHART_MEASURES",
    "Feedback",
    "InterruptedSeries",
    "LEVELS",
    "MEASURES",
    "MIN_CASES",
    "RULES",
    "Trends",
    "anhoj_limits",
    "anhoj_signals",
    "build_trends",
    "interrupted_series",
    "monthly_measures",
    "newey_west_lag",
    "p_limits",
    "people_list",
    "personal_feedback",
    "pseudonymise",
    "rule_signals",
    "signal_sentences",
    "xmr_limits",
]
