"""The ``gas-ledger audit`` sub-command: audit case records, reconcile with purchases."""

from __future__ import annotations

import sys
from typing import TYPE_CHECKING

from model.cli.common import CAUTION, print_json, print_table, refuse_infinite, shown_cell

if TYPE_CHECKING:
    from model.audit.reconcile import PurchaseCheck
    from model.audit.result import AuditResult
    from model.reference import Reference

DE_IDENTIFY = (
    "Records must be de-identified before they are audited or shared: no names, hospital numbers or dates of birth."
)


class ProgressLine:
    """One line on a terminal, rewritten in place: share done, then the step (files and rows done)."""

    def __init__(self, stream):
        self.stream = stream
        self._raw = getattr(stream, "raw", stream)  # its own carriage returns, unescaped
        self.width = 0

    def __call__(self, fraction: float, text: str) -> None:
        """Show ``fraction`` done (0 to 1) and the step ``text``, over the line shown before."""
        line = shown_cell(f"audit {min(max(fraction, 0.0), 1.0):4.0%}  {text}")[:120]
        self._raw.write("\r" + line.ljust(self.width))
        self._raw.flush()
        self.width = len(line)

    def clear(self) -> None:
        """Blank the line (before other output)."""
        if self.width:
            self._raw.write("\r" + " " * self.width + "\r")
            self._raw.flush()
            self.width = 0


def register(subparsers) -> None:
    """Add ``audit`` to the ``gas-ledger`` command line."""
    p = subparsers.add_parser(
        "audit",
        help="audit case records (CSV/Parquet); reconcile with purchases",
        description="Per-case consumption, CO2e, cost and flow bands from case records, "
        "sums by theatre, month and agent, and optionally a reconciliation with "
        "purchases. Rows with problems are set aside and reported, never fatal.",
    )
    p.add_argument("files", nargs="+", metavar="FILES", help="record files or globs (.csv, .parquet)")
    p.add_argument(
        "--purchases",
        action="append",
        default=[],
        metavar="FILE",
        help="purchases file (.csv or .parquet); give it again for more files, all reconciled together",
    )
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.add_argument(
        "--gap-limit",
        type=float,
        default=None,
        metavar="MIN",
        help="longest interval between samples that is counted [min] (default 5)",
    )
    p.add_argument(
        "--high-flow-limit",
        type=float,
        default=None,
        metavar="MIN",
        help="flag cases with a high-flow run at least this long [min] (default 15)",
    )
    p.add_argument("--gwp-source", default=None, help="GWP source key (default ar6_gwp100)")
    p.add_argument(
        "--time-zone",
        default=None,
        metavar="ZONE",
        help="IANA time zone of record times written without a UTC offset, e.g. Europe/London (default: as written)",
    )
    p.add_argument(
        "--memory-limit", default=None, metavar="SIZE", help="duckdb memory limit for large record sets, e.g. 3GB"
    )
    p.add_argument(
        "--messages",
        type=int,
        default=20,
        metavar="N",
        help="row-level messages printed (the JSON output carries up to 2000)",
    )
    p.set_defaults(func=cmd_audit)


def cmd_audit(args) -> int:
    """Run ``gas-ledger audit``: audit the records, reconcile with purchases, print or give JSON.

    Returns
    -------
    int
        The exit status (0).
    """
    from model.base.errors import InputError
    from model.reference import load_settings

    reference = load_settings(args.settings)
    if args.messages < 0:
        raise InputError("--messages", args.messages, "expected 0 or more")
    result = _audit(args, reference)
    refuse_infinite({"cases": result.cases}, "audit")
    purchases = _purchases(args, reference, result)
    if args.json:
        print_json(_audit_json(result, purchases))
        return 0
    out = sys.stdout
    _write_records(out, result, args.messages)
    _write_totals(out, result)
    _write_breakdowns(out, result)
    if purchases.recon is not None:
        _write_reconciliation(out, purchases, args.messages)
    out.write(f"\nCost by item, whole period ({result.currency}; purchases priced with the same prices)\n")
    print_table(
        purchases.costs.to_dict("records"),
        ["item", "purchased_cost", "recorded_cost", "unexplained_cost", "basis"],
        out,
    )
    out.write("\n" + DE_IDENTIFY + "\n" + CAUTION + "\n")
    return 0


def _audit(args, reference: Reference) -> AuditResult:
    """The audit of the record files, with a progress line on a terminal."""
    from model.audit.engine import audit_records
    from model.audit.result import DEFAULT_HIGH_FLOW_LIMIT_MIN
    from model.io.record_files import DEFAULT_GAP_LIMIT_MIN
    from model.reference import DEFAULT_GWP

    progress = ProgressLine(sys.stderr) if not args.json and sys.stderr.isatty() else None
    try:
        return audit_records(
            args.files,
            reference=reference,
            gwp_source=args.gwp_source or DEFAULT_GWP,
            gap_limit_min=DEFAULT_GAP_LIMIT_MIN if args.gap_limit is None else args.gap_limit,
            high_flow_limit_min=DEFAULT_HIGH_FLOW_LIMIT_MIN if args.high_flow_limit is None else args.high_flow_limit,
            memory_limit=args.memory_limit,
            progress=progress,
            time_zone=args.time_zone,
        )
    finally:
        if progress is not None:
            progress.clear()


def _purchases(args, reference: Reference, result: AuditResult) -> PurchaseCheck:
    """Every purchases file given, reconciled together against the recorded use (as the page does)."""
    from model.audit.reconcile import check_purchases

    return check_purchases(args.purchases, result, reference)


def _audit_json(result: AuditResult, purchases: PurchaseCheck) -> dict:
    """The JSON output: the audit, the cost view, the reconciliation, the cautions."""
    data = result.to_dict()
    data["cost_view"] = [{k: _num(v) for k, v in r.items()} for r in purchases.costs.to_dict("records")]
    if purchases.recon is not None:
        data["reconciliation"] = [{k: _num(v) for k, v in r.items()} for r in purchases.recon.to_dict("records")]
        data["purchase_lines_set_aside"] = purchases.notes
        data["purchases_files"] = [{"file": n, "lines": rows} for n, rows in purchases.files]
        cov = purchases.coverage
        assert cov is not None  # every reconciliation has its coverage (check_purchases)
        data["record_coverage"] = {
            "message": cov["message"],
            "partial": cov["partial"],
            "months_bought": cov["months_bought"],
            "months_with_records": cov["months_with_records"],
            "theatres": cov["theatres"],
            "by_month": [{k: _num(v) for k, v in r.items()} for r in cov["by_month"].to_dict("records")],
        }
        figure, share = purchases.n2o_loss()
        data["n2o_apparent_loss"] = {"figure": figure, "share": share} if figure else None
    data["caution"] = CAUTION
    data["de_identification"] = DE_IDENTIFY
    return data


def _write_records(out, result: AuditResult, messages: int) -> None:
    """The records read and used, rows set aside by kind, the first messages, the notes."""
    rep = result.report
    s = rep.summary()
    out.write(
        f"Records: {len(s['files'])} file(s), {s['rows_read']:,} rows read, {s['rows_valid']:,} used, "
        f"{s['rows_set_aside']:,} set aside; {s['gaps']:,} gap(s) over {s['gap_limit_min']:g} min "
        f"({s['gap_minutes_not_counted']:,.0f} min not counted)\n"
    )
    kinds = {k: v for k, v in s["set_aside_by_kind"].items() if v}
    if kinds:
        out.write("Set aside by kind: " + ", ".join(f"{k} {v:,}" for k, v in kinds.items()) + "\n")
    for m in list(rep.issues["message"])[:messages]:
        out.write(f"  - {m}\n")
    if len(rep.issues) > messages:
        out.write(f"  ... {len(rep.issues) - messages} more message(s) (--messages N, or --json)\n")
    for m in list(rep.gap_list["message"])[: max(messages // 2, 0)]:
        out.write(f"  - {m}\n")
    for note in s["notes"]:
        out.write(f"Note: {note}\n")
    out.write("\n")


def _write_totals(out, result: AuditResult) -> None:
    """The totals of the period, one labelled line each."""
    t = result.total
    cur = result.currency
    rows = [
        ("Cases", f"{int(t['cases']):,}"),
        ("Liquid agent", f"{t['liquid_agent_ml']:,.0f} mL ({t['bottles']:,.1f} bottles)"),
        ("Oxygen / air / N2O", f"{t['oxygen_l']:,.0f} / {t['air_l']:,.0f} / {t['nitrous_oxide_l']:,.0f} L"),
        (
            f"CO2e ({result.gwp_label})",
            f"{t['co2e_total_kg']:,.1f} kg (agent {t['co2e_agent_kg']:,.1f}, N2O {t['co2e_nitrous_oxide_kg']:,.1f})",
        ),
        ("Cost", f"{t['cost_total']:,.2f} {cur}"),
        (
            "CO2 absorbent (estimate)",
            f"{t['absorbent_g'] / 1000:,.1f} kg, {t['cost_absorbent']:,.2f} {cur} (not in the cost above)",
        ),
        (
            "Time-weighted FGF",
            "no minute counted"
            if t["time_weighted_fgf_l_min"] != t["time_weighted_fgf_l_min"]
            else f"{t['time_weighted_fgf_l_min']:,.2f} L/min",
        ),
        (
            "Cases with long high flow",
            f"{int(t['high_flow_cases']):,} (run of "
            f"{result.settings['high_flow_limit_min']:g} min or more above "
            f"{result.settings['high_flow_l_min']:g} L/min)",
        ),
    ]
    width = max(len(k) for k, _ in rows)
    for k, v in rows:
        out.write(f"{k.ljust(width)}  {v}\n")


def _write_breakdowns(out, result: AuditResult) -> None:
    """Sums by theatre, month and agent; flow bands by theatre and month; the absorbent note."""
    from model.audit.result import BAND_COLUMNS

    for key in ("theatre", "month", "agent"):
        out.write(f"\nBy {key}\n")
        print_table(
            result.by(key).to_dict("records"),
            [key, "cases", "liquid_agent_ml", "co2e_total_kg", "cost_total", "mean_fgf_l_min", "high_flow_cases"],
            out,
            result.currency,
        )
    out.write("\nBy theatre and month: time-weighted fresh gas flow and minutes in each flow band (Baker 1994)\n")
    print_table(
        result.by("theatre_month").to_dict("records"),
        ["theatre", "month", "cases", "time_weighted_fgf_l_min", *BAND_COLUMNS],
        out,
    )
    out.write(f"\nCO2 absorbent: {result.absorbent_note()}\n")


def _write_reconciliation(out, purchases: PurchaseCheck, messages: int) -> None:
    """Purchases against recorded use: files, coverage, lines set aside, the table, the N2O apparent loss."""
    recon, purchase_notes, cov = purchases.recon, purchases.notes, purchases.coverage
    assert recon is not None and cov is not None  # called only with a reconciliation
    out.write("\nPurchases against recorded use (unexplained = purchased - recorded)\n")
    out.write(
        "Purchases reconciled together: " + ", ".join(f"{n} ({rows:,} lines)" for n, rows in purchases.files) + "\n"
    )
    out.write(cov["message"] + "\n")
    out.write("\nCoverage by month and theatre\n")
    by_month = cov["by_month"].assign(
        bought=lambda d: d["bought"].map({True: "yes", False: "no"}),
        has_records=lambda d: d["has_records"].map({True: "yes", False: "no"}),
    )
    print_table(
        by_month.rename(columns={"bought": "purchases", "has_records": "case records"}).to_dict("records"),
        ["month", "cases", "theatres", "purchases", "case records"],
        out,
    )
    if purchase_notes:
        out.write(f"{len(purchase_notes)} purchase line(s) set aside; the others are used:\n")
        for m in purchase_notes[:messages]:
            out.write(f"  - {m}\n")
        if len(purchase_notes) > messages:
            out.write(f"  ... {len(purchase_notes) - messages} more (--messages N, or --json)\n")
    out.write("\n")
    print_table(
        recon.to_dict("records"),
        [
            "item",
            "month",
            "unit",
            "purchased",
            "recorded",
            "unexplained",
            "unexplained_share",
            "unexplained_co2e_kg",
        ],
        out,
    )
    line = purchases.n2o_loss_line()
    if line:
        out.write(line + "\n")


def _num(v):
    """A JSON value: numpy scalars as Python ones, NaN as None."""
    if isinstance(v, float) and v != v:
        return None
    if hasattr(v, "item"):
        v = v.item()
        if isinstance(v, float) and v != v:
            return None
    return v
