"""Numbers, names and files as people read them, on every page and in every download.

Builds on :mod:`model.present.readable` (headings in words with units, sensible significant
figures, problem kinds and GWP sources in words), which the HTML reports use too, and adds
what only the pages need: ``table`` (``st.dataframe`` with readable headings, thousands
separators and wide message columns) and ``plain_paths`` (messages name files as the user
knows them, never by their place on the server).
"""

from __future__ import annotations

import os
import re
import tempfile
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pandas as pd
import streamlit as st

from model.present.readable import (  # noqa: F401
    column_label,
    gwp_label,
    is_money,
    number_text,
    problem_words,
    readable_frame,
    round_figure,
)

ROOT = Path(__file__).resolve().parents[1]

#: Text columns that hold sentences: shown wide so a message is not cut at the table's edge.
_WIDE_TEXT = ("message", "source", "note", "values", "default_source")
_LEADING_PLACE = re.compile(r"^.*?: (line|row) \d+: ")
#: Tables with more columns than this keep their first column in view while scrolled sideways.
PIN_AFTER_COLUMNS = 7


def column_config(df: pd.DataFrame) -> dict:
    """``st.dataframe`` column settings for a readable table.

    Thousands separators (the reader's locale), whole numbers without decimals, small
    numbers to three figures, long text columns wide.
    """
    config = {}
    for col in df.columns:
        s = df[col]
        name = str(col)
        if pd.api.types.is_bool_dtype(s):
            continue
        if pd.api.types.is_integer_dtype(s):
            config[col] = st.column_config.NumberColumn(format="localized")
        elif pd.api.types.is_float_dtype(s):
            finite = s[np.isfinite(s.to_numpy(dtype=float, na_value=np.nan))].abs()
            small = len(finite) and finite.max() < 0.01 and finite.max() > 0
            config[col] = st.column_config.NumberColumn(format="%.3g" if small else "localized")
        elif any(w in name.lower() for w in _WIDE_TEXT):
            config[col] = st.column_config.TextColumn(width="large")
    if len(df.columns) > PIN_AFTER_COLUMNS:
        # A wide table on a laptop: the first column (what each row is) stays in view.
        first = df.columns[0]
        if first in config:
            config[first]["pinned"] = True
        else:
            config[first] = st.column_config.Column(pinned=True)
    return config


def table(
    df: pd.DataFrame,
    currency: str = "",
    *,
    key: str | None = None,
    config: Mapping | None = None,
    first: tuple[str, ...] = (),
    **kwargs,
) -> None:
    """Show a result table for people (``st.dataframe`` of :func:`readable_frame`).

    ``first`` names columns (by their machine names) to show first, so the figures that
    matter are in view on a laptop before any sideways scrolling; a wide table keeps its
    first column pinned. ``config`` adds or replaces column settings (by readable heading);
    other keyword arguments go to ``st.dataframe`` (``height``, ``width``...). The index is hidden.
    """
    if first:
        lead = [c for c in first if c in df.columns]
        df = df[lead + [c for c in df.columns if c not in lead]]
    shown = readable_frame(df, currency)
    cc = column_config(shown)
    cc.update(config or {})
    kwargs.setdefault("hide_index", True)
    kwargs.setdefault("width", "stretch")
    st.dataframe(shown, column_config=cc, key=key, **kwargs)


def issue_messages(issues: pd.DataFrame) -> pd.DataFrame:
    """Set-aside rows for the page: line, problem, message, then column, value and file.

    The message loses the file and line it starts with (they have columns of their own),
    so it is in view at the left rather than cut off at the table's right edge.
    """
    out = issues.copy()
    if "message" in out:
        out["message"] = out["message"].astype(str).str.replace(_LEADING_PLACE, "", regex=True)
    lead = [c for c in ("row", "kind", "message", "column", "value", "file") if c in out.columns]
    return out[lead + [c for c in out.columns if c not in lead]]


def _temp_roots() -> list[str]:
    roots = {tempfile.gettempdir(), "/tmp", "/var/tmp"}
    return sorted({r.rstrip("/") for r in roots if r}, key=len, reverse=True)


def plain_paths(text, known: Mapping[str, str] | None = None) -> str:
    """A message that names files as the user knows them, never by their place on the server.

    ``known`` maps server paths to the user's names (an upload's name, a demo file's name);
    such a path is replaced by its name, also when a message shortened it to "...<end>". Any
    other path inside the project folder, the home folder or a temporary folder is cut to its
    file name.
    """
    if not isinstance(text, str):
        return text
    for path, name in sorted((known or {}).items(), key=lambda kv: len(str(kv[0])), reverse=True):
        path = str(path)
        text = text.replace(path, name)
        for m in list(re.finditer(r"\.\.\.(\S+)", text)):
            tail = m.group(1).rstrip("'\",;:)")
            if len(tail) > 3 and path.endswith(tail):
                text = text.replace("..." + tail, name)
    prefixes = [str(ROOT), str(Path.home())] + _temp_roots()
    for prefix in sorted({p.rstrip("/") for p in prefixes if p and p != "/"}, key=len, reverse=True):
        text = re.sub(re.escape(prefix) + r"/(?:[^\s'\"]*/)?([^\s/'\"]+)", r"\1", text)
    return text


def file_name(path) -> str:
    """The name of a file as a user knows it (no folder)."""
    return os.path.basename(str(path)) or str(path)


#: The file formats a page reads, in short, shown on the page itself (the full formats are in
#: the documentation's File formats page).
FORMAT_HELP = {
    "Case records": (
        "One row per sample of a case, CSV (UTF-8) or Parquet, **de-identified**. Columns: `case_id`; "
        "`time` (date-time) or `elapsed` (minutes since the start, with an optional `date`); optional "
        "`theatre`; `agent` (sevoflurane, desflurane, isoflurane, halothane or none); flows `o2`, `air`, "
        "`n2o` in L/min, or `fgf` with `o2_share` (and `n2o_share`); `dial` and/or `end_tidal` in %. "
        "A unit may go in the column name, e.g. `o2 [mL/min]`. Bad rows are set aside and listed."
    ),
    "Purchases": (
        "CSV or Parquet, one purchase a line: `month,item,quantity,unit,size`, e.g. "
        "`2025-01,sevoflurane,9,bottle,` or `2025-01,nitrous_oxide,1,cylinder,9000 L`. `month` is "
        "YYYY-MM; `unit` is bottle, cylinder (size required), a volume or a mass; an optional `site` "
        "column. Lines beginning with `#` are comments; bad lines are set aside and listed."
    ),
    "Plan files": (
        "TOML: `name`, `agent`, a `[patient]` table (`weight`, `age`), a `[settings]` table (all "
        "optional) and one `[[phases]]` table per phase with `name`, `duration`, flows `o2`, `air`, "
        "`n2o` and either `dial` (%) or `target` (x MAC). Numbers may carry units as text, e.g. "
        '"500 mL/min". Export a plan from this page to see a complete file.'
    ),
}
ON_THIS_PAGE = "'File formats' on this page"


def page_words(text: str) -> str:
    """A message as the page shows it: file formats pointed to on the page, not in the repository."""
    text = re.sub(r"docs/formats\.md, ('[^']+')", rf"\1 under {ON_THIS_PAGE}", str(text))
    text = re.sub(r"('[^']+') in docs/formats\.md", rf"\1 under {ON_THIS_PAGE}", text)
    text = re.sub(r"in docs/formats\.md, the (\w+) format", rf"under {ON_THIS_PAGE}, the \1 format", text)
    return text.replace("docs/formats.md", ON_THIS_PAGE)


def format_help(*names: str, inline: bool = False) -> None:
    """The formats this page reads, in an expander named 'File formats' (``inline``: as captions, inside another)."""
    if inline:
        for name in names:
            st.caption(f"**File formats, {name.lower()}.** {FORMAT_HELP[name]}")
        return
    with st.expander("File formats", icon=":material/description:"):
        for name in names:
            st.markdown(f"**{name}.** {FORMAT_HELP[name]}")
