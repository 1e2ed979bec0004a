"""The ``gas-ledger trends`` sub-command: monthly measures on control charts, their signals, a programme's effect."""

from __future__ import annotations

import sys

from model.cli.common import CAUTION, print_json, print_table

#: The invented Fernhollow programme start, for the demo records (docs/trends.md).
DEMO_CHANGE = "2026-01"


def register(subparsers) -> None:
    """Add ``trends`` to the ``gas-ledger`` command line."""
    p = subparsers.add_parser(
        "trends",
        help="monthly measures on control charts, their signals in words, and a programme's effect",
        description="Monthly measures of practice from case records (CO2e per case and per hour, "
        "time-weighted fresh gas flow, shares of time at low flow, N2O per case, agent mix) on "
        "individuals and p-charts with the signal rules named with their sources, Anhøj's run-chart "
        "rules, and an interrupted time series around a programme start (docs/trends.md). "
        f"The demo records' invented programme starts {DEMO_CHANGE}.",
    )
    p.add_argument("files", nargs="+", metavar="RECORDS", help="record files or globs (.csv, .parquet)")
    p.add_argument(
        "--change",
        default=None,
        metavar="YYYY-MM",
        help="first month of the programme: limits before and from it, and its effect (e.g. 2026-01)",
    )
    p.add_argument(
        "--level",
        default="department",
        choices=("department", "site", "theatre"),
        help="one series or one per site or theatre",
    )
    p.add_argument("--sites", default=None, metavar="FILE", help="site file: CSV theatre,site (for --level site)")
    p.add_argument(
        "--measure", action="append", default=[], metavar="NAME", help="a measure to chart (repeat); default all"
    )
    p.add_argument("--gwp", "--gwp-source", dest="gwp", default=None, help="GWP source (default ar6_gwp100)")
    p.add_argument(
        "--html",
        default=None,
        metavar="FILE",
        help="also write the charts, signals and effect as a self-contained HTML file (opens offline)",
    )
    out = p.add_mutually_exclusive_group()
    out.add_argument("--json", action="store_true", help="machine-readable output")
    out.add_argument(
        "--csv", action="store_true", help="the charts' table (one row per group, measure and month) as CSV"
    )
    p.set_defaults(func=cmd_trends)


def cmd_trends(args) -> int:
    """The ``trends`` command; the exit code."""
    from model.audit.engine import audit_records
    from model.base.cells import csv_text
    from model.base.errors import InputError
    from model.io.sites import read_sites
    from model.reference import DEFAULT_GWP, load_settings
    from model.trends import CHART_MEASURES, build_trends

    reference = load_settings(args.settings)
    gwp = args.gwp or DEFAULT_GWP
    if gwp not in reference.gwp_sources:
        raise InputError("--gwp", gwp, "allowed sources are " + ", ".join(reference.gwp_sources))
    for m in args.measure:
        if m not in CHART_MEASURES:
            raise InputError("--measure", m, "one of " + ", ".join(CHART_MEASURES))
    sites = read_sites(args.sites) if args.sites else None
    if args.html:
        from pathlib import Path

        if not Path(args.html).parent.is_dir():
            raise InputError("--html", args.html, "the folder to write into does not exist")
    result = audit_records(args.files, reference=reference, gwp_source=gwp)
    trends = build_trends(
        result.cases, args.change, args.level, sites, tuple(args.measure) or tuple(CHART_MEASURES), where="--change"
    )
    if args.html:
        from pathlib import Path

        from model.present.trend_charts import trends_html

        s = result.report.summary()
        read = f"{len(s['files'])} file(s), {s['rows_valid']:,} rows used, {s['rows_set_aside']:,} set aside"
        Path(args.html).write_text(trends_html(trends, CAUTION, read), encoding="utf-8")
    if args.json:
        data = trends.to_dict()
        data["records"] = result.report.summary()
        data["gwp_source"] = gwp
        data["caution"] = CAUTION
        print_json(data)
    elif args.csv:
        sys.stdout.write(csv_text(trends.charts, lineterminator="\n"))
    else:
        _print(trends, sys.stdout)
    return 0


def _print(trends, out) -> None:
    shown = trends.measures.copy()
    cols = [
        "group",
        "month",
        "cases",
        "co2e_t",
        "co2e_kg_per_case",
        "time_weighted_fgf_l_min",
        "share_at_or_under_1_l_min",
    ]
    out.write("Monthly measures (docs/trends.md has the definitions)\n")
    print_table(shown[cols].to_dict("records"), cols, out)
    out.write("\nSignals (control-chart rules)\n")
    for line in trends.signals or ["none: every month within the limits and no run, trend or pair near a limit."]:
        out.write(f"  - {line}\n")
    out.write("\nRun-chart checks (Anhøj J, Olesen AV, PLoS One 2014;9(11):e113825)\n")
    for (group, m), r in trends.run_checks.items():
        verdict = "signal" if r["signal"] else "no signal"
        out.write(
            f"  - {m}{'' if group == 'department' else ' (' + group + ')'}: longest run {r['longest_run']} "
            f"(limit {r['run_limit']}), crossings {r['crossings']} (fewest {r['crossings_limit']}): {verdict}\n"
        )
    if trends.effects:
        out.write(f"\nProgramme from {trends.change_month}: interrupted time series\n")
        for line in trends.effect_sentences():
            out.write(f"  - {line}\n")
    for line in trends.notes:
        out.write(f"\nNote: {line}\n")
    out.write(f"\n{CAUTION}\n")
