"""The house colours, for the dashboard: a re-export of :mod:`model.charts.palette`, where they live
(the command line's HTML report uses them too, and model code cannot import ``ui``)."""

from model.charts.palette import (AGENT_COLOURS, AXIS, CO2E_COLOUR, COST_COLOUR, DANGER, FLOW_BAND_COLOURS, GRID,
                                  LESS_COLOUR, MORE_COLOUR, MUTED, NO_AGENT_COLOUR, PALETTE, PRIMARY, TEXT,
                                  agent_colour, rgba)

__all__ = ["AGENT_COLOURS", "AXIS", "CO2E_COLOUR", "COST_COLOUR", "DANGER", "FLOW_BAND_COLOURS", "GRID",
           "LESS_COLOUR", "MORE_COLOUR", "MUTED", "NO_AGENT_COLOUR", "PALETTE", "PRIMARY", "TEXT", "agent_colour",
           "rgba"]
