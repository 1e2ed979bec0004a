"""The emissions report: a period's figures, against a baseline and a target, with what drove the change.

:func:`build_report` gathers everything the dashboard page, the command line and the
exports show; each part it cannot work out (no baseline, a baseline without cases, no
purchases) is left empty with its reason in ``problems``, and the rest stands.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from model.base.errors import InputError
from model.base.jsonable import to_json_value
from model.reference import DEFAULT_GWP, DEFAULT_REFERENCE, Reference
from model.report.figures import (
    NO_SITE,
    SITE_NOTES,
    UNASSIGNED,
    PurchaseFigures,
    assign_sites,
    by_agent_table,
    cases_in,
    grouped_table,
    gwp_sources_shown,
    match_purchase_sites,
    period_mix,
    purchase_figures,
    purchases_name_sites,
    sites_against_purchases,
    use_against_purchases,
    use_figures,
)
from model.report.lmdi import FACTORS, Decomposition, decompose
from model.report.periods import Period
from model.report.target import Target, TargetStatus, annual_rate_t, target_status

#: What the report counts and what it leaves out (method statement; common practice of
#: scope 1 reporting in the GHG Protocol's sense, no further source).
COUNTED = (
    "Scope 1 emissions of inhaled anaesthetics: the volatile agents and nitrous oxide released to the "
    "atmosphere from the department's theatres.",
    "Use-based figures come from the case records: liquid agent by Dion's formula (Can J Anaesth 1992;"
    "39:633-4) over the recorded fresh gas flows and dial settings (end-tidal where no dial is recorded, a "
    "lower bound), nitrous oxide from its recorded flow by the ideal gas law. Every delivered gram counts as "
    "emitted, less any capture efficiency set: records carry no patient, so metabolism (a few per cent of the "
    "agent taken up for sevoflurane, much less for desflurane and isoflurane) is not subtracted, which "
    "slightly overstates emissions.",
    "Purchase-based figures count everything bought in the period's months as emitted (liquid mass from "
    "volume and density, gas mass by the ideal gas law). The gap to use-based figures is stock held over, "
    "wastage, use not recorded and, for piped nitrous oxide, losses from manifolds and pipework. When the "
    "purchases name the site each was bought for, a site's purchase-based figure is its own purchases; "
    "purchases with no site are counted on their own.",
    "Not counted: scope 2 and 3 emissions (manufacture, transport and disposal of agents and absorbent, "
    "energy of scavenging and ventilation), intravenous anaesthesia, nitrous oxide used outside theatres "
    "(maternity, emergency department) unless it is in the records or purchases given.",
)


@dataclass
class PeriodReport:
    """Use-based (and purchase-based) figures of one period."""

    period: Period
    gwp_source: str
    gwp_sources: tuple
    cases: pd.DataFrame
    figures: dict
    by_agent: pd.DataFrame
    by_month: pd.DataFrame
    by_site: pd.DataFrame
    purchases: PurchaseFigures | None = None
    use_vs_purchase: pd.DataFrame | None = None
    #: Use-based and purchase-based side by side by site
    #: (:func:`model.report.figures.sites_against_purchases`); None unless the purchases name sites.
    use_vs_purchase_by_site: pd.DataFrame | None = None
    #: What the purchase-based figures cover when sites are chosen (a caution; "" when all sites).
    purchase_scope: str = ""

    @property
    def co2e_t(self) -> float:
        """Use-based CO2e under the chosen source, in tonnes."""
        return float(self.figures["co2e_t"][self.gwp_source])

    @property
    def annual_t(self) -> float:
        """Use-based CO2e at its annual rate, in tonnes per year."""
        return annual_rate_t(self.co2e_t * 1000.0, self.period)


@dataclass
class EmissionsReport:
    """Everything the report shows. See :func:`build_report`."""

    title: str
    reference: Reference
    period: PeriodReport
    baseline: PeriodReport | None = None
    decomposition: Decomposition | None = None
    target: TargetStatus | None = None
    sites: dict | None = None
    chosen_sites: tuple = ()
    problems: list[InputError] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)
    #: What the audit's absorbent figures are (``AuditResult.absorbent_note()``), for the method.
    absorbent_note: str = ""

    @property
    def gwp_label(self) -> str:
        """The label of the period's GWP source."""
        return self.reference.gwp_source(self.period.gwp_source).label

    @property
    def mixes_gwp_sources(self) -> bool:
        """Whether the baseline is under another GWP source than the period."""
        return self.baseline is not None and self.baseline.gwp_source != self.period.gwp_source

    def like_for_like_baseline_t(self) -> float | None:
        """The baseline's CO2e under the period's GWP source, in tonnes (None without a baseline).

        Set against the period, it gives the like-for-like change: what changed in practice,
        with the GWP values held the same.
        """
        if self.baseline is None:
            return None
        b = self.baseline
        return float(b.figures["co2e_t"].get(self.period.gwp_source, b.co2e_t))

    def source_effect_t(self) -> float:
        """The part of the change as given that is the change of GWP source alone [t CO2e].

        Baseline under the period's source less the baseline under its own source, so that
        like-for-like change + source effect = the change between the two figures as given
        (at the annual rate when the periods differ in length). 0 when the sources are the same.
        """
        like = self.like_for_like_baseline_t()
        if like is None or not self.mixes_gwp_sources:
            return 0.0
        assert self.baseline is not None
        gap = self.baseline.co2e_t - like
        if not self._same_length():
            gap = annual_rate_t(gap * 1000.0, self.baseline.period)
        return float(-gap)

    def _same_length(self) -> bool:
        assert self.baseline is not None
        return abs(self.period.period.months - self.baseline.period.months) < 1e-9

    def headline(self) -> str:
        """One sentence: the period's tonnes, against the baseline and the target.

        When the baseline is under another GWP source, the change stated first is like for
        like (the baseline under the period's source), and the effect of the source beside it.
        """
        p = self.period
        text = (
            f"Scope 1 anaesthetic emissions, {p.period.label}: {p.co2e_t:,.1f} t CO2e ({self.gwp_label}, "
            f"use-based, from {p.figures['cases']:,} cases)"
        )
        if self.baseline is not None:
            b = self.baseline
            like = self.like_for_like_baseline_t()
            assert like is not None
            same = self._same_length()
            now, then = (p.co2e_t, like) if same else (p.annual_t, annual_rate_t(like * 1000.0, b.period))
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                change = now / then - 1.0 if then > 0 else math.nan
            word = "down" if change < 0 else "up"
            pct = f"{abs(change) * 100:.0f} %" if math.isfinite(change) else ""
            rate = "" if same else " a year"
            if not same:
                text += f", {now:,.1f} t a year"
            if not math.isfinite(change):
                # No percentage of nothing (or of next to nothing): say why instead of "up nan %".
                why = (
                    "no anaesthetic hours"
                    if not b.figures["hours"] > 0
                    else "no emissions"
                    if not then > 0
                    else "emissions too small to compare with"
                )
                text += f"; the change on {b.period.label} cannot be given as a percentage: the baseline has {why}"
            elif self.mixes_gwp_sources:
                own = b.co2e_t if same else b.annual_t
                effect = self.source_effect_t()
                text += (
                    f"{':' if not same else ','} {word} {pct} on {b.period.label} like for like "
                    f"({then:,.1f} t{rate}, both under "
                    f"{self.gwp_label}); beside it, the change of GWP source from the baseline's "
                    f"{self.reference.gwp_source(b.gwp_source).label} ({own:,.1f} t{rate}) "
                    f"{'adds' if effect >= 0 else 'takes off'} {abs(effect):,.1f} t{rate}"
                )
            else:
                text += f"{':' if not same else ','} {word} {pct} on {b.period.label} ({then:,.1f} t{rate})"
        if self.target is not None:
            text += "; " + ("on track" if self.target.on_track else "not on track") + f" for {self.target.target.label}"
        return text + "."

    def sentences(self) -> list[tuple[str, str]]:
        """(factor, sentence) for each part of the change."""
        if self.decomposition is None or self.baseline is None:
            return []
        return driver_sentences(
            self.decomposition,
            self.baseline.figures,
            self.period.figures,
            self.baseline.gwp_source,
            self.period.gwp_source,
            self.reference,
        )

    def figures_table(self) -> pd.DataFrame:
        """The period's key figures (and the baseline's, when there is one), one row each."""
        cols = [("period", self.period)] + ([("baseline", self.baseline)] if self.baseline else [])
        rows = []

        def add(name, unit, fn):
            row = {"figure": name, "unit": unit}
            for label, pr in cols:
                try:
                    v = fn(pr)
                except (KeyError, TypeError):
                    v = None
                row[f"{label}: {pr.period.text}"] = v
            rows.append(row)

        for s in self.period.gwp_sources:
            lab = self.reference.gwp_source(s).label
            add(f"CO2e, use-based ({lab})", "t CO2e", lambda pr, s=s: pr.figures["co2e_t"][s])
        add("of which volatile agents", "t CO2e", lambda pr: pr.figures["co2e_agent_t"][pr.gwp_source])
        add("of which nitrous oxide", "t CO2e", lambda pr: pr.figures["co2e_n2o_t"][pr.gwp_source])
        if self.period.purchases is not None:
            lab = f"t CO2e ({self.gwp_label})"
            add(
                f"CO2e, purchase-based ({self.gwp_label})",
                "t CO2e",
                lambda pr: pr.purchases.co2e_t(lab) if pr.purchases is not None else None,
            )
        add("Cases", "cases", lambda pr: pr.figures["cases"])
        add("Anaesthetic hours", "h", lambda pr: pr.figures["hours"])
        add("CO2e per case", "kg CO2e", lambda pr: pr.figures["kg_per_case"])
        add("CO2e per anaesthetic hour", "kg CO2e/h", lambda pr: pr.figures["kg_per_hour"])
        add("N2O per case", "L", lambda pr: pr.figures["n2o_l_per_case"])
        add("N2O CO2e per case", "kg CO2e", lambda pr: pr.figures["n2o_kg_co2e_per_case"])
        add("Time-weighted fresh gas flow", "L/min", lambda pr: pr.figures["fgf_l_min"])
        for band in self.period.figures["band_share"]:
            add(
                f"Share of anaesthetic time at {band} flow", "%", lambda pr, b=band: 100.0 * pr.figures["band_share"][b]
            )
        add("CO2 absorbent", "kg", lambda pr: pr.figures["absorbent_kg"])
        add(
            "Cost (agents and gases" + (", absorbent)" if self.period.figures["absorbent_kg"] is not None else ")"),
            self.reference.prices.currency,
            lambda pr: pr.figures["cost"],
        )
        return pd.DataFrame(rows)

    def decomposition_table(self) -> pd.DataFrame:
        """The parts of the change by factor, in t CO2e, with each agent's share of the part."""
        d = self.decomposition
        if d is None:
            return pd.DataFrame(columns=["factor", "t_co2e", "detail"])
        rows = []
        for f in FACTORS:
            part = d.detail[(d.detail["factor"] == f) & (d.detail["contribution_kg"].abs() > 1e-9)]
            detail = ", ".join(
                f"{_name(t)} {v / 1000:+,.2f} t" for t, v in zip(part["term"], part["contribution_kg"], strict=True)
            )
            rows.append({"factor": f, "t_co2e": d.contribution(f) / 1000.0, "detail": detail})
        rows.append({"factor": "total change", "t_co2e": d.change_kg / 1000.0, "detail": ""})
        return pd.DataFrame(rows)

    def method_statement(self) -> list[str]:
        """What is counted and how, with the source of every factor used."""
        ref = self.reference
        lines = list(COUNTED)
        src = ref.gwp_source(self.period.gwp_source)
        lines.append(
            f"GWP source used for the headline: {src.label} ({src.horizon_years}-year horizon; "
            f"{src.citation}). Shown beside it: "
            + ", ".join(ref.gwp_source(s).label for s in self.period.gwp_sources[1:])
            + "."
        )
        if self.baseline is not None and self.baseline.gwp_source != self.period.gwp_source:
            lines.append(
                f"The baseline is worked out under {ref.gwp_source(self.baseline.gwp_source).label}; the "
                "change of source is its own part of the decomposition."
            )
        for s in self.period.gwp_sources:
            g = ref.gwp_sources[s]
            vals = "; ".join(
                f"{_name(a)} {v.value:g} ({v.source})"
                for a, v in g.values.items()
                if v.value is not None
                and a in ("sevoflurane", "desflurane", "isoflurane", "halothane", "nitrous_oxide")
            )
            lines.append(f"{g.label}, kg CO2e per kg: {vals}.")
        for a in ("sevoflurane", "desflurane", "isoflurane", "nitrous_oxide"):
            ag = ref.agents[a]
            parts = []
            for key, name in (("molar_mass", "molar mass"), ("liquid_density", "liquid density")):
                v = ag.values.get(key)
                if v is not None and v.value is not None:
                    parts.append(f"{name} {v.value:g} {v.unit} ({_no_trade_name(v.source)})")
            lines.append(f"{ag.label}: " + "; ".join(parts) + ".")
        lines.append(
            "What drove the change: additive LMDI-I decomposition (Ang B.W., Energy Policy 2005;33:867-71) "
            "of the change in CO2e into activity (anaesthetic hours), agent mix (share of hours per agent), "
            "intensity within an agent (kg of agent emitted per hour of that agent: flow and dial practice), "
            "N2O use (kg N2O per anaesthetic hour) and GWP source. The parts add exactly to the total change. "
            "An agent used in one period only is handled by the analytical limits of Ang B.W. and Liu N. "
            "(Energy Policy 2007;35:238-46): its whole change goes to the agent mix."
        )
        if self.absorbent_note and self.period.figures["absorbent_kg"] is not None:
            lines.append("CO2 absorbent (in the cost, not in CO2e): " + self.absorbent_note)
        lines.append(
            "Targets compare annual rates (a period's total x 12 / its length in months); a yearly "
            "reduction is compounded from the baseline's midpoint, a tonnage by a year is a straight "
            "path from the baseline to that year's middle."
        )
        lines.append(
            "Cases are counted in a period by their start (first sample, or the case date); purchases by "
            "their month, a month partly inside a date range by its share of days."
        )
        return lines

    def tables(self) -> dict[str, pd.DataFrame]:
        """Every table of the report, by sheet name (for xlsx and the page)."""
        t = {
            "Figures": self.figures_table(),
            "By agent": self.period.by_agent,
            "By month": self.period.by_month,
            "By site": self.period.by_site,
        }
        if self.baseline is not None:
            t["Baseline by agent"] = self.baseline.by_agent
        if self.decomposition is not None:
            t["What drove the change"] = self.decomposition_table()
        purchases = self.period.purchases
        if self.period.use_vs_purchase is not None and purchases is not None:
            t["Use and purchases"] = self.period.use_vs_purchase
            t["Purchases by item"] = purchases.by_item
        if self.period.use_vs_purchase_by_site is not None and purchases is not None:
            t["Use and purchases by site"] = self.period.use_vs_purchase_by_site
            t["Purchases by site"] = purchases.by_site
        if self.sites:
            t["Sites"] = pd.DataFrame(sorted(self.sites.items()), columns=["theatre", "site"])
        return t

    def notes(self) -> list[str]:
        """Headline, sentences, method statement, cautions and problems as lines (xlsx notes sheet)."""
        out = [self.title, self.headline()]
        out += [s for _, s in self.sentences()]
        if self.target is not None:
            out.append(self.target.sentence())
        out += ["Method: " + m for m in self.method_statement()]
        out += ["Caution: " + c for c in self.cautions]
        out += ["Not worked out: " + str(p) for p in self.problems]
        return out

    def to_dict(self) -> dict:
        """Machine-readable form (stable keys, units in the names)."""

        def table(df):
            return [{k: to_json_value(v) for k, v in r.items()} for r in df.to_dict("records")]

        def per(pr: PeriodReport | None):
            if pr is None:
                return None
            f = pr.figures
            return {
                "period": pr.period.text,
                "label": pr.period.label,
                "start": pr.period.start.isoformat(),
                "last_day": pr.period.last_day.isoformat(),
                "gwp_source": pr.gwp_source,
                "cases": f["cases"],
                "anaesthetic_hours": f["hours"],
                "t_co2e": {s: to_json_value(v) for s, v in f["co2e_t"].items()},
                "t_co2e_agents": {s: to_json_value(v) for s, v in f["co2e_agent_t"].items()},
                "t_co2e_nitrous_oxide": {s: to_json_value(v) for s, v in f["co2e_n2o_t"].items()},
                "t_co2e_per_year": to_json_value(pr.annual_t),
                "kg_co2e_per_case": to_json_value(f["kg_per_case"]),
                "kg_co2e_per_hour": to_json_value(f["kg_per_hour"]),
                "n2o_l_per_case": to_json_value(f["n2o_l_per_case"]),
                "n2o_kg_co2e_per_case": to_json_value(f["n2o_kg_co2e_per_case"]),
                "time_weighted_fgf_l_min": to_json_value(f["fgf_l_min"]),
                "flow_band_share_of_time": {b: to_json_value(v) for b, v in f["band_share"].items()},
                "absorbent_kg": to_json_value(f["absorbent_kg"]),
                "cost": to_json_value(f["cost"]),
                "by_agent": table(pr.by_agent),
                "by_month": table(pr.by_month),
                "by_site": table(pr.by_site),
                "purchase_based": None if pr.purchases is None else table(pr.purchases.by_item),
                "use_and_purchases": None if pr.use_vs_purchase is None else table(pr.use_vs_purchase),
                "purchase_based_by_site": (
                    None if pr.purchases is None or pr.purchases.by_site is None else table(pr.purchases.by_site)
                ),
                "use_and_purchases_by_site": (
                    None if pr.use_vs_purchase_by_site is None else table(pr.use_vs_purchase_by_site)
                ),
                "purchase_scope": pr.purchase_scope or None,
            }

        d = self.decomposition
        return {
            "title": self.title,
            "headline": self.headline(),
            "gwp_source": self.period.gwp_source,
            "gwp_source_label": self.gwp_label,
            "currency": self.reference.prices.currency,
            "sites": self.sites,
            "chosen_sites": list(self.chosen_sites),
            "period": per(self.period),
            "baseline": per(self.baseline),
            "change": None
            if d is None
            else {
                "t_co2e": d.change_kg / 1000.0,
                "zero_handling": d.zero_handling,
                "by_factor_t_co2e": {f: d.contribution(f) / 1000.0 for f in FACTORS},
                "detail": table(d.detail),
                "sentences": [s for _, s in self.sentences()],
            },
            "target": None
            if self.target is None
            else {
                "target": self.target.target.text,
                "label": self.target.target.label,
                "allowed_t_per_year": self.target.allowed_t_per_year,
                "actual_t_per_year": self.target.actual_t_per_year,
                "on_track": self.target.on_track,
                "sentence": self.target.sentence(),
            },
            "method": self.method_statement(),
            "cautions": list(self.cautions),
            "not_worked_out": [str(p) for p in self.problems],
        }


_NAMES = {"nitrous_oxide": "N2O"}
_TRADE = re.compile(r"(prescribing information) \([A-Z][\w-]*(?:/[A-Z][\w-]*)*\)")


def _no_trade_name(source: str) -> str:
    """A source cited by substance and document type only (a product name in brackets dropped)."""
    return _TRADE.sub(r"\1", str(source))


def _name(term: str) -> str:
    return _NAMES.get(term, term)


def period_report(
    cases: pd.DataFrame,
    period: Period,
    reference: Reference,
    gwp_source: str,
    sites=None,
    chosen_sites=None,
    purchases: pd.DataFrame | None = None,
    where: str = "period",
    site_field: str = "site",
    also=(),
) -> PeriodReport:
    """Figures of one period (see :class:`PeriodReport`).

    They are worked out under ``gwp_source`` first, AR5 and AR6 GWP100 and the sources
    ``also``. Raises InputError when no case starts in it.
    """
    sources = tuple(dict.fromkeys((*gwp_sources_shown(gwp_source, reference), *also)))
    c = cases_in(cases, period, sites, chosen_sites, where, site_field)
    f = use_figures(c, reference, sources)
    pr = PeriodReport(
        period,
        gwp_source,
        sources,
        c,
        f,
        by_agent_table(c, reference, sources),
        grouped_table(c, "month", reference, gwp_source),
        grouped_table(c, "site", reference, gwp_source),
    )
    if purchases is not None:
        named = purchases_name_sites(purchases)
        bought = purchases
        if named:
            known = sorted(set(assign_sites(cases["theatre"], sites)))
            bought = purchases.assign(site=match_purchase_sites(purchases["site"], known))
            if chosen_sites:
                bought = bought[bought["site"].isin(list(chosen_sites))]
        pr.purchases = purchase_figures(bought, period, reference, sources, by_site=named)
        pr.use_vs_purchase = use_against_purchases(c, pr.purchases, reference, gwp_source)
        if named:
            pr.use_vs_purchase_by_site = sites_against_purchases(pr.by_site, pr.purchases, reference, gwp_source, known)
        if chosen_sites:
            pr.purchase_scope = _purchase_scope(
                purchases, named, bought, period, reference, gwp_source, tuple(chosen_sites)
            )
    return pr


def _purchase_scope(
    purchases, named: bool, bought, period: Period, reference: Reference, gwp_source: str, chosen: tuple
) -> str:
    """A sentence saying what the purchase-based figures cover when only some sites are reported."""
    names = ", ".join(chosen)
    if not named:
        return (
            f"The purchases name no site, so the purchase-based figures are for all sites (every purchase in "
            f"the files), while the use-based figures are of the chosen sites only ({names}): the gap between "
            "them is not those sites' gap."
        )
    label = f"t CO2e ({reference.gwp_source(gwp_source).label})"
    whole = purchase_figures(purchases, period, reference, (gwp_source,), by_site=False).co2e_t(label)
    mine = purchase_figures(bought, period, reference, (gwp_source,), by_site=False).co2e_t(label)
    return (
        f"Purchase-based figures are of the chosen sites' purchases only ({names}); "
        f"{whole - mine:,.1f} t CO2e bought in the period for other sites or with no site is left out."
    )


def build_report(
    cases: pd.DataFrame,
    period: Period,
    baseline: Period | None = None,
    *,
    reference: Reference = DEFAULT_REFERENCE,
    gwp_source: str = DEFAULT_GWP,
    baseline_gwp_source: str | None = None,
    purchases: pd.DataFrame | None = None,
    sites: dict | None = None,
    chosen_sites=(),
    target: Target | None = None,
    title: str = "Anaesthetic emissions report",
    absorbent_note: str = "",
    fields: dict | None = None,
) -> EmissionsReport:
    """The emissions report of ``period`` against ``baseline`` and ``target``.

    Parameters
    ----------
    cases : DataFrame
        The case table of a record audit (:attr:`model.audit.result.AuditResult.cases`) that
        covers both periods.
    period, baseline : Period
        The reporting period and the period compared with (optional).
    reference : Reference
    gwp_source, baseline_gwp_source : str
        GWP source of the period (headline) and of the baseline (default: the same).
    purchases : DataFrame, optional
        Purchases table(s) (``month``, ``item``, ``amount``, ``unit``) for purchase-based figures.
    sites : dict, optional
        Theatre -> site (:func:`model.io.sites.read_sites`); without it each theatre is a site.
    chosen_sites : sequence of str
        Sites reported (default all).
    target : Target, optional
    absorbent_note : str
        What the audit's absorbent figures assume (:meth:`model.audit.result.AuditResult.absorbent_note`).
    fields : dict, optional
        Names of the inputs in messages, by "period", "baseline", "target" and "site" (e.g.
        the command line's "--period"); default those words.

    Returns
    -------
    EmissionsReport
        A baseline that has no cases (or a site file naming unknown theatres) is reported in
        ``problems`` and the rest is worked out; no case in ``period`` at all raises.

    Raises
    ------
    InputError
        When no case starts in the period, or ``chosen_sites`` names an unknown site.
    """
    name = {"period": "period", "baseline": "baseline", "target": "target", "site": "site", **(fields or {})}
    used = _usable_sites(cases, sites, chosen_sites)
    pr = period_report(
        cases, period, reference, gwp_source, used.sites, used.chosen, purchases, name["period"], name["site"]
    )
    problems = [*used.problems]
    cautions = [*used.cautions, *_period_cautions(pr, used.sites)]
    against = _Comparison()
    if baseline is not None:
        against = _against_baseline(
            cases,
            pr,
            baseline,
            baseline_gwp_source or gwp_source,
            target,
            reference=reference,
            sites=used,
            purchases=purchases,
            name=name,
        )
        problems += against.problems
        cautions += against.cautions
    elif target is not None:
        problems.append(InputError(name["target"], target.text, "a target needs a baseline period to start from"))
    if pr.figures["absorbent_kg"] is None:
        cautions.append("CO2 absorbent is not in these audit results; the cost covers agents and gases only.")
    return EmissionsReport(
        title,
        reference,
        pr,
        baseline=against.baseline,
        decomposition=against.decomposition,
        target=against.target,
        sites=used.sites,
        chosen_sites=used.chosen,
        problems=problems,
        cautions=cautions,
        absorbent_note=absorbent_note,
    )


@dataclass
class _Sites:
    """The site file as the report uses it.

    ``sites`` is None (and every theatre its own site) when the file names unknown
    theatres, with that error in ``problems`` and a caution saying so.
    """

    sites: dict | None
    chosen: tuple
    problems: list[InputError] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)


def _usable_sites(cases: pd.DataFrame, sites: dict | None, chosen_sites) -> _Sites:
    """The site file and chosen sites, or none of them when the site file cannot be used."""
    if sites is None:
        return _Sites(None, tuple(chosen_sites or ()))
    try:
        assign_sites(cases["theatre"], sites)
    except InputError as err:
        return _Sites(
            None,
            (),
            [err],
            ["The site file could not be used (see 'not worked out'); each theatre is shown as its own site."],
        )
    return _Sites(sites, tuple(chosen_sites or ()))


def _period_cautions(pr: PeriodReport, sites: dict | None) -> list[str]:
    """Cautions about the period's sites and purchases.

    Theatres the site file does not name, the purchases' scope, sites only the purchases
    name, purchases with no site, months with no purchase line.
    """
    out = []
    if sites is not None and (pr.cases["site"] == UNASSIGNED).any():
        left = sorted(set(pr.cases.loc[pr.cases["site"] == UNASSIGNED, "theatre"]))
        out.append(f"Theatres the site file does not name are reported as '{UNASSIGNED}': " + ", ".join(left) + ".")
    if pr.purchase_scope:
        out.append(pr.purchase_scope)
    if pr.use_vs_purchase_by_site is not None:
        out += _site_table_cautions(pr.use_vs_purchase_by_site)
    if pr.purchases is not None and pr.purchases.months_missing:
        out.append(
            "No purchase line in: "
            + ", ".join(pr.purchases.months_missing)
            + " (purchase-based figures count nothing for those months)."
        )
    return out


def _site_table_cautions(table: pd.DataFrame) -> list[str]:
    """Cautions about the rows of 'Use and purchases by site' that are no site of the records."""
    out = []
    odd = table.loc[table["note"] == SITE_NOTES["purchases only"], "site"].tolist()
    if odd:
        out.append(
            "Purchases name sites that are neither in the site file nor theatres of the records "
            "(a misspelling?): " + ", ".join(odd) + "; they are shown on their own rows of "
            "'Use and purchases by site'."
        )
    none = table.loc[table["note"] == SITE_NOTES["no site"], "purchase_based_t_co2e"]
    if len(none):
        out.append(
            f"Purchases with no site ({float(none.sum()):,.1f} t CO2e) are shown as '{NO_SITE}' in "
            "'Use and purchases by site': they count in the whole-set purchase-based figures but "
            "belong to no site."
        )
    return out


@dataclass
class _Comparison:
    """The baseline's figures, the decomposition of the change and the target's status.

    Each is None when it could not be worked out (the reason in ``problems``).
    """

    baseline: PeriodReport | None = None
    decomposition: Decomposition | None = None
    target: TargetStatus | None = None
    problems: list[InputError] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)


def _against_baseline(
    cases: pd.DataFrame,
    pr: PeriodReport,
    baseline: Period,
    baseline_gwp_source: str,
    target: Target | None,
    *,
    reference: Reference,
    sites: _Sites,
    purchases: pd.DataFrame | None,
    name: dict,
) -> _Comparison:
    """The period against ``baseline`` (and ``target``); a baseline without cases is a problem."""
    out = _Comparison()
    try:
        out.baseline = period_report(
            cases,
            baseline,
            reference,
            baseline_gwp_source,
            sites.sites,
            sites.chosen,
            purchases,
            name["baseline"],
            name["site"],
            also=pr.gwp_sources,
        )
    except InputError as err:
        out.problems.append(err)
        return out
    out.cautions = _baseline_cautions(pr, baseline, baseline_gwp_source, reference)
    out.decomposition = decompose(
        period_mix(out.baseline.figures, reference, baseline_gwp_source),
        period_mix(pr.figures, reference, pr.gwp_source),
    )
    if target is not None:
        try:
            out.target = target_status(
                target, baseline, out.baseline.co2e_t * 1000.0, pr.period, pr.co2e_t * 1000.0, name["target"]
            )
        except InputError as err:
            out.problems.append(err)
    return out


def _baseline_cautions(pr: PeriodReport, baseline: Period, baseline_gwp_source: str, reference: Reference) -> list[str]:
    """Cautions of the comparison: a change of GWP source, overlapping periods, periods of different length."""
    period, out = pr.period, []
    if baseline_gwp_source != pr.gwp_source:
        out.append(
            f"The baseline is worked out under {reference.gwp_source(baseline_gwp_source).label} and the period "
            f"under {reference.gwp_source(pr.gwp_source).label}: the change, the headline and the "
            "target comparison include the change of source (its part is shown on its own)."
        )
    if baseline.overlaps(period):
        out.append(
            f"The baseline ({baseline.label}) overlaps the period ({period.label}): cases in both are counted in each."
        )
    if abs(baseline.months - period.months) > 1e-9:
        out.append(
            f"The period ({period.months:g} months) and the baseline ({baseline.months:g} months) "
            "differ in length: totals and the activity part of the change reflect that; the "
            "comparison with the target uses annual rates."
        )
    return out


def driver_sentences(
    d: Decomposition, base: dict, now: dict, base_src: str, now_src: str, reference: Reference
) -> list[tuple[str, str]]:
    """A plain sentence for each part of the change (t CO2e, with the figures behind it)."""

    def t(kg):
        if abs(kg) < 50.0:
            return "changes it by less than 0.1 t CO2e"
        return f"{'adds' if kg >= 0 else 'removes'} {abs(kg) / 1000:,.1f} t CO2e"

    def pct(a, b):
        if not a > 0:
            return "new" if b > 0 else "none in either"
        with np.errstate(over="ignore"):
            change = b / a - 1
        return f"{change:+.0%}" if math.isfinite(change) else "too few baseline hours for a percentage"

    def none_in(f, name: str) -> str:
        """``name`` when ``f`` has no anaesthetic hours (so no per-hour figure), else ''."""
        return "" if f["hours"] > 0 else name

    def why(*which) -> str:
        named = [w for w in which if w]
        return (
            f"cannot be worked out: {' and '.join(named)} {'has' if len(named) == 1 else 'have'} no anaesthetic hours"
        )

    out = []
    h0, h1 = base["hours"], now["hours"]
    out.append(
        (
            "activity",
            f"Activity: anaesthetic hours went from {h0:,.0f} to {h1:,.0f} ({pct(h0, h1)}); at the "
            f"baseline's agent mix and practice this {t(d.contribution('activity'))}.",
        )
    )
    agents = sorted(set(base["agent_hours"]) | set(now["agent_hours"]))
    mix = d.detail[d.detail["factor"] == "agent mix"].set_index("term")["contribution_kg"]
    moved = sorted(agents, key=lambda a: -abs(mix.get(a, 0.0)))[:2]
    if none_in(base, "the baseline") or none_in(now, "the period"):
        bits = "the share of hours per agent " + why(none_in(base, "the baseline"), none_in(now, "the period"))
    else:
        bits = "; ".join(
            f"{a} from {base['agent_hours'].get(a, 0.0) / h0:.0%} to {now['agent_hours'].get(a, 0.0) / h1:.0%} of hours"
            for a in moved
        )
    out.append(("agent mix", f"Agent mix: {bits}. The change of mix {t(d.contribution('agent mix'))}."))
    inten = d.detail[d.detail["factor"] == "intensity"].set_index("term")["contribution_kg"]

    def gph(f, a) -> str:
        hrs = f["agent_hours"].get(a, 0.0)
        return f"{f['agent_kg'].get(a, 0.0) * 1000.0 / hrs:,.1f}" if hrs > 0 else f"no {a} hours"

    moved = [a for a in sorted(agents, key=lambda a: -abs(inten.get(a, 0.0)))[:2] if abs(inten.get(a, 0.0)) > 0]
    bits = "; ".join(f"{a} from {gph(base, a)} to {gph(now, a)} g of agent per hour" for a in moved)
    f0, f1 = base["fgf_l_min"], now["fgf_l_min"]
    if math.isfinite(f0) and math.isfinite(f1):
        flow = f"time-weighted fresh gas flow went from {f0:.2f} to {f1:.2f} L/min"
    else:
        flow = "time-weighted fresh gas flow " + why(
            "" if math.isfinite(f0) else "the baseline", "" if math.isfinite(f1) else "the period"
        )
    out.append(
        (
            "intensity",
            f"Intensity within each agent (fresh gas flow and dial practice): {flow}"
            + (f"; {bits}" if bits else "")
            + f". This {t(d.contribution('intensity'))}.",
        )
    )
    if none_in(base, "the baseline") or none_in(now, "the period"):
        n2o = "nitrous oxide per anaesthetic hour " + why(none_in(base, "the baseline"), none_in(now, "the period"))
    else:
        n0, n1 = base["n2o_kg"] / h0 * 1000, now["n2o_kg"] / h1 * 1000
        n2o = f"{n0:,.0f} to {n1:,.0f} g of nitrous oxide per anaesthetic hour"
    out.append(("N2O use", f"N2O use: {n2o}; this {t(d.contribution('N2O use'))}."))
    if base_src == now_src:
        out.append(
            (
                "GWP source",
                f"GWP source: the same for both ({reference.gwp_source(now_src).label}), no part of the change.",
            )
        )
    else:
        out.append(
            (
                "GWP source",
                f"GWP source: {reference.gwp_source(base_src).label} for the baseline, "
                f"{reference.gwp_source(now_src).label} for the period; the change of source "
                f"{t(d.contribution('GWP source'))}.",
            )
        )
    return out
