"""A department's year from its case mix: totals, months, P5-P95 ranges and comparisons.

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
totals are smooth and near-linear; tests/model/year/test_year.py measures the error against direct
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
use the same draws for both scenarios, so their difference has its own P5-P95 range. With
``model_uncertainty`` the P5-P95 ranges also draw the uptake model's physiology (:mod:`model.physiology`),
and every result says what its P5-P95 ranges hold (``range_label``); :func:`physiology_spread` gives
the spread of the figures that decide practice over those draws alone.
"""

import lazy_loader as _lazy

# Each name loads its module when first used; the names are listed once, in __init__.pyi.
__getattr__, __dir__, __all__ = _lazy.attach_stub(__name__, __file__)
