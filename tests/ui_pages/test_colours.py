"""Flow bands on one ordered colour-blind-safe scale, and one colour per agent on every page.

Defect 15 of issue 12: the flow-band chart ran backwards (low flow red, high flow green) and
an agent took a different colour on each page.
"""

from __future__ import annotations

from model.freshgas import FLOW_BAND_NAMES
from model.present.palette import AGENT_COLOURS, FLOW_BAND_COLOURS
from tests.helpers.pages import page


def _figures(at):
    import json

    return [json.loads(c.proto.spec) for c in at.get("plotly_chart")]


def _relative_luminance(hex_colour: str) -> float:
    # Source: W3C, Web Content Accessibility Guidelines 2.1, definition of relative luminance
    # (sRGB channels linearised, weights 0.2126, 0.7152, 0.0722).
    h = hex_colour.lstrip("#")
    lin = []
    for i in (0, 2, 4):
        c = int(h[i : i + 2], 16) / 255
        lin.append(c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4)
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def test_flow_band_scale_darkens_steadily_from_the_lowest_to_the_highest_flow():
    """Defect 15: an ordered scale reads the same way without hue (colour-blind readers, grey print)."""
    lum = [_relative_luminance(FLOW_BAND_COLOURS[b]) for b in FLOW_BAND_NAMES]
    # Source: Tol P., "Colour Schemes", SRON/EPS/TN/09-002 (2021) - a sequential scheme is
    # ordered in lightness, so each band must be darker than the one below it.
    assert all(a > b for a, b in zip(lum, lum[1:], strict=False)), lum
    # Adjacent bands stay apart: a WCAG contrast ratio of at least 1.15 between neighbours
    # (common practice, no source), and the lowest band shows on white (ratio over 1.2).
    ratio = [(a + 0.05) / (b + 0.05) for a, b in zip(lum, lum[1:], strict=False)]
    assert min(ratio) > 1.15, ratio
    assert (1.05) / (lum[0] + 0.05) > 1.2


def test_record_audit_flow_bands_follow_the_scale_and_agents_keep_their_colours():
    """Defect 15: the flow-band bars use the ordered scale, lowest flow first.

    The per-case spread draws each agent in its house colour.
    """
    at = page("record_audit.py")
    figs = {f["layout"]["title"]["text"]: f for f in _figures(at)}
    bands = figs["Time in each fresh gas flow band, by theatre"]
    drawn = [(t["name"], t["marker"]["color"]) for t in bands["data"]]
    assert drawn == list(FLOW_BAND_COLOURS.items())
    spread = figs["Liquid agent per case: spread by agent"]
    for trace in spread["data"]:
        assert trace["marker"]["color"] == AGENT_COLOURS[trace["name"].lower()], trace["name"]


def test_department_year_draws_each_agent_in_the_same_colour():
    """Defect 15: the year's bottle and CO2e charts use the same agent colours as the audit."""
    at = page("department_year.py")
    figs = {f["layout"]["title"]["text"]: f for f in _figures(at)}
    bottles = figs["Bottles bought per month"]
    assert bottles["data"]
    for trace in bottles["data"]:
        assert trace["marker"]["color"] == AGENT_COLOURS[trace["name"].lower()], trace["name"]
    by_source = figs["CO2e by source"]["data"][0]
    for name, colour in zip(by_source["y"], by_source["marker"]["color"], strict=False):
        assert colour == AGENT_COLOURS[name.lower().replace(" ", "_")], name


def _hue_degrees(hex_colour: str) -> float:
    import colorsys

    h = hex_colour.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) / 255 for i in (0, 2, 4))
    return colorsys.rgb_to_hsv(r, g, b)[0] * 360


def _hue_distance(a: float, b: float) -> float:
    d = abs(a - b) % 360
    return min(d, 360 - d)


# Source: ISO 5360, Anaesthetic vaporizers - Agent-specific filling systems, its colour code
# (from memory): sevoflurane yellow, desflurane blue, isoflurane purple, halothane red,
# enflurane orange. The hue ranges of the colour names are common practice, no source.
_ISO_5360_HUES = {
    "sevoflurane": (40.0, 60.0),
    "desflurane": (200.0, 240.0),
    "isoflurane": (265.0, 300.0),
    "halothane": (330.0, 360.0),
    "enflurane": (20.0, 40.0),
}


def test_agent_colours_follow_the_international_agent_colour_code():
    """Issue 22, defect 12: each volatile agent takes the hue practitioners know from its vaporizer."""
    for agent, (low, high) in _ISO_5360_HUES.items():
        hue = _hue_degrees(AGENT_COLOURS[agent])
        assert low <= hue <= high, (agent, AGENT_COLOURS[agent], hue)


def test_flow_bands_use_a_hue_no_agent_uses():
    """Issue 22, defect 12: the flow bands stay on their own scale, never mistaken for an agent."""
    agent_hues = [_hue_degrees(AGENT_COLOURS[a]) for a in _ISO_5360_HUES]
    for band, colour in FLOW_BAND_COLOURS.items():
        nearest = min(_hue_distance(_hue_degrees(colour), h) for h in agent_hues)
        # Hues 45 degrees apart are told apart at a glance (common practice, no source).
        assert nearest >= 45, (band, colour, nearest)
