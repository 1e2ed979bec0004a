"""Reference: every value the model uses with its source, and the user's own values."""

from __future__ import annotations

import json

import pandas as pd
import streamlit as st

import ui
import ui.provenance
from model import DEFAULT_REFERENCE, InputError
from model.present.exports import html_export
from model.present.readable import when_text
from model.reference import DEFAULT_MAC_SET, MAC_SETS, USER, VOLATILES
from model.store.access import author_label
from model.store.changelog import changes_between, reference_changes
from model.store.changelog import shown as change_text

view = ui.page_start(
    "Reference",
    "Every value the model uses, where it comes from, and your own "
    "values in place of the defaults. Saved values apply on every page.",
)
store = ui.get_store()
ref = ui.reference(view)
saved = store.load_overrides()
history = store.history("overrides", "dashboard")
permission = ui.reference_permission()
locked = not permission.allowed
ss = st.session_state

# ---- the table -----------------------------------------------------------------------

table = pd.DataFrame(ref.table())
table = table.rename(columns={"default": "default (before your value)", "default_source": "source of the default"})
table["unit"] = table["unit"].replace({"degC": "°C"})
f1, f2 = st.columns([2, 3])
items = f1.multiselect("Items", sorted(table["item"].unique()), key="ref_items", placeholder="all items")
search = f2.text_input("Search fields and sources", key="ref_search", placeholder="e.g. GWP, density, Yasuda")
shown = table
if items:
    shown = shown[shown["item"].isin(items)]
if search.strip():
    needle = search.strip().lower()
    mask = shown.apply(lambda r: needle in " ".join(str(v) for v in r.values).lower(), axis=1)
    shown = shown[mask]
st.dataframe(
    shown,
    hide_index=True,
    width="stretch",
    height=530,
    column_config={
        "value": st.column_config.NumberColumn(format="%.6g"),
        "source": st.column_config.TextColumn(width="large"),
    },
)
st.caption(
    f"{len(shown)} of {len(table)} values. Basis says how each is known: published, from memory, "
    "common practice, invented example price, or your own value."
)


prov = ui.provenance.block(
    view,
    ref,
    "Reference values",
    not_assessed_because="reference values only; no case is computed",
    settings={"your values": ui.provenance.prices_text()},
)


def _report(prov) -> str:
    return html_export(
        "Reference values",
        inputs={"your values": json.dumps(saved, sort_keys=True) or "none", "currency": view.currency},
        tables={"Reference values": table},
        cautions=[ui.CAUTION],
        provenance=prov,
    )


ui.downloads("reference values", {"Reference": table}, _report, key="ref_dl", provenance=prov)

# ---- the user's values ---------------------------------------------------------------

st.subheader("Your values")
ui.provenance.show(view, ref)
if history:
    st.caption(
        f"In use: version {history[0].version}, saved {when_text(history[0].saved_at)} by "
        f"{ui.md(author_label(history[0].author))}."
    )
st.caption("Leave a value as it is to keep the default. Saving keeps every earlier set of values.")
if locked:
    st.info(ui.md(permission.reason), icon=":material/lock:")
default = DEFAULT_REFERENCE
prices_saved = saved.get("prices", {})
FORM_KEYS = (
    "ref_currency",
    "ref_bottle_",
    "ref_oxygen_",
    "ref_air_",
    "ref_nitrous_",
    "ref_absorbent_",
    "ref_gwp_",
    "ref_mac_",
    "ref_macset",
    "ref_vapmax_",
)


def _values_in_use() -> dict:
    """Each form field's key and the value in use now (saved values over the defaults)."""
    values = {"ref_currency": prices_saved.get("currency", default.prices.currency), "ref_macset": ref.mac_set}
    gwp_saved = saved.get("gwp", {}).get("user", {})
    for a in VOLATILES:
        values[f"ref_bottle_{a}"] = float(ref.prices.bottle.get(a, 0.0))
        values[f"ref_vapmax_{a}"] = float(ref.agents[a].vaporizer_max)
    for k in ("oxygen_per_1000_l", "air_per_1000_l", "nitrous_oxide_per_1000_l", "absorbent_per_kg"):
        values[f"ref_{k}"] = float(getattr(ref.prices, k))
    for a in list(VOLATILES) + ["nitrous_oxide"]:
        values[f"ref_gwp_{a}"] = gwp_saved.get(a)
        values[f"ref_mac_{a}"] = float(ref.agents[a].mac40)
    return values


if ss.pop("ref_reset_form", False):
    # Another set of values was put in use: show it in the form, not what was typed before.
    # Each field is given its value (not just forgotten): the browser keeps showing a
    # forgotten field's old entry, and saving the form would bring it back.
    for k in [k for k in ss if str(k).startswith(FORM_KEYS)]:
        del ss[k]
    ss.update(_values_in_use())
# No form: Enter in a field only enters that value. Saving takes the button, under the list of
# what would change; with nothing changed there is nothing to save (no new version).
with st.container(border=True):
    tab_p, tab_g, tab_m, tab_v = st.tabs(["Prices", "GWP values", "MAC at age 40", "Vaporizer maximum"])
    with tab_p:
        c = st.columns(5)
        currency = c[0].text_input(
            "Currency label",
            value=prices_saved.get("currency", default.prices.currency),
            max_chars=12,
            key="ref_currency",
            disabled=locked,
        )
        bottle = {}
        for i, a in enumerate(VOLATILES):
            bottle[a] = c[i + 1].number_input(
                f"{default.agents[a].label} per bottle",
                min_value=0.0,
                step=1.0,
                value=float(ref.prices.bottle.get(a, 0.0)),
                key=f"ref_bottle_{a}",
                disabled=locked,
            )
        c = st.columns(4)
        gases = {}
        for i, (k, label) in enumerate(
            [
                ("oxygen_per_1000_l", "Oxygen per 1000 L"),
                ("air_per_1000_l", "Medical air per 1000 L"),
                ("nitrous_oxide_per_1000_l", "Nitrous oxide per 1000 L"),
                ("absorbent_per_kg", "CO2 absorbent per kg"),
            ]
        ):
            gases[k] = c[i].number_input(
                label, min_value=0.0, step=0.5, value=float(getattr(ref.prices, k)), key=f"ref_{k}", disabled=locked
            )
        st.caption("Shipped prices are invented examples; put your own contract prices here.")
    with tab_g:
        st.caption(
            'Values for the source "User values" (GWP100, kg CO2e per kg). Choose that source in '
            "the sidebar to use them. Leave empty to give none: under this source, a plan that "
            "uses an agent or N2O with no value is not worked out, and its message names the value."
        )
        user_saved = saved.get("gwp", {}).get("user", {})
        c = st.columns(5)
        gwp_user = {}
        for i, a in enumerate(list(VOLATILES) + ["nitrous_oxide"]):
            v = c[i].number_input(
                default.agents[a].label,
                min_value=0.0,
                step=1.0,
                value=user_saved.get(a),
                key=f"ref_gwp_{a}",
                placeholder="none",
                disabled=locked,
            )
            if v is not None:
                gwp_user[a] = float(v)
    with tab_m:
        st.caption(
            "MAC at age 40 in O2 (%). Every MAC is adjusted for age with Mapleson's equation (1996). "
            "His own MAC at 40 keeps the adjustment within one method; the prescribing "
            "information's values (sevoflurane 2.1 %, desflurane 6.0 %) come from other studies. "
            "The set in use is named on every page and in every export. A value you change here "
            "is your own and stays in use whichever set you choose."
        )
        mac_set = st.selectbox(
            "MAC set",
            list(MAC_SETS),
            index=list(MAC_SETS).index(ref.mac_set),
            format_func=lambda k: MAC_SETS[k].label,
            key="ref_macset",
            disabled=locked,
        )
        c = st.columns(5)
        mac = {}
        for i, a in enumerate(list(VOLATILES) + ["nitrous_oxide"]):
            mac[a] = c[i].number_input(
                default.agents[a].label,
                min_value=0.0,
                step=0.05,
                value=float(ref.agents[a].mac40),
                key=f"ref_mac_{a}",
                format="%.3g",
                disabled=locked,
            )
    with tab_v:
        st.caption(
            "Highest dial setting of your vaporizers (%). Plan dials above it are refused, and "
            "targets are reached within it. Follow the workstation's instructions for use."
        )
        c = st.columns(4)
        vapmax = {}
        for i, a in enumerate(VOLATILES):
            vapmax[a] = c[i].number_input(
                default.agents[a].label,
                min_value=0.5,
                max_value=100.0,
                step=0.5,
                value=float(ref.agents[a].vaporizer_max),
                key=f"ref_vapmax_{a}",
                format="%.3g",
                disabled=locked,
            )


def _collect() -> dict:
    out: dict = {}
    prices: dict = {}
    if currency.strip() != default.prices.currency:
        prices["currency"] = currency.strip()
    changed_bottles = {a: v for a, v in bottle.items() if abs(v - default.prices.bottle.get(a, 0.0)) > 1e-12}
    if changed_bottles:
        prices["bottle"] = changed_bottles
    for k, v in gases.items():
        if abs(v - getattr(default.prices, k)) > 1e-12:
            prices[k] = v
    if prices:
        out["prices"] = prices
    if gwp_user:
        out["gwp"] = {"user": gwp_user}
    if mac_set != DEFAULT_MAC_SET:
        out["mac"] = {"set": mac_set}
    # A MAC is the user's own when it was already (and is kept), or when it was changed in
    # the form; an untouched value follows the chosen set.
    agents = {
        a: {"mac40": v}
        for a, v in mac.items()
        if abs(v - ref.agents[a].mac40) > 1e-9 or ref.agents[a].values["mac40"].basis == USER
    }
    for a, v in vapmax.items():
        if abs(v - default.agents[a].vaporizer_max) > 1e-9:
            agents.setdefault(a, {})["vaporizer_max"] = v
    if agents:
        out["agents"] = agents
    return out


overrides = _collect()
pending = changes_between(saved, overrides)
with st.container(border=True):
    if not pending:
        st.caption("No value differs from the values in use: nothing to save.")
    else:
        st.markdown(f"**To save: {len(pending)} changed value(s)**, from the values in use now to those above")
        st.dataframe(
            pd.DataFrame(
                {
                    "value": [path for path, _, _ in pending],
                    "now": [change_text(default, path, old) for path, old, _ in pending],
                    "after saving": [change_text(default, path, new) for path, _, new in pending],
                }
            ),
            hide_index=True,
            width="stretch",
        )
    n1, n2 = st.columns([3, 1], vertical_alignment="bottom")
    note = n1.text_input(
        "Note for this set of values",
        placeholder="optional, e.g. 2026 contract prices",
        disabled=locked,
        key="ref_note",
    )
    submitted = n2.button(
        "Save my values",
        type="primary",
        icon=":material/save:",
        disabled=locked,
        key="ref_save_btn",
        width="stretch",
    )

if submitted and locked:  # the button is disabled; refuse here too
    st.warning(ui.md(f"Not saved. {permission.reason}"), icon=":material/lock:")
elif submitted and not pending:
    st.info("No value differs from the values in use: nothing saved, no new version.", icon=":material/info:")
elif submitted:
    try:
        default.with_overrides(overrides, "dashboard")  # check before saving
    except InputError as err:
        ui.show_input_error(err, "Not saved")
    else:
        version = store.save_overrides(overrides, note=note, author=ui.author())
        ss["ref_reset_form"] = True  # a new MAC set changes the MAC values the form shows
        ss["gl_currency_pending"] = currency.strip()
        ss.pop("ref_note", None)
        ss["ref_msg"] = (
            f"Saved your values as version {version}; every page now uses them. Changed: "
            + "; ".join(
                f"{path} {change_text(default, path, old)} -> {change_text(default, path, new)}"
                for path, old, new in pending
            )
            + "."
        )
        st.rerun()
msg = ss.pop("ref_msg", None)
if msg:
    st.success(msg, icon=":material/check_circle:")

changes = reference_changes(history)
with st.expander(f"Change log ({len(changes)} changed values)", icon=":material/manage_history:"):
    st.caption(
        "Who changed which value, from what to what, and when. Every set of values stays "
        "saved; an editor can put an earlier one back in use below."
    )
    if not changes:
        st.caption("No value changed yet: the built-in defaults apply.")
    else:
        st.dataframe(
            pd.DataFrame(
                {
                    "saved": [when_text(c.saved_at) for c in changes],
                    "by": [author_label(c.author) for c in changes],
                    "value": [c.path for c in changes],
                    "from": [change_text(default, c.path, c.old) for c in changes],
                    "to": [change_text(default, c.path, c.new) for c in changes],
                    "version": [c.version for c in changes],
                    "note": [c.note for c in changes],
                }
            ),
            hide_index=True,
            width="stretch",
        )

with st.expander(f"Earlier sets of values ({len(history)})", icon=":material/history:"):
    if not history:
        st.caption("None saved yet: the built-in defaults apply.")
    else:
        st.dataframe(
            pd.DataFrame(
                {
                    "version": [v.version for v in history],
                    "saved": [when_text(v.saved_at) for v in history],
                    "by": [author_label(v.author) for v in history],
                    "note": [v.note for v in history],
                    "values": [v.body for v in history],
                }
            ),
            hide_index=True,
            width="stretch",
        )
        if locked:
            st.caption(ui.md(permission.reason))
        h1, h2, h3 = st.columns([1, 1, 2], vertical_alignment="bottom")
        pick = h1.selectbox("Version", [v.version for v in history], key="ref_restore_pick")
        if h2.button("Use this version again", icon=":material/restore:", disabled=locked) and not locked:
            body = store.get("overrides", "dashboard", int(pick)).body
            restored = json.loads(body)
            if not changes_between(saved, restored):
                ss["ref_msg"] = f"Version {pick}'s values are the values in use: nothing saved."
                st.rerun()
            version = store.save_overrides(restored, note=f"restored version {pick}", author=ui.author())
            ss["ref_reset_form"] = True
            ss["gl_currency_pending"] = (restored.get("prices") or {}).get("currency") or default.prices.currency
            ss["ref_msg"] = f"Version {pick} is in use again (saved as version {version})."
            st.rerun()
        if h3.button("Go back to the built-in defaults", icon=":material/undo:", disabled=locked) and not locked:
            if not changes_between(saved, {}):
                ss["ref_msg"] = "The built-in defaults are in use: nothing saved."
                st.rerun()
            version = store.save_overrides({}, note="back to built-in defaults", author=ui.author())
            ss["ref_reset_form"] = True
            ss["gl_currency_pending"] = default.prices.currency
            ss["ref_msg"] = f"Built-in defaults in use (saved as version {version}; earlier values kept)."
            st.rerun()
