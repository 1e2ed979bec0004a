"""Exports of result tables: CSV, Excel (xlsx) and a self-contained HTML report.

Every text cell that comes from a user (plan names, phase names, notes) may begin with a
character a spreadsheet program reads as the start of a formula (``=``, ``+``, ``-``, ``@``,
tab, carriage return), also after leading spaces or no-break spaces. Such cells are written
with a leading apostrophe so they stay text (:mod:`model.base.cells`, the one neutralising
writer of every CSV and workbook); numbers stay numbers. The HTML report escapes every
piece of text and carries plotly's JavaScript inline (nothing is fetched when it is opened).
"""

from __future__ import annotations

import csv
import html
import io
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from datetime import UTC, datetime

import numpy as np
import pandas as pd

from model.base.cells import FORMULA_STARTS as FORMULA_STARTS  # re-exported: the one neutraliser
from model.base.cells import NEUTRAL_PREFIX as NEUTRAL_PREFIX
from model.base.cells import csv_text, workbook_text
from model.base.cells import neutralise as neutralise
from model.base.cells import neutralise_frame as neutralise_frame
from model.present.provenance import HEADING, LOWEST_O2_ROW, Provenance, time_text
from model.present.readable import column_label, is_money, number_text, readable_frame


def to_csv(df: pd.DataFrame, provenance: Provenance | None = None) -> bytes:
    """One table as CSV (UTF-8, RFC 4180 line ends), formula cells neutralised.

    CRLF line ends make the writer quote any field holding a carriage return or newline;
    :func:`model.base.cells.csv_text` is the one neutralising writer, and an infinite figure
    is an empty cell (:func:`finite_or_empty`).
    With ``provenance`` the file opens with its block (:mod:`model.present.provenance`):
    one line per row, each beginning with ``#`` (a comment to readers such as
    ``pandas.read_csv(..., comment="#")``), then a blank line, then the table.
    """
    table = csv_text(_whole_numbers(finite_or_empty(df)))
    if provenance is None:
        return table.encode("utf-8")
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\r\n")
    writer.writerow([f"# {HEADING}", neutralise(provenance.what)])
    for name, value in provenance.rows():
        writer.writerow([f"# {name}", neutralise(value)])
    buf.write("\r\n")
    return (buf.getvalue() + table).encode("utf-8")


def finite_or_empty(df: pd.DataFrame) -> pd.DataFrame:
    """``df`` with every infinite number made an empty cell, as NaN is: no file says "inf".

    The workbook and HTML writers leave a figure that is not finite empty too
    (:func:`_cell`, :func:`model.present.readable.number_text`).
    """
    numbers = df.select_dtypes(include="number")
    if numbers.empty or bool(np.isfinite(numbers.to_numpy(dtype=float, na_value=0.0)).all()):
        return df
    out = df.copy()
    for col in numbers.columns:
        out[col] = out[col].where(~np.isinf(out[col].to_numpy(dtype=float, na_value=0.0)))
    return out


def _whole_numbers(df: pd.DataFrame) -> pd.DataFrame:
    """Whole-number floats of a table as integers ("3080", not "3080.0"); other figures unchanged."""
    out = df.copy()
    for col in out.columns:
        s = out[col]
        if pd.api.types.is_float_dtype(s):
            whole = s.notna() & np.isfinite(s.to_numpy(dtype=float, na_value=np.nan)) & (s == s.round())
            if whole.any() and not is_money(col):
                values = [int(v) if w and abs(v) < 2**53 else v for v, w in zip(s, whole, strict=True)]
                out[col] = pd.Series(values, index=s.index, dtype=object)
    return out


_SHEET_BAD = re.compile(r"[\[\]:*?/\\]")


def _sheet_title(name: str, used: set) -> str:
    """A sheet name Excel takes (31 characters at most, no reserved character), cut between words, never repeated."""
    title = re.sub(r"\s+", " ", _SHEET_BAD.sub(" ", workbook_text(str(name)))).strip("' ") or "Sheet"
    if len(title) > 31:
        cut = title[:31] if title[31] == " " else title[:31].rsplit(" ", 1)[0]
        cut = cut.rstrip(" ,;:-")
        title = cut if len(cut) >= 12 else title[:31]
    base, n = title, 2
    while title.lower() in used:
        suffix = f" ({n})"
        title = base[: 31 - len(suffix)] + suffix
        n += 1
    used.add(title.lower())
    return title


def _cell(value):
    """A value openpyxl writes as a plain cell (numbers as numbers, text neutralised)."""
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return v if math.isfinite(v) else None
    if isinstance(value, (pd.Timestamp, datetime)):
        return value.isoformat()
    try:
        if pd.isna(value):
            return None
    except (TypeError, ValueError):
        pass
    return workbook_text(str(value))


def to_xlsx(
    sheets: Mapping[str, pd.DataFrame], notes: Sequence[str] = (), provenance: Provenance | None = None
) -> bytes:
    """Several tables as one Excel workbook, one sheet each, plus an optional notes sheet.

    Text cells are neutralised and typed as text; numbers are written as numbers. With
    ``provenance`` the first sheet is its block ("About this file": safety and lowest
    predicted inspired O2 first, then program, time, input files, prices, GWP source,
    settings).
    """
    from openpyxl import Workbook
    from openpyxl.styles import Font

    wb = Workbook()
    wb.remove(wb.active)
    used: set = set()
    if provenance is not None:
        sheets = {HEADING: provenance.frame(), **{k: v for k, v in sheets.items() if k != HEADING}}
    for name, df in sheets.items():
        ws = wb.create_sheet(_sheet_title(name, used))
        ws.append([_cell(str(c)) for c in df.columns])
        for cell in ws[1]:
            cell.font = Font(bold=True)
        for row in df.itertuples(index=False, name=None):
            ws.append([_cell(v) for v in row])
        for cell_row in ws.iter_rows(min_row=1):
            for cell in cell_row:
                if isinstance(cell.value, str):
                    cell.data_type = "s"  # never a formula, whatever the text
        for i, col in enumerate(df.columns, start=1):
            width = max([len(str(col))] + [len(str(v)) for v in df[col].head(200)]) + 2
            ws.column_dimensions[ws.cell(1, i).column_letter].width = min(60, max(8, width))
        ws.freeze_panes = "A2"
    if notes:
        ws = wb.create_sheet(_sheet_title("Notes", used))
        for line in notes:
            ws.append([_cell(line)])
            ws.cell(ws.max_row, 1).data_type = "s"
        ws.column_dimensions["A"].width = 120
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


def chart_text(text) -> str:
    """User text for a plotly label (plotly reads a few HTML tags in labels; escape them)."""
    return html.escape(str(text), quote=True)


_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:2rem auto;max-width:1100px;
color:#1d2a33;line-height:1.45;padding:0 1rem}
h1{font-size:1.6rem;margin-bottom:.2rem}h2{font-size:1.2rem;margin-top:2rem;border-bottom:1px solid #cfd8dc;
padding-bottom:.2rem}.meta{color:#546e7a;font-size:.9rem}
.table-wrap{max-width:100%;overflow-x:auto;margin:.5rem 0}
table{border-collapse:collapse;font-size:.8rem}th,td{border:1px solid #cfd8dc;
padding:.2rem .4rem;text-align:left;vertical-align:top;overflow-wrap:break-word;hyphens:auto}
th{background:#eef3f5;font-weight:600}td.num{text-align:right;
white-space:nowrap;font-variant-numeric:tabular-nums}
.figure{max-width:100%;overflow:hidden;break-inside:avoid}
@media print{body{margin:0;max-width:none}.table-wrap{overflow:visible}table{font-size:7pt}
h2{break-after:avoid}}
.caution{background:#fff8e1;border-left:4px solid #f0a500;padding:.6rem 1rem;margin:1rem 0}
.headline{font-size:1.15rem;font-weight:600;background:#eef3f5;border-left:4px solid #2f6f8f;
padding:.6rem 1rem}
.warning{background:#fdecea;border-left:4px solid #c62828;padding:.4rem 1rem;margin:.3rem 0}
.warning-mid{background:#fff8e1;border-left:4px solid #f0a500;padding:.4rem 1rem;margin:.3rem 0}
.note{background:#f3f5f7;border-left:4px solid #78909c;padding:.4rem 1rem;margin:.3rem 0}
.safety{margin:.4rem 0}.safety.unsafe{background:#fdecea;color:#8e0000;padding:.4rem 1rem}
table.about th{width:14rem}tr.unsafe td,tr.unsafe th{background:#fdecea;color:#8e0000;font-weight:600}
table.about td{overflow-wrap:anywhere}
"""


#: Most columns of one report table; a wider table is shown in parts that repeat its first
#: column, so every part fits A4 width (a page never scrolls sideways, nothing is cut on print).
MAX_REPORT_COLUMNS = 8


def _table_html(df: pd.DataFrame) -> str:
    """A table as HTML: headings in words with units, figures as :func:`number_text` shows them.

    Tables wider than ``MAX_REPORT_COLUMNS`` are split into parts that repeat the first column.
    """
    if len(df.columns) > MAX_REPORT_COLUMNS:
        first, rest = df.columns[:1], list(df.columns[1:])
        step = MAX_REPORT_COLUMNS - 1
        n = -(-len(rest) // step)
        step = -(-len(rest) // n)  # parts of even width
        return "".join(_table_part(df[list(first) + rest[i : i + step]]) for i in range(0, len(rest), step))
    return _table_part(df)


def _table_part(df: pd.DataFrame) -> str:
    head = "".join(f"<th>{html.escape(column_label(c))}</th>" for c in df.columns)
    money = [is_money(c) for c in df.columns]
    rows = []
    for row in df.itertuples(index=False, name=None):
        cells = []
        for v, m in zip(row, money, strict=True):
            if isinstance(v, (bool, np.bool_)):
                cells.append(f"<td>{'yes' if v else 'no'}</td>")
            elif isinstance(v, (int, np.integer, float, np.floating)):
                cells.append(f"<td class='num'>{number_text(v, m)}</td>")
            elif v is None:
                cells.append("<td></td>")
            else:
                cells.append(f"<td>{html.escape(str(v))}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    # On a screen narrower than the table, it scrolls inside its own box, never the page.
    return f"<div class='table-wrap'><table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table></div>"


def _report_figure(fig):
    """A copy of a figure for a report, sized by the report.

    It takes the report's width (never a fixed one), and every axis makes room for its tick
    labels and title (plotly's automargin), so labels are never cut at the figure's edge on
    A4 or on a screen. The page's own figure is left as it is.
    """
    import plotly.graph_objects as go

    out = go.Figure(fig)
    out.update_layout(width=None, autosize=True)
    out.update_xaxes(automargin=True)
    out.update_yaxes(automargin=True)
    return out


def _provenance_html(provenance: Provenance) -> str:
    """The provenance block as a small two-column table (its safety row marked when unsafe)."""
    e = html.escape
    rows = []
    for name, value in provenance.rows():
        mark = " class='unsafe'" if name == "safety" and value.startswith("UNSAFE") else ""
        rows.append(f"<tr{mark}><th scope='row'>{e(name)}</th><td>{e(value)}</td></tr>")
    return (
        f"<section id='provenance'><h2>{e(HEADING)}</h2><div class='table-wrap'><table class='about'>"
        + "".join(rows)
        + "</table></div></section>"
    )


def html_export(
    title: str,
    *,
    inputs: Mapping[str, object] | None = None,
    tables: Mapping[str, pd.DataFrame] | None = None,
    figures: Iterable[tuple[str, object]] = (),
    warnings: Sequence[str] = (),
    cautions: Sequence[str] = (),
    sources: pd.DataFrame | None = None,
    generated_by: str = "Fresh Gas Ledger",
    headline: str = "",
    summary: Sequence[str] = (),
    sections: Mapping[str, Sequence[str]] | None = None,
    figures_first: bool = False,
    currency: str = "",
    provenance: Provenance | None = None,
) -> str:
    """A self-contained HTML report: headline, hazards, figures, then cautions, notes, inputs, sources.

    The figures come before the long parts: the standing caution and the hazards (each group
    of identical cautions in one box) above them; cautions of the middle severity, labelling
    notes, further notes, the inputs and the provenance block after them.

    Parameters
    ----------
    title : str
        Report title (user text; escaped).
    inputs : mapping
        Input names and values, shown as a two-column table.
    tables : mapping of str to DataFrame
        Result tables by heading.
    figures : iterable of (str, plotly Figure)
        Charts by heading; plotly.js is inlined once, so the file opens offline.
    warnings, cautions : sequence of str
        Model warnings for these inputs, and the standing cautions.
    sources : DataFrame, optional
        The reference values used, with their sources.
    headline, summary : str, sequence of str
        A headline shown in a box under the title, and paragraphs under it (escaped).
    sections : mapping of str to sequence of str, optional
        Text sections (heading: paragraphs) after the charts, e.g. a method statement.
    figures_first : bool
        Charts before the tables (after the inputs) rather than after them.
    currency : str
        Currency label for the headings of cost columns. Tables are shown for people
        (``model.present.readable.readable_frame``: headings in words with units, figures to
        sensible significant figures).

    Returns
    -------
    str
        The HTML document.
    """
    e = html.escape
    parts = [
        f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<meta name='viewport' content='width=device-width, initial-scale=1'>"
        f"<title>{e(str(title))}</title><style>{_CSS}</style></head><body>",
        f"<h1>{e(str(title))}</h1>",
    ]
    if provenance is None:
        parts.append(f"<p class='meta'>{e(generated_by)}, {time_text(datetime.now(UTC))}</p>")
    if headline:
        parts.append(f"<p class='headline' id='headline'>{e(str(headline))}</p>")
    if provenance is not None:
        rows = dict(provenance.rows()[:2])
        mark = " unsafe" if provenance.safety.startswith("UNSAFE") else ""
        parts.append(
            f"<p class='safety{mark}' id='safety'><strong>Safety:</strong> {e(provenance.safety)}. "
            f"<strong>Lowest predicted inspired O2:</strong> {e(rows[LOWEST_O2_ROW])}.</p>"
        )
    parts.extend(f"<p>{e(str(p))}</p>" for p in summary)
    # The standing caution first; hazards next, each group in one red box; the figures follow,
    # and the cautions of the middle severity, labelling notes and other notes after them.
    cautions = list(cautions)
    if cautions:
        parts.append(f"<div class='caution'>{e(str(cautions[0]))}</div>")
    hazards = [w for w in warnings if str(w).upper().startswith("HAZARD")]
    rest = [w for w in warnings if not str(w).upper().startswith("HAZARD")]
    if hazards:
        parts.append("<h2>Hazards</h2>")
        parts.extend(f"<div class='warning'>{e(str(w))}</div>" for w in hazards)
    table_parts = []
    for heading, df in (tables or {}).items():
        table_parts.append(f"<h2>{e(str(heading))}</h2>")
        table_parts.append(_table_html(readable_frame(df, currency)))
    figure_parts = []
    first = True
    for heading, fig in figures:
        if fig is None:
            continue
        figure_parts.append(f"<h2>{e(str(heading))}</h2>")
        figure_parts.append(
            "<div class='figure'>"
            + _report_figure(fig).to_html(
                full_html=False,
                include_plotlyjs=True if first else False,
                default_width="100%",
                config={"displaylogo": False, "responsive": True},
            )
            + "</div>"
        )
        first = False
    parts.extend(figure_parts + table_parts if figures_first else table_parts + figure_parts)
    if rest:
        parts.append("<h2>Cautions and labelling notes</h2>")
        parts.extend(
            f"<div class='{'note' if str(w).upper().startswith('LABELLING') else 'warning-mid'}'>{e(str(w))}</div>"
            for w in rest
        )
    if len(cautions) > 1:
        parts.append("<h2>Notes and cautions</h2>")
        parts.append("<ul>" + "".join(f"<li>{e(str(c))}</li>" for c in cautions[1:]) + "</ul>")
    if inputs:
        parts.append("<h2>Inputs</h2>")
        parts.append(_table_html(pd.DataFrame({"input": list(inputs), "value": [str(v) for v in inputs.values()]})))
    for heading, paragraphs in (sections or {}).items():
        parts.append(f"<h2>{e(str(heading))}</h2>")
        parts.append("<ul>" + "".join(f"<li>{e(str(p))}</li>" for p in paragraphs) + "</ul>")
    if sources is not None and len(sources):
        parts.append("<h2>Reference values and their sources</h2>")
        parts.append(_table_html(sources))
    if provenance is not None:
        parts.append(_provenance_html(provenance))
    parts.append("</body></html>")
    return "\n".join(parts)
