"""Figures of the Emissions report page: a re-export of :mod:`model.charts.report`, where they live,
so the page, its HTML download and ``gas-ledger report --html`` share one set of builders."""

from model.charts.report import (band_figure, by_agent_figure, monthly_figure, report_figures, target_figure,
                                 use_purchase_figure, waterfall_figure)

__all__ = ["band_figure", "by_agent_figure", "monthly_figure", "report_figures", "target_figure",
           "use_purchase_figure", "waterfall_figure"]
