"""Widgets of the Emissions report page.

A reporting period, a target (each returns our own syntax), and the use-based against
purchase-based table by site.
"""

from __future__ import annotations

from datetime import date

import streamlit as st

from model.report.periods import PERIOD_FORMS

from .common import md
from .tables import readable_frame

PERIOD_KINDS = ("Calendar year", "Financial year", "Quarter", "Date range", "As written")
MONTHS = (
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
)
TARGET_KINDS = ("No target", "A yearly reduction", "A tonnage by a year")


def period_input(label: str, key: str, default_year: int, default_kind: str = "Calendar year") -> str | None:
    """Widgets for one reporting period.

    Returns it in our syntax (e.g. "FY2026-04"), or None while a date range is half chosen.
    """
    c = st.columns([1.3, 1, 1])
    kind = c[0].selectbox(label, PERIOD_KINDS, index=PERIOD_KINDS.index(default_kind), key=f"{key}_kind")
    if kind == "As written":
        return c[1].text_input(
            "Period", value=str(default_year), key=f"{key}_text", help="One of: " + "; ".join(PERIOD_FORMS)
        )
    if kind == "Date range":
        chosen = c[1].date_input(
            "First and last day",
            value=(date(default_year, 1, 1), date(default_year, 6, 30)),
            key=f"{key}_range",
            format="YYYY-MM-DD",
        )
        if not isinstance(chosen, (tuple, list)) or len(chosen) < 2:
            return None
        return f"{chosen[0].isoformat()}..{chosen[1].isoformat()}"
    year = int(
        c[1].number_input(
            "Year" if kind != "Financial year" else "Starting in", 1990, 2100, default_year, key=f"{key}_year"
        )
    )
    if kind == "Calendar year":
        return f"{year}"
    if kind == "Quarter":
        q = c[2].selectbox("Quarter", (1, 2, 3, 4), key=f"{key}_q", format_func=lambda n: f"Q{n}")
        return f"{year}Q{q}"
    month = c[2].selectbox(
        "First month", range(1, 13), index=3, key=f"{key}_month", format_func=lambda m: MONTHS[m - 1]
    )
    return f"FY{year}-{month:02d}"


def target_input(key: str, default_year: int) -> str | None:
    """Widgets for a reduction target; returns it in our syntax ("-5%/year", "120 t by 2030") or None."""
    c = st.columns([1.3, 1, 1])
    kind = c[0].selectbox("Target", TARGET_KINDS, index=1, key=f"{key}_kind")
    if kind == TARGET_KINDS[1]:
        pct = c[1].number_input(
            "Reduction a year [%]",
            0.0,
            99.0,
            5.0,
            0.5,
            key=f"{key}_pct",
            help="Compounded from the baseline: each year this much less than the year before.",
        )
        return f"-{pct:g}%/year"
    if kind == TARGET_KINDS[2]:
        t = c[1].number_input("Tonnes CO2e a year", 0.0, 1e6, 40.0, 1.0, key=f"{key}_t")
        y = c[2].number_input("By the year", 1990, 2200, default_year + 4, key=f"{key}_by")
        return f"{t:g} t by {int(y)}"
    return None


def shown(df):
    """A table for the screen: headings in words with units, figures rounded (``ui.tables.readable_frame``)."""
    return readable_frame(df)


def sites_against_purchases(report) -> None:
    """The period's use-based and purchase-based CO2e side by side by site, with the gap.

    Each is labelled; when the purchases name no site, a plain note says that purchase-based
    figures are for all sites together.
    """
    pr = report.period
    table = pr.use_vs_purchase_by_site
    st.markdown("**By site: use-based and purchase-based**")
    if table is None:
        st.caption(
            "The purchases name no site, so purchase-based figures are for all sites together and "
            "cannot be set beside each site's use. Add a site column to the purchases files "
            "('Purchases' under 'File formats' on this page) to compare site by site."
        )
        return
    lab = report.gwp_label
    st.dataframe(
        table,
        hide_index=True,
        width="stretch",
        key="er_sites_vs_purchases",
        column_config={
            "site": "Site",
            "note": "Note",
            "use_based_t_co2e": st.column_config.NumberColumn("Use-based t CO2e", format="%.2f"),
            "purchase_based_t_co2e": st.column_config.NumberColumn("Purchase-based t CO2e", format="%.2f"),
            "gap_t_co2e": st.column_config.NumberColumn("Gap t CO2e", format="%+.2f"),
            "gap_share": st.column_config.NumberColumn("Gap share", format="percent"),
        },
    )
    st.caption(
        md(
            f"CO2e at {lab}; gap = purchase-based - use-based, its share of purchase-based. "
            f"Totals over the rows: use-based {table['use_based_t_co2e'].sum():,.2f} t CO2e, purchase-based "
            f"{table['purchase_based_t_co2e'].sum():,.2f} t CO2e, the figures of the whole report. "
            "Rows noted 'named in purchases only' are sites the site file and the records do not hold; "
            "'no site' is purchases that name none."
        )
    )
    if pr.purchase_scope:
        st.caption(md(pr.purchase_scope))
