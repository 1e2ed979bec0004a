"""Settings sidebar, standing caution, store access, cached model calls and download row."""

from __future__ import annotations

import hashlib
import json
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path

import pandas as pd
import streamlit as st

from model import DEFAULT_REFERENCE, InputError, Reference, compute_case, parse_plan_text
from model.base.files import Source
from model.cautions import STANDING_CAUTION, STANDING_CAUTION_SHORT
from model.io.uploads import check_upload
from model.plan import CasePlan
from model.present.exports import to_csv, to_xlsx
from model.store import Store, StoreError, default_location, is_postgres_url
from model.store.access import (
    CONFIG_PLACE,
    NO_ONE,
    AccessConfig,
    Permission,
    User,
    access_config,
    is_editor,
    may_edit_reference,
    may_save,
    sign_in_refusal,
    user_from_header,
    user_from_sign_in,
)

from .tables import plain_paths, readable_frame

ROOT = Path(__file__).resolve().parents[1]
DEMO_PLANS = ROOT / "demo_data" / "plans"

#: The standing caution (docs/methods.md, Cautions the results always carry), shown on every page and in every report.
CAUTION = STANDING_CAUTION
CAUTION_SHORT = STANDING_CAUTION_SHORT

FLOW_UNITS = ("L/min", "mL/min")
CO2E_UNITS = {"kg CO2e": 1.0, "g CO2e": 1000.0, "t CO2e": 0.001}


@dataclass(frozen=True)
class ViewSettings:
    """What the settings sidebar holds; every page reads it."""

    currency: str = "GBP"
    gwp_source: str = "ar6_gwp100"
    gwp_horizon_years: int = 100
    temperature_c: float = 20.0
    flow_unit: str = "L/min"
    co2e_unit: str = "kg CO2e"

    def flow(self, l_min: float) -> str:
        """A flow in the chosen unit, as text a user may type back."""
        if self.flow_unit == "mL/min":
            return f"{l_min * 1000:.0f} mL/min"
        return f"{l_min:.3g} L/min"

    def co2e(self, kg: float) -> str:
        """CO2e in the chosen unit, with the unit (see :meth:`co2e_number`)."""
        return f"{self.co2e_number(kg)} {self.co2e_unit}"

    def co2e_number(self, kg: float) -> str:
        """CO2e in the chosen unit, without the unit.

        Three significant figures under 1, two decimals under 100, else none, so a case
        shown in t CO2e does not round to 0.03.
        """
        v = kg * CO2E_UNITS[self.co2e_unit]
        if 0 < abs(v) < 1:
            return f"{v:.3g}"
        return f"{v:,.2f}" if abs(v) < 100 else f"{v:,.0f}"

    def money(self, amount: float) -> str:
        """An amount with the currency label."""
        return f"{amount:,.2f} {self.currency}"


# ---- store and reference -------------------------------------------------------------


@st.cache_resource(show_spinner=False)
def _store_at(location: str) -> Store:
    store = Store(location)
    if store.count_versions() == 0:
        # A new store starts with the demo plans, so the dashboard is usable at once.
        for f in sorted(DEMO_PLANS.glob("*.toml")):
            store.import_plan_text(
                f.read_text(encoding="utf-8"), f.name, "demo plan (invented)", author="demo data (invented)"
            )
    return store


def get_store() -> Store:
    """The store named by ``GAS_LEDGER_STORE``, seeded with the demo.

    A file or a PostgreSQL URL; else the default file. One per server process, shared by
    its sessions.

    A store that cannot be used (foreign, unreachable, or from a newer program) stops the
    page with its one-line message.
    """
    try:
        return _store_at(default_location())
    except StoreError as err:
        where = default_location()
        known = {} if is_postgres_url(where) else {where: Path(where).name}
        from ui.tables import page_words

        st.error(md(page_words(plain_paths(str(err), known))), icon=":material/error:")
        st.stop()


def _saved_overrides() -> dict:
    try:
        return get_store().load_overrides()
    except InputError:
        return {}


@st.cache_resource(show_spinner=False, max_entries=64)
def _reference_for(overrides_json: str, currency: str) -> Reference:
    overrides = json.loads(overrides_json)
    ref = DEFAULT_REFERENCE
    if overrides:
        ref = ref.with_overrides(overrides, "dashboard")
    if currency and currency != ref.prices.currency:
        ref = ref.with_overrides({"prices": {"currency": currency}}, "dashboard currency label")
    return ref


def reference_key(view: ViewSettings | None = None) -> str:
    """Text that changes whenever :func:`reference` would (use it as a cache key)."""
    view = view or view_settings()
    return json.dumps(_saved_overrides(), sort_keys=True) + "|" + view.currency


def reference(view: ViewSettings | None = None) -> Reference:
    """The Reference with the saved overrides and the sidebar's currency label applied."""
    view = view or view_settings()
    try:
        return _reference_for(json.dumps(_saved_overrides(), sort_keys=True), view.currency)
    except InputError as err:
        st.error(md(f"Saved overrides could not be applied, defaults used: {err}"))
        return _reference_for("{}", view.currency)


def apply_settings(plan: CasePlan, view: ViewSettings) -> CasePlan:
    """The plan with the sidebar's GWP source and room temperature."""
    return replace(plan, settings=replace(plan.settings, gwp_source=view.gwp_source, temperature_c=view.temperature_c))


@st.cache_data(show_spinner=False, max_entries=32)
def sources_table(ref_key: str, _ref: Reference) -> pd.DataFrame:
    """The reference table (values and sources) as a DataFrame, for downloads and reports."""
    return pd.DataFrame(_ref.table())


@st.cache_data(show_spinner=False, max_entries=512)
def compute_plan(plan: CasePlan, ref_key: str, _ref: Reference):
    """``compute_case`` on a plan, cached on the plan itself.

    The frozen dataclass is the cache key (Streamlit hashes a dataclass field by field), so
    a page that has read its inputs into a plan once computes it without writing it out as
    plan-file text and reading it back.
    """
    return compute_case(plan, _ref)


@st.cache_data(show_spinner=False, max_entries=512)
def compute_cached(plan_toml: str, ref_key: str, _ref: Reference):
    """``compute_case`` on a plan given as plan-file text (the hashable cache key).

    For callers that hold a plan's text; one that holds the plan uses :func:`compute_plan`.
    """
    return compute_case(parse_plan_text(plan_toml, "plan"), _ref)


# ---- who is signed in, and what they may change ----------------------------------------

#: Used when the sign-in configuration is wrong: no one is signed in, nothing can be changed.
_FAIL_CLOSED = AccessConfig(sign_in="streamlit")


def _access() -> tuple[AccessConfig, str]:
    """The sign-in configuration and, when it is wrong, its one-line message."""
    from streamlit.errors import StreamlitSecretNotFoundError

    try:
        raw = st.secrets.get("gas_ledger")
    except (FileNotFoundError, StreamlitSecretNotFoundError):
        return AccessConfig(), ""  # no secrets file at all: sign-in off
    except Exception as exc:  # noqa: BLE001 - a secrets file that does not parse
        return _FAIL_CLOSED, f".streamlit/secrets.toml cannot be read ({type(exc).__name__})"
    if raw is None:
        return AccessConfig(), ""
    try:
        data = {k: (list(v) if isinstance(v, (list, tuple)) else v) for k, v in dict(raw).items()}
        return access_config(data), ""
    except (InputError, TypeError, ValueError) as err:
        return _FAIL_CLOSED, str(err)


def access_settings() -> AccessConfig:
    """The sign-in configuration (:data:`model.store.access.CONFIG_PLACE`); sign-in off when absent."""
    return _access()[0]


def current_user() -> User:
    """Who is signed in: Streamlit's sign-in (``st.user``) or the trusted proxy's header.

    Only as configured; with sign-in off no one (a header sent anyway is ignored).
    """
    config, problem = _access()
    if problem:
        return NO_ONE
    if config.sign_in == "header":
        return user_from_header(config, st.context.headers.get_all(config.identity_header))
    if config.sign_in == "streamlit":
        return user_from_sign_in(config, st.user.to_dict())
    return NO_ONE


def author() -> str:
    """What a save records as its author ("" when no one is signed in)."""
    return current_user().label


def reference_permission() -> Permission:
    """Whether this user may change the reference values (and restore an earlier set)."""
    return may_edit_reference(access_settings(), current_user())


def save_permission() -> Permission:
    """Whether this user may save plans and scenarios."""
    return may_save(access_settings(), current_user())


def _who_box() -> None:
    """The sidebar's line on who is signed in, with sign-in and sign-out in streamlit mode."""
    config, problem = _access()
    if problem:
        st.error(
            md(f"Sign-in is misconfigured ({CONFIG_PLACE}): {problem}. Nothing can be changed until it is fixed."),
            icon=":material/lock:",
        )
        return
    user = current_user()
    if not user.signed_in:
        refused = _refused_identity(config)
        if refused:
            st.warning(md(f"Not signed in: {refused}. Ask the server's administrator."), icon=":material/lock:")
        st.caption(
            "Not signed in."
            + (
                ""
                if config.enabled
                else " (This server has no sign-in: anyone who can open it may change every value.)"
            )
        )
        if config.sign_in == "streamlit" and st.button("Sign in", icon=":material/login:", key="gl_sign_in"):
            _sign_in(config)
        return
    role = "editor of the reference values" if is_editor(config, user) else "may save plans"
    st.caption(f"Signed in as {md(user.label)} ({role}).")
    if config.sign_in == "streamlit" and st.button("Sign out", icon=":material/logout:", key="gl_sign_out"):
        st.logout()


def _refused_identity(config: AccessConfig) -> str:
    """Why an identity that was sent signs no one in ("" when none was sent)."""
    if config.sign_in == "header":
        values = st.context.headers.get_all(config.identity_header)
        if len(values) > 1:
            return f"the header {config.identity_header} arrived more than once"
        return sign_in_refusal(config, values[0]) if values else ""
    if config.sign_in == "streamlit":
        claims = st.user.to_dict()
        if claims.get("is_logged_in") is not True:
            return ""
        return sign_in_refusal(config, claims.get("email") or claims.get("sub"))
    return ""


def _sign_in(config: AccessConfig) -> None:
    from streamlit.errors import StreamlitAuthError

    try:
        st.login(config.provider) if config.provider else st.login()
    except StreamlitAuthError as err:
        st.error(md(f"Sign-in is not set up: {err}"), icon=":material/error:")


# ---- sidebar and page header ---------------------------------------------------------


def _sidebar() -> ViewSettings:
    ss = st.session_state
    saved_currency = (_saved_overrides().get("prices") or {}).get("currency") or DEFAULT_REFERENCE.prices.currency
    ss.setdefault("gl_currency", saved_currency)
    if "gl_currency_pending" in ss:  # set by a page that saved a new currency label
        ss["gl_currency"] = ss.pop("gl_currency_pending")
    ss.setdefault("gl_horizon", "100 years")
    ss.setdefault("gl_temp", 20.0)
    ss.setdefault("gl_flow_unit", FLOW_UNITS[0])
    ss.setdefault("gl_co2e_unit", "kg CO2e")
    ref = DEFAULT_REFERENCE
    with st.sidebar:
        st.markdown("#### Settings for every page")
        currency = st.text_input(
            "Currency label",
            key="gl_currency",
            max_chars=12,
            help="Shown beside every cost. It labels your prices; it does not convert them.",
        )
        if not re.fullmatch(r"[\w .$€£¥-]{1,12}", currency or ""):
            st.error("Currency label: use 1-12 letters or symbols, e.g. GBP or EUR.")
            currency = saved_currency
        horizon = st.radio("GWP horizon", ["100 years", "20 years"], key="gl_horizon", horizontal=True)
        years = int(horizon.split()[0])
        user_values = bool(_saved_overrides().get("gwp", {}).get("user"))
        options = [k for k, s in ref.gwp_sources.items() if s.horizon_years == years and (k != "user" or user_values)]
        if st.session_state.get("gl_gwp") not in options:
            st.session_state["gl_gwp"] = options[0]
        source = st.selectbox("GWP source", options, key="gl_gwp", format_func=lambda k: ref.gwp_sources[k].label)
        temp = st.number_input(
            "Room temperature (°C)",
            min_value=0.0,
            max_value=45.0,
            step=1.0,
            key="gl_temp",
            help="Sets the vapour volume per mL of liquid (ideal gas).",
        )
        flow_unit = st.selectbox("Flows shown in", FLOW_UNITS, key="gl_flow_unit")
        co2e_unit = st.selectbox(
            "Emissions shown in",
            list(CO2E_UNITS),
            key="gl_co2e_unit",
            help="For cases, plans and records. A department's year is always "
            "in tonnes CO2e, the unit of annual reporting.",
        )
        st.divider()
        _who_box()
        st.caption(CAUTION)
        where = default_location()
        where = "a shared PostgreSQL database" if is_postgres_url(where) else f"the store file {Path(where).name}"
        st.caption(f"Your work is saved in {md(where)} on the server.")
    return ViewSettings(currency.strip(), source, years, float(temp), flow_unit, co2e_unit)


def sidebar_for_app() -> ViewSettings:
    """Draw the sidebar from the entry point (``app.py``) so its values persist across pages."""
    view = _sidebar()
    st.session_state["_gl_view"] = view
    st.session_state["_gl_entrypoint"] = True
    return view


def view_settings() -> ViewSettings:
    """The current sidebar settings (drawing the sidebar when a page runs on its own)."""
    if st.session_state.get("_gl_entrypoint") and "_gl_view" in st.session_state:
        return st.session_state["_gl_view"]
    view = _sidebar()
    st.session_state["_gl_view"] = view
    return view


def _leave_pages_folder_mode() -> None:
    """Hand a page opened by a direct link over to app.py's navigation.

    Until ``st.navigation`` has run once in a server process, Streamlit treats the
    ``pages/`` folder beside the entry point as its older folder-based navigation: a
    bookmark to ``/compare`` as the first request after a start would run that page alone,
    without the app's sections, wide layout and shared sidebar, for every user. Clearing
    the flag and rerunning lets app.py take over and open the same page.
    """
    from streamlit.runtime.pages_manager import PagesManager

    if PagesManager.uses_pages_directory:
        PagesManager.uses_pages_directory = False
        st.rerun()


def page_start(title: str, intro: str = "") -> ViewSettings:
    """Start a page: its title, a one-line intro, the settings sidebar and the caution."""
    _leave_pages_folder_mode()
    view = view_settings()
    st.title(title)
    if intro:
        st.caption(intro)
    st.info(CAUTION, icon=":material/health_and_safety:")
    return view


_MD_SPECIAL = re.compile(r"([\\`*_{}\[\]()#+\-.!|<>~$:&])")


def md(text) -> str:
    """User text made safe for Streamlit markdown (titles, captions, messages).

    Every markdown and HTML character is backslash-escaped, so a name such as
    ``<img src=x>`` or ``[a](javascript:...)`` shows as typed and never becomes markup.
    """
    return _MD_SPECIAL.sub(r"\\\1", str(text)).replace("\n", " ").replace("\r", " ")


def checked_uploads(uploaded, kind: str) -> list[Source]:
    """Each uploaded file that passed the upload guard, as a reader takes it.

    ``uploaded`` is one uploader value, a list of them, or None. Each file goes through
    :func:`model.io.uploads.check_upload` for ``kind``; a file it refuses stops the page
    with its one-line message. The readers are given the bytes with the name as uploaded
    (:class:`model.base.files.Source`), so their messages name the user's file.
    """
    items = uploaded if isinstance(uploaded, list) else [] if uploaded is None else [uploaded]
    out = []
    try:
        for u in items:
            ok = check_upload(u.name, u.getvalue(), kind)
            out.append(Source(ok.name, data=ok.data))
    except InputError as err:
        show_input_error(err)
        st.stop()
    return out


def files_digest(*groups) -> str:
    """One SHA-256 over the content digests of groups of files (records, purchases, ...).

    The cache key of a page's work on uploaded or demo files: the same bytes give the same key
    whatever the files are called; each group after the first is marked, so a file moved from
    records to purchases changes the key.
    """
    h = hashlib.sha256()
    for i, files in enumerate(groups):
        for f in files:
            h.update(b"group %d " % i + f.digest().encode())
    return h.hexdigest()


def read_sites(sites_file: Source | None) -> dict | None:
    """The theatre -> site map of a site file, or None (no file, or one refused with its message)."""
    if sites_file is None:
        return None
    from model.io.sites import parse_sites

    try:
        return parse_sites(sites_file.read_bytes().decode("utf-8-sig"), sites_file.name)
    except (InputError, UnicodeDecodeError) as err:
        show_input_error(
            err if isinstance(err, InputError) else InputError(sites_file.name, "the file", "not UTF-8 text"),
            "Site file (not used)",
        )
        return None


def show_input_error(err: Exception, where: str = "") -> None:
    """One clear line for a bad entry (never a traceback); user text in it is escaped."""
    from model.present.readable import field_words

    prefix = f"{where}: " if where else ""
    from ui.tables import page_words

    st.error(md(page_words(plain_paths(field_words(prefix + str(err))))), icon=":material/error:")


# ---- downloads -----------------------------------------------------------------------


def _slug(name: str) -> str:
    """A file name part: words joined by "-", at most 60 characters, cut between words."""
    s = re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-").lower() or "export"
    if len(s) > 60:
        s = s[:61].rsplit("-", 1)[0] if "-" in s[:61] else s[:60]
    return s


def csv_file_name(name: str, table: str) -> str:
    """The CSV's file name: the export's name and its table's, the table's left out when the name holds it."""
    slug, part = _slug(name), _slug(table)
    return f"{slug}.csv" if part in slug else f"{slug}-{part}.csv"


def _currency() -> str:
    """The sidebar's currency label (for headings of cost columns)."""
    return st.session_state.get("_gl_view", ViewSettings()).currency


def downloads(
    name: str,
    tables: Mapping[str, pd.DataFrame | Callable[[], pd.DataFrame | None]],
    report: Callable[..., str] | None,
    key: str,
    notes: tuple[str, ...] = (),
    provenance=None,
) -> None:
    """The row of downloads under a results view: CSV (first table), Excel (all), HTML report.

    Every file is built only when asked for (deferred download data), so a rerun pays nothing
    for them. A table may be given as a function returning it (or None to leave it out), for
    tables worked out only for the download. Tables are written for people
    (``ui.tables.readable_frame``: headings in words with units, figures rounded).

    ``provenance`` (:func:`ui.provenance.block`): every file opens with it, the time it is
    made filled in when it is built; ``report`` is then called with it.
    """
    currency = _currency()

    def prov():
        from ui.provenance import made_now

        return None if provenance is None else made_now(provenance)

    def ready() -> dict[str, pd.DataFrame]:
        out = {}
        for k, v in tables.items():
            df = v() if callable(v) else v
            if df is not None:
                out[k] = readable_frame(df, currency)
        return out

    def html() -> str:
        assert report is not None
        return report() if provenance is None else report(prov())

    slug = _slug(name)
    first_name, first = next(iter(tables.items()))
    c1, c2, c3, _ = st.columns([1, 1, 1.5, 1])
    c1.download_button(
        "CSV",
        data=lambda: to_csv(readable_frame(first() if callable(first) else first, currency), prov()),
        file_name=csv_file_name(name, first_name),
        mime="text/csv",
        key=f"{key}_csv",
        on_click="ignore",
        icon=":material/download:",
        help=f"The '{first_name}' table as CSV, under what made it",
    )
    c2.download_button(
        "Excel",
        data=lambda: to_xlsx(ready(), notes=(CAUTION,) + tuple(notes), provenance=prov()),
        file_name=f"{slug}.xlsx",
        key=f"{key}_xlsx",
        on_click="ignore",
        mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        icon=":material/download:",
        help="Every table, one sheet each, after a sheet on what made them",
    )
    if report is not None:
        c3.download_button(
            "HTML report",
            data=html,
            file_name=f"{slug}.html",
            mime="text/html",
            key=f"{key}_html",
            on_click="ignore",
            icon=":material/download:",
            help="Self-contained report: what made it, inputs, results, charts, sources, cautions",
        )
