"""The emissions report as a document: the HTML file and the Excel workbook handed to a board."""

from __future__ import annotations

from collections.abc import Iterable

import pandas as pd

from model.present.exports import html_export, to_xlsx
from model.present.provenance import InputFile, Provenance, provenance
from model.report.report import EmissionsReport


def report_provenance(
    report: EmissionsReport, files: Iterable[InputFile], prices: str, settings: dict | None = None
) -> Provenance:
    """The provenance block of the report's files (the page's downloads and ``gas-ledger report``).

    Parameters
    ----------
    report : EmissionsReport
    files : iterable of InputFile
        The record, purchases and site files as the user named them.
    prices : str
        The prices in use and where they come from.
    settings : dict, optional
        Further settings (e.g. the room temperature); the report's own choices
        (:func:`report_inputs`) follow them.
    """
    gwp = report.gwp_label
    if report.baseline is not None and report.baseline.gwp_source != report.period.gwp_source:
        gwp += f" (baseline: {report.reference.gwp_source(report.baseline.gwp_source).label})"
    return provenance(
        report.title,
        unsafe=None,
        files=files,
        prices=prices,
        gwp_source=gwp,
        settings={"currency": report.reference.prices.currency, **(settings or {}), **report_inputs(report)},
    )


def report_inputs(report: EmissionsReport) -> dict:
    """The choices behind the report, as (name, value) for the document's inputs table."""
    r = report
    out = {
        "reporting period": f"{r.period.period.label} ({r.period.period.start} to {r.period.period.last_day})",
        "baseline": (
            f"{r.baseline.period.label} ({r.baseline.period.start} to {r.baseline.period.last_day})"
            if r.baseline is not None
            else "none"
        ),
        "GWP source (headline)": r.gwp_label,
        "GWP sources side by side": ", ".join(r.reference.gwp_source(s).label for s in r.period.gwp_sources),
        "target": r.target.target.label if r.target is not None else "none",
        "sites": ", ".join(r.chosen_sites) if r.chosen_sites else "all",
        "basis": "use-based (case records)"
        + (", purchase-based (purchases)" if r.period.purchases is not None else "")
        + (", by site" if r.period.use_vs_purchase_by_site is not None else ""),
    }
    if r.period.purchases is not None and r.chosen_sites:
        out["purchase-based figures cover"] = (
            "the chosen sites' purchases"
            if r.period.use_vs_purchase_by_site is not None
            else "all sites (the purchases name no site)"
        )
    if r.baseline is not None and r.baseline.gwp_source != r.period.gwp_source:
        out["GWP source (baseline)"] = r.reference.gwp_source(r.baseline.gwp_source).label
    return out


def report_html(
    report: EmissionsReport,
    figures: Iterable[tuple[str, object]] = (),
    cautions: Iterable[str] = (),
    sources: pd.DataFrame | None = None,
    provenance: Provenance | None = None,
) -> str:
    """The self-contained HTML report: headline, what drove the change, tables, charts, method, cautions.

    Parameters
    ----------
    report : EmissionsReport
    figures : iterable of (heading, plotly Figure)
        Charts: the Emissions report page and ``gas-ledger report --html`` both give
        ``model.present.report_charts.report_figures(report).items()`` (this layer draws none itself).
    cautions : iterable of str
        Standing cautions shown first (the report's own cautions follow).
    sources : DataFrame, optional
        The reference table with sources.
    provenance : Provenance, optional
        What made the file (:func:`report_provenance`).
    """
    summary = [s for _, s in report.sentences()]
    if report.target is not None:
        summary.append(report.target.sentence())
    warnings = [f"Not worked out: {p}" for p in report.problems]
    return html_export(
        report.title,
        inputs=report_inputs(report),
        tables=report.tables(),
        figures=figures,
        warnings=warnings,
        cautions=list(dict.fromkeys([*cautions, *report.cautions])),
        sources=sources,
        headline=report.headline(),
        summary=summary,
        sections={"Method statement": report.method_statement()},
        figures_first=True,
        provenance=provenance,
        currency=report.reference.prices.currency,
    )


def report_xlsx(report: EmissionsReport, cautions: Iterable[str] = (), provenance: Provenance | None = None) -> bytes:
    """The Excel workbook: what made it, every table one sheet, a notes sheet (headline, method, cautions)."""
    notes = list(dict.fromkeys([*cautions, *report.notes()]))
    return to_xlsx(report.tables(), notes=notes, provenance=provenance)
