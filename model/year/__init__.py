"""A department's year from its case mix: totals, months, uncertainty bands and comparisons.

How a year is computed
----------------------
Each case type runs through the circle-system model of a single case
(:func:`model.circle.simulate_cases` and :func:`model.case.simulation_totals`, the physics of
:func:`model.case.compute_case`): patient uptake, the dial the model finds for an end-tidal
target, emitted agent less the metabolised share of uptake, CO2 absorbent, inspired O2.
Simulating every sampled case would be too slow, so each sub-plan of a type (agent x with or
without N2O x following the practice change or not) is simulated once at a few durations
(:data:`NODE_Z`, spanning the type's log-normal duration), all sub-plans of an agent in ONE
vectorised call. A case's totals at any duration are interpolated linearly between those
nodes in the minutes of the stretched phase (:func:`model.year.inputs.stretch_phase`), where
totals are smooth and near-linear; tests/test_year.py measures the error against direct
simulation at random durations (under 1 %).

A type's year is the sum of its cases. Its mean is exact for the interpolated totals
(partial moments of the log-normal, :func:`piecewise_linear_moments`). Its spread comes from
the year's stretched minutes of the type, one normal draw per type and Monte Carlo draw
(central limit theorem, exact mean and variance of the log-normal less the fixed phases):
each total moves with those minutes by its regression slope on them, which carries at least
``variance_explained`` (R^2, above 0.98 for the demo mix) of the per-case variance.

Uncertainty (seeded, reproducible): per draw, the year's minutes of each type, the share
of cases following the practice change (triangular), every unit price (log-normal around
the given price), and the GWP source (drawn among the listed ones). Paired comparisons
use the same draws for both scenarios, so their difference has its own band.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from model.lazy import lazy_exports

# Each public name and the module it lives in. A module is imported when one of its names is
# first used (PEP 562), not with the package: the case-mix format needs only
# model.year.inputs, and the year's model (scipy.special) loads when a year is computed.
_HOME = {name: module for module, names in {
    "model.year.inputs": ["MAX_DRAWS", "MONTHS", "CaseMix", "CaseType", "Practice", "Sampling", "Scenario",
                          "stretch_phase"],
    "model.year.result": ["YearResult", "compute_year", "headline_figures"],
    "model.year.compare": ["Comparison", "compare_years", "nonzero_rows"],
    "model.year.simulate": ["YearInputs", "year_inputs"],
}.items() for name in names}

__all__ = [
    "CaseMix", "CaseType", "Comparison", "MAX_DRAWS", "MONTHS", "Practice", "Sampling", "Scenario",
    "YearInputs", "YearResult", "compare_years", "compute_year", "headline_figures", "nonzero_rows",
    "stretch_phase", "year_inputs",
]


__getattr__, __dir__ = lazy_exports(__name__, _HOME, globals(), __all__)


if TYPE_CHECKING:   # what static tools read (type checkers, the API pages); at run time __getattr__ imports
    from model.year.inputs import MAX_DRAWS, MONTHS, CaseMix, CaseType, Practice, Sampling, Scenario, stretch_phase
    from model.year.result import YearResult, compute_year, headline_figures
    from model.year.compare import Comparison, compare_years, nonzero_rows
    from model.year.simulate import YearInputs, year_inputs
