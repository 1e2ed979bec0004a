"""Shared pieces of the dashboard pages; presentation only, every computation lives in ``model``.

The settings sidebar, the caution, the store, cached model calls, downloads and chart
builders.

API for page authors (see DEVELOPERS.md, "Dashboard pages"):

- ``page_start(title, intro)`` -> ``ViewSettings``: title, the settings sidebar, the caution.
- ``get_store()``: the session's :class:`model.store.Store`.
- ``reference()``: the Reference with the user's saved overrides and currency label applied.
- ``reference_key()``: a short text that changes whenever ``reference()`` does (cache key).
- ``compute_cached(plan_toml, reference_key(), reference())``: cached ``compute_case``.
- ``md(text)``: user text escaped for markdown (every st.markdown/caption/message with user text).
- ``show_input_error(err)``: one line for a :class:`model.base.errors.InputError`.
- ``downloads(name, tables, report_html, key)``: the CSV / Excel / HTML download row.
- ``current_user()``, ``author()``: who is signed in (``model.store.access.User``) and the author a
  save records; ``reference_permission()``, ``save_permission()``: ``model.store.access.Permission``
  (``allowed``, ``reason``) for changing reference values and for saving.
"""

from .common import (
    CAUTION,
    CAUTION_SHORT,
    ViewSettings,
    apply_settings,
    author,
    checked_uploads,
    compute_cached,
    current_user,
    downloads,
    files_digest,
    get_store,
    md,
    page_start,
    read_sites,
    reference,
    reference_key,
    reference_permission,
    save_permission,
    show_input_error,
    view_settings,
)

__all__ = [
    "CAUTION",
    "CAUTION_SHORT",
    "ViewSettings",
    "apply_settings",
    "author",
    "checked_uploads",
    "compute_cached",
    "current_user",
    "downloads",
    "files_digest",
    "get_store",
    "md",
    "page_start",
    "reference",
    "reference_key",
    "reference_permission",
    "save_permission",
    "read_sites",
    "show_input_error",
    "view_settings",
]
