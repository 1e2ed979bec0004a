"""Reduction targets: a yearly rate from the baseline, or a set tonnage by a year, and whether a period is on track.

Syntax of our own: ``-5%/year`` (five per cent a year less than the year before, compounded
from the baseline) or ``120 t by 2030`` (a straight path from the baseline to 120 t CO2e a
year in 2030). Figures are compared as annual rates (tonnes CO2e a year: a period's total
x 12 / its length in months), so a quarter can be set against a yearly path.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from model.base.errors import InputError
from model.report.periods import Period

TARGET_FORMS = (
    "-5%/year (a yearly reduction, compounded from the baseline)",
    "120 t by 2030 (tonnes CO2e a year, reached in that calendar year)",
)


@dataclass(frozen=True)
class Target:
    """A reduction target.

    Attributes
    ----------
    text : str
        As written.
    kind : {"rate", "level"}
    rate : float
        Change per year for "rate" targets, e.g. -0.05. [1/year]
    tonnes : float
        Annual emissions to reach for "level" targets. [t CO2e/year]
    year : int
        Calendar year by which the level is reached.
    """

    text: str
    kind: str
    rate: float = 0.0
    tonnes: float = 0.0
    year: int = 0

    @property
    def label(self) -> str:
        """The target in plain words, e.g. "-5 % a year from the baseline"."""
        if self.kind == "rate":
            return f"{self.rate * 100:+g} % a year from the baseline"
        return f"{self.tonnes:g} t CO2e a year by {self.year}"


def parse_target(text: str, where: str = "target") -> Target:
    """Read a target in our syntax (see ``TARGET_FORMS``).

    Raises
    ------
    InputError
        Naming ``where``, the text and the forms allowed.
    """
    raw = str(text).strip()
    s = re.sub(r"\s+", " ", raw.lower())
    allowed = "expected " + " or ".join(TARGET_FORMS)
    m = re.fullmatch(r"([+-]?\d+(?:\.\d+)?) ?% ?(?:/ ?|per |a )(?:year|yr|y)", s)
    if m:
        rate = float(m[1]) / 100.0
        if not -1.0 < rate <= 1.0:
            raise InputError(where, raw, "a yearly change between -100 % and +100 %")
        return Target(raw, "rate", rate=rate)
    m = re.fullmatch(r"(\d+(?:\.\d+)?) ?(?:t|tonnes?|t co2e) by (\d{4})", s)
    if m:
        tonnes, year = float(m[1]), int(m[2])
        if not (math.isfinite(tonnes) and 1900 <= year <= 2200):
            raise InputError(where, raw, allowed)
        return Target(raw, "level", tonnes=tonnes, year=year)
    raise InputError(where, raw, allowed)


def annual_rate_t(total_kg: float, period: Period) -> float:
    """A period's emissions as a yearly rate: total x 12 / length in months [t CO2e/year]."""
    return float(total_kg) / 1000.0 * 12.0 / period.months


def target_path_t(
    target: Target, baseline: Period, baseline_t_per_year: float, at_years, where: str = "target"
) -> np.ndarray:
    """The target path: annual emissions the target allows at decimal years ``at_years`` [t CO2e/year].

    Parameters
    ----------
    target : Target
    baseline : Period
        The path starts at the baseline's midpoint, at its annual rate.
    baseline_t_per_year : float
        The baseline's annual rate. [t CO2e/year]
    at_years : array_like
        Decimal years (e.g. a period's midpoint, 2026.5). [year]

    Returns
    -------
    ndarray
        "rate": ``B (1 + r)^(t - t_B)``; "level": a straight line from ``B`` at ``t_B`` to
        the target tonnage at the middle of the target year, flat after it.
    """
    t = np.asarray(at_years, dtype=float)
    t0 = baseline.midpoint_years
    b = float(baseline_t_per_year)
    if target.kind == "rate":
        return b * (1.0 + target.rate) ** (t - t0)
    t_end = target.year + 0.5
    if t_end <= t0:
        raise InputError(where, target.text, f"the target year must come after the baseline ({baseline.label})")
    frac = np.clip((t - t0) / (t_end - t0), 0.0, 1.0)
    return b + (target.tonnes - b) * frac


@dataclass(frozen=True)
class TargetStatus:
    """Whether a period is on track: its annual rate against the path at its midpoint."""

    target: Target
    allowed_t_per_year: float
    actual_t_per_year: float

    @property
    def on_track(self) -> bool:
        """Whether the period ran at or under the path."""
        return self.actual_t_per_year <= self.allowed_t_per_year + 1e-9

    @property
    def margin_t_per_year(self) -> float:
        """Allowed less actual: positive when under the path [t CO2e/year]."""
        return self.allowed_t_per_year - self.actual_t_per_year

    def sentence(self) -> str:
        """The status as one sentence for a report."""
        state = "on track" if self.on_track else "not on track"
        how = "under" if self.on_track else "over"
        return (
            f"Target {self.target.label}: the path allows {self.allowed_t_per_year:,.1f} t CO2e a year at "
            f"this period; it ran at {self.actual_t_per_year:,.1f} t a year, "
            f"{abs(self.margin_t_per_year):,.1f} t {how} the path: {state}."
        )


def target_status(
    target: Target, baseline: Period, baseline_kg: float, period: Period, period_kg: float, where: str = "target"
) -> TargetStatus:
    """Compare a period with the target path (annual rates, at the period's midpoint)."""
    b = annual_rate_t(baseline_kg, baseline)
    allowed = float(target_path_t(target, baseline, b, period.midpoint_years, where))
    return TargetStatus(target, allowed, annual_rate_t(period_kg, period))
