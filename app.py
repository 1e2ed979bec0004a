"""Fresh Gas Ledger dashboard (entry point): `streamlit run app.py`.

Navigation over the pages in ``pages/``; the settings sidebar is drawn here so its values
persist as the user moves between pages. Pages written by other parts of the project appear
when their files exist.
"""

from pathlib import Path

import streamlit as st

import ui.common
import ui.state

HERE = Path(__file__).resolve().parent

st.set_page_config(page_title="Fresh Gas Ledger", page_icon=":material/air:", layout="wide")


def _page(file: str, title: str, icon: str, default: bool = False):
    path = HERE / "pages" / file
    return st.Page(str(path), title=title, icon=icon, default=default) if path.exists() else None


sections = {
    "One case": [
        _page("case_plan.py", "Case plan", ":material/stethoscope:", default=True),
        _page("compare.py", "Compare", ":material/compare_arrows:"),
    ],
    "The department": [
        _page("department_year.py", "Department year", ":material/calendar_month:"),
        _page("record_audit.py", "Record audit", ":material/fact_check:"),
        _page("emissions_report.py", "Emissions report", ":material/summarize:"),
        _page("trends.py", "Trends", ":material/monitoring:"),
        _page("orders.py", "Orders", ":material/inventory_2:"),
    ],
    "Data": [_page("reference.py", "Reference", ":material/menu_book:")],
}
sections = {name: [p for p in pages if p is not None] for name, pages in sections.items()}
ui.state.keep_page_inputs()  # every page's inputs survive a visit to another page
navigation = st.navigation({name: pages for name, pages in sections.items() if pages})

with st.sidebar:
    st.markdown("### Fresh Gas Ledger")
    st.caption("Agent, gases, absorbent, cost and CO2e of anaesthesia, per case and per year.")
ui.common.sidebar_for_app()
navigation.run()
