"""Trends of practice over months: monthly measures, control charts, interrupted time series.

Monthly measures from the record audit's cases, individuals and p-charts with their signal
rules, run-chart rules for short series, and segmented regression around a programme start.
"""

from model.trends.measures import LEVELS, MEASURES, monthly_measures

__all__ = ["LEVELS", "MEASURES", "monthly_measures"]
