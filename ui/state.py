"""Page inputs that survive moving between pages (widget state kept across the session).

Streamlit removes a widget's value from ``st.session_state`` at the end of a run in which
the widget was not drawn, so a page's inputs would go blank after a visit to another page.
Its documented remedy ("Working with widgets in multipage apps", "Interrupting the widget
clean-up process") is to assign each such key to itself early in every run:
``st.session_state[k] = st.session_state[k]`` turns the widget's value into a value of the
session, which the clean-up leaves alone and the widget reads back when it is drawn again.
:func:`keep_page_inputs` does that for every page's keys from the entry point (``app.py``),
before the page runs.

Some widgets cannot be given a value that way (buttons, downloads, file uploads, data
editors); their keys are recognised by name (:data:`NOT_SETTABLE`) and never copied. A
data editor's edits are kept with :func:`editor_base` and :func:`remember_editor` instead:
the table as last edited becomes the table the editor starts from when it is drawn again.
"""

from __future__ import annotations

import re

import streamlit as st

#: Key prefixes of the pages' inputs (one per page, and the settings sidebar).
PAGE_PREFIXES = ("cp_", "cmp_", "dy_", "yc_", "ref_", "ra_", "gl_")
#: Keys Streamlit lets no one set: downloads (``*_dl*``), uploads (``*_upload*``), charts
#: (``*_fig*``), buttons (``*_btn*``) and data editors (``cp_phases_*``, ``dy_mix_*``).
NOT_SETTABLE = re.compile(r"_(dl|upload|fig|btn)(_|$)|^cp_phases_|^dy_mix_")
_KEPT = "_gl_editor_kept"
_BASE = "_gl_editor_base"


def keepable(key) -> bool:
    """Whether a session key is a page input that :func:`keep_page_inputs` copies back."""
    return isinstance(key, str) and key.startswith(PAGE_PREFIXES) and not NOT_SETTABLE.search(key)


def keep_page_inputs() -> None:
    """Assign every page input's value to itself, so that no page's inputs are cleaned up.

    Streamlit cleans up the inputs of a page while another page is shown. Call once at the
    top of every run (``app.py``).
    """
    ss = st.session_state
    for key in [k for k in ss if keepable(k)]:
        ss[key] = ss[key]


def editor_base(key: str, frame):
    """The table to hand ``st.data_editor(..., key=key)``.

    ``frame`` as given, unless the editor's own state was cleaned up (another page was shown
    since it was last drawn): then the table as last edited (:func:`remember_editor`), so
    the user's edits come back with the page.
    """
    ss = st.session_state
    kept = ss.get(_KEPT, {}).get(key)
    if kept is not None and key not in ss:
        ss.setdefault(_BASE, {})[key] = kept
    return ss.get(_BASE, {}).get(key, frame)


def last_edited(key: str):
    """The editor's table as it was at the end of the previous run (None before the first)."""
    return st.session_state.get(_KEPT, {}).get(key)


def remember_editor(key: str, edited, family: str | None = None) -> None:
    """Keep the editor's table as edited in this run.

    ``family`` is a key prefix whose other editors are forgotten (e.g. earlier revisions of
    the same table).
    """
    ss = st.session_state
    for store in (ss.setdefault(_KEPT, {}), ss.setdefault(_BASE, {})):
        if family:
            for k in [k for k in store if k.startswith(family) and k != key]:
                del store[k]
    ss[_KEPT][key] = edited
