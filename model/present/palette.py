"""The house colours: one colour per agent, one ordered scale for flow bands, the theme's accents.

Every page, chart and report takes its colours from here (the dashboard through
``model.present.palette``, which re-exports this module), so an agent has the same colour wherever it
appears and the flow bands always run the same way. ``.streamlit/config.toml`` repeats the
theme colours (Streamlit reads only that file); ``tests/test_config.py`` checks the two agree.
"""

from __future__ import annotations

from types import MappingProxyType

from model.freshgas import FLOW_BAND_NAMES

__all__ = [
    "AGENT_COLOURS",
    "AXIS",
    "CO2E_COLOUR",
    "COST_COLOUR",
    "DANGER",
    "FLOW_BAND_COLOURS",
    "GRID",
    "LESS_COLOUR",
    "MORE_COLOUR",
    "NO_AGENT_COLOUR",
    "PALETTE",
    "PRIMARY",
    "TEXT",
    "agent_colour",
    "rgba",
]

#: Accent of buttons, chips and focus rings: a calm teal-blue (never red, which means danger).
PRIMARY = "#1f6b7a"
TEXT = "#1d2a33"
GRID = "#e3e9ec"
AXIS = "#9aa8b0"
#: Real danger only: the inspired O2 floor, errors.
DANGER = "#c62828"

#: Categorical colours of our own, in the order charts use them (first = the house accent).
#: Neighbours differ in lightness as well as hue, so they stay apart for colour-blind readers.
PALETTE = ("#1f6b7a", "#d08a2b", "#7a5c9e", "#5b8c3a", "#8a8178", "#4f8fb3", "#34454f", "#c2b280")
#: Colours of measures that are not an agent: cost, CO2e, and a change up or down.
COST_COLOUR = PALETTE[5]
CO2E_COLOUR = PALETTE[6]
LESS_COLOUR = PALETTE[5]
MORE_COLOUR = "#a8661c"

#: One colour per agent on every page and export: the hues of the international colour code
#: for anaesthetic agents that practitioners know from vaporizers, bottles and filling adaptors
#: (ISO 5360, Anaesthetic vaporizers - Agent-specific filling systems: sevoflurane yellow,
#: desflurane blue, isoflurane purple, halothane red, enflurane orange; from memory). The
#: shades are ours, dark enough to read as lines and bars on white (the code's yellow is
#: taken as a deep gold). Halothane's red is kept apart from the danger red by a bluer shade.
#: Nitrous oxide, a gas with no ISO 5360 colour, is a warm grey.
AGENT_COLOURS = MappingProxyType(
    {
        "sevoflurane": "#d4a20a",
        "desflurane": "#1f5fbf",
        "isoflurane": "#7b3fa0",
        "halothane": "#b0304f",
        "enflurane": "#e07b1a",
        "nitrous_oxide": PALETTE[4],
    }
)
#: Cases with no volatile agent (records with agent "none").
NO_AGENT_COLOUR = "#b8c4ca"

#: Flow bands (Baker 1994), lowest flow first, on one sequential scale that darkens as the
#: flow rises, in a hue no agent uses (green), so a band is never read as an agent: six steps
#: of the single-hue "Greens" sequential scheme of ColorBrewer (Harrower M., Brewer C.A.,
#: "ColorBrewer.org: an online tool for selecting colour schemes for maps", The Cartographic
#: Journal 40(1):27-37, 2003), ordered in lightness so it reads the same way for colour-blind
#: readers and in grey print. The palest steps are left out so the lowest band shows on white.
FLOW_BAND_COLOURS = MappingProxyType(
    dict(zip(FLOW_BAND_NAMES, ("#c7e9c0", "#a1d99b", "#74c476", "#41ab5d", "#238b45", "#005a32"), strict=True))
)


def agent_colour(agent: str) -> str:
    """The colour of an agent (any case; unknown names and "none" get a neutral grey)."""
    return AGENT_COLOURS.get(str(agent).strip().lower().replace(" ", "_"), NO_AGENT_COLOUR)


def rgba(hex_colour: str, alpha: float) -> str:
    """A hex colour as CSS ``rgba(...)`` with the given opacity (for bands and fills)."""
    h = hex_colour.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha:g})"
