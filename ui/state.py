"""Page inputs that survive moving between pages (widget state kept across the session).

Streamlit removes a widget's value from ``st.session_state`` at the end of a run in which
the widget was not drawn, so a page's inputs would go blank after a visit to another page.
Its documented remedy ("Working with widgets in multipage apps", "Interrupting the widget
clean-up process") is to assign each such key to itself early in every run:
``st.session_state[k] = st.session_state[k]`` turns the widget's value into a value of the
session, which the clean-up leaves alone and the widget reads back when it is drawn again.
:func:`keep_page_inputs` does that for every page's keys from the entry point (``app.py``),
before the page runs. A page's keys start with its prefix (:data:`PAGE_PREFIXES`); a key
with another prefix is not kept (tests/ui_pages/test_state.py checks every key in pages/
and ui/).

Some widgets cannot be given a value that way (buttons, downloads, file uploads, data
editors); their keys are recognised by name (:data:`NOT_SETTABLE`) and never copied. A
data editor's edits are kept with :func:`editor_base` and :func:`remember_editor` instead:
the table as last edited becomes the table the editor starts from when it is drawn again.
Uploaded files are kept with :func:`kept_uploads`: the checked files are held for the session
under what they hold (``"records"``, ``"purchases"``, ``"sites"``), so a page shows them again
after a visit elsewhere and every page that reads the same kind of file uses them.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import streamlit as st

from model.base.files import Source

from .common import checked_uploads, md

#: Key prefixes of the pages' inputs (one per page, and the settings sidebar).
PAGE_PREFIXES = ("cp_", "cmp_", "dy_", "yc_", "ref_", "ra_", "er_", "gl_", "or_", "tr_")
#: Keys Streamlit lets no one set: downloads (``*_dl*``), uploads (``*_upload*``), charts
#: (``*_fig*``), buttons (``*_btn*``) and data editors (``cp_phases_*``, ``dy_mix_*``).
NOT_SETTABLE = re.compile(r"_(dl|upload|fig|btn)(_|$)|^cp_phases_|^dy_mix_")
_KEPT = "_gl_editor_kept"
_BASE = "_gl_editor_base"
#: Uploaded files kept for the session: what they hold ("records", ...) -> checked files.
_FILES = "_gl_kept_files"
#: Per uploader: the kept files it started from when it was drawn anew (after another page).
_CARRIED = "_gl_kept_carried"
#: Per uploader: the file ids it held at its last run and those files as checked.
_CHECKED = "_gl_kept_checked"


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


def forget_inputs(belongs) -> None:
    """Forget the page inputs whose key ``belongs(key)`` says yes to, data editors' edits included.

    Their widgets start again from the values the page gives them. Call before they are drawn.
    """
    ss = st.session_state
    for key in [k for k in ss if isinstance(k, str) and belongs(k)]:
        del ss[key]
    for store in (ss.get(_KEPT, {}), ss.get(_BASE, {})):
        for key in [k for k in store if belongs(k)]:
            del store[key]


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


def kept_files(holds: str) -> tuple[Source, ...]:
    """The uploaded files kept for the session that hold ``holds`` ("records", "purchases", "sites")."""
    return st.session_state.get(_FILES, {}).get(holds, ())


def kept_uploads(
    label: str,
    key: str,
    kind: str,
    *,
    holds: str | None = None,
    multiple: bool = False,
    types: Sequence[str] = (),
    where=st,
    help: str | None = None,
) -> list[Source]:
    """A file uploader whose files are kept for the session and shared with the other pages.

    Draws ``where.file_uploader(label, key=key, ...)``; each file goes through the upload guard
    for ``kind`` (:func:`ui.common.checked_uploads`, a refused file stops the page with its
    message). The files in use are kept under ``holds`` (default ``kind``): another page's
    uploader of the same ``holds`` starts from them, and so does this one when it is drawn
    again after a visit to another page (Streamlit empties an uploader that was not drawn).
    Kept files are named under the uploader with a button that forgets them on every page.
    With ``multiple``, files added to the uploader join the kept ones (a file of the same
    name replaces its namesake); else a new file replaces the kept one. A file removed from
    the uploader is no longer used.

    Returns the files in use, kept ones first.
    """
    ss = st.session_state
    holds = holds or kind
    kept = ss.setdefault(_FILES, {})
    carried = ss.setdefault(_CARRIED, {})
    checked = ss.setdefault(_CHECKED, {})
    if key not in ss:  # drawn anew: start from the files kept for the session
        carried[key] = tuple(kept.get(holds, ()))
        checked.pop(key, None)
    value = where.file_uploader(label, type=list(types) or None, accept_multiple_files=multiple, key=key, help=help)
    items = value if isinstance(value, list) else [] if value is None else [value]
    ids = tuple(u.file_id for u in items)
    if not items:
        checked.pop(key, None)
    elif checked.get(key, ((),))[0] != ids:
        checked[key] = (ids, tuple(checked_uploads(items, kind)))
    new = checked[key][1] if items else ()
    if new and not multiple:
        carried[key] = ()
    before = carried.get(key, ())
    if before:
        where.caption(
            "In use, kept for this session: "
            + md(", ".join(f.name for f in before))
            + (". Files added here join them." if multiple else ". A file uploaded here replaces it.")
        )
        if where.button("Forget these files", key=f"{key}_btn_forget", icon=":material/delete:", type="tertiary"):
            carried[key] = ()
            kept.pop(holds, None)
            checked.pop(key, None)
            st.rerun()
    names = {f.name for f in new}
    files = tuple(f for f in before if f.name not in names) + tuple(new)
    if files:
        kept[holds] = files
    else:
        kept.pop(holds, None)
    return list(files)
