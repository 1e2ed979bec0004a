"""The ``gas-ledger report`` sub-command: the emissions report of a period against a baseline and a target."""

from __future__ import annotations

import sys
from pathlib import Path

from model.cli.common import CAUTION, print_json, print_table, refuse_infinite


def register(subparsers) -> None:
    """Add ``report`` to the ``gas-ledger`` command line."""
    p = subparsers.add_parser(
        "report",
        help="emissions report: a period against a baseline and a target, what drove the change",
        description="Scope 1 anaesthetic emissions of a reporting period from case records (use-based) and "
        "purchases (purchase-based), with intensity, a baseline, a target and an LMDI "
        "decomposition of the change. Periods: 2026 (calendar year), FY2026-04 (financial year "
        "starting April 2026), 2026Q2, 2026-03, 2026-01-01..2026-06-30.",
    )
    p.add_argument("files", nargs="+", metavar="RECORDS", help="record files or globs (.csv, .parquet)")
    p.add_argument("--period", required=True, help="reporting period, e.g. 2026, FY2026-04, 2026Q2")
    p.add_argument("--baseline", default=None, help="period to compare with, e.g. 2025")
    p.add_argument("--target", default=None, help="reduction target: '-5%%/year' or '120 t by 2030'")
    p.add_argument(
        "--purchases",
        action="append",
        default=[],
        metavar="FILE",
        help="purchases file (.csv or .parquet), optionally with a site column; give it again for more files",
    )
    p.add_argument("--sites", default=None, metavar="FILE", help="site file: CSV theatre,site")
    p.add_argument(
        "--site",
        action="append",
        default=[],
        metavar="NAME",
        help="report only this site (repeat for more); default every site",
    )
    p.add_argument(
        "--gwp",
        "--gwp-source",
        dest="gwp",
        default=None,
        help="GWP source of the headline (default ar6_gwp100); AR5 and AR6 GWP100 are always shown",
    )
    p.add_argument("--baseline-gwp", default=None, help="GWP source of the baseline (default: as --gwp)")
    p.add_argument(
        "--time-zone",
        default=None,
        metavar="ZONE",
        help="IANA time zone of record times written without a UTC offset, e.g. Europe/London (default: as written)",
    )
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.add_argument("--xlsx", default=None, metavar="FILE", help="also write the report's tables as an Excel workbook")
    p.add_argument(
        "--html",
        default=None,
        metavar="FILE",
        help="also write the report as a self-contained HTML file: charts, tables and text, as the "
        "dashboard's Emissions report page downloads it (opens offline)",
    )
    p.set_defaults(func=cmd_report)


def cmd_report(args) -> int:
    """The ``report`` command: the emissions report of a period from case records; the exit code."""
    import pandas as pd

    from model.audit.engine import audit_records
    from model.base.errors import InputError
    from model.io.purchases import load_purchases
    from model.io.record_times import check_time_zone
    from model.io.sites import read_sites
    from model.reference import DEFAULT_GWP, load_settings
    from model.report import build_report, parse_period, parse_target

    reference = load_settings(args.settings)
    # Every flag is read before the records are: a typing error costs nothing.
    period = parse_period(args.period, "--period")
    baseline = parse_period(args.baseline, "--baseline") if args.baseline else None
    target = parse_target(args.target, "--target") if args.target else None
    gwp = args.gwp or DEFAULT_GWP
    for flag, key in (("--gwp", gwp), ("--baseline-gwp", args.baseline_gwp)):
        if key is not None and key not in reference.gwp_sources:
            raise InputError(flag, key, "allowed sources are " + ", ".join(reference.gwp_sources))
    check_time_zone(args.time_zone)
    sites = read_sites(args.sites) if args.sites else None
    for flag, path in (("--xlsx", args.xlsx), ("--html", args.html)):
        if path and not Path(path).parent.is_dir():
            raise InputError(flag, path, "the folder to write into does not exist")
    result = audit_records(args.files, reference=reference, gwp_source=gwp, time_zone=args.time_zone)
    purchases, purchase_notes = None, []
    if args.purchases:
        read = [load_purchases(f, reference) for f in args.purchases]
        purchase_notes = [m for r in read for m in r.messages]
        purchases = pd.concat([r.table for r in read], ignore_index=True)
    report = build_report(
        result.cases,
        period,
        baseline,
        reference=reference,
        gwp_source=gwp,
        baseline_gwp_source=args.baseline_gwp,
        purchases=purchases,
        sites=sites,
        chosen_sites=tuple(args.site),
        target=target,
        absorbent_note=result.absorbent_note(),
        fields={"period": "--period", "baseline": "--baseline", "target": "--target", "site": "--site"},
    )
    report.cautions.append(CAUTION)
    if purchase_notes:
        report.cautions.append(
            f"{len(purchase_notes)} purchase line(s) set aside (see gas-ledger audit --purchases); the others are used."
        )
    # Nothing is written when a figure is infinite (the same guard as printed output).
    refuse_infinite(report.to_dict(), "report")
    if args.xlsx or args.html:
        lines = [len(r.table) + len(r.messages) for r in read] if args.purchases else []
        prov = _provenance(args, report, result, lines)
    if args.xlsx:
        from model.present.report_document import report_xlsx

        Path(args.xlsx).write_bytes(report_xlsx(report, provenance=prov))
    if args.html:
        # The page's figure builders (plotly is imported only when an HTML file is asked for).
        from model.present.report_charts import report_figures
        from model.present.report_document import report_html

        Path(args.html).write_text(
            report_html(report, list(report_figures(report).items()), provenance=prov), encoding="utf-8"
        )
    if args.json:
        data = report.to_dict()
        data["records"] = result.report.summary()
        data["purchase_lines_set_aside"] = purchase_notes
        print_json(data)
    else:
        _print(report, result, sys.stdout)
    if report.problems:
        # What could be worked out is printed above; the first problem is the one-line error.
        raise report.problems[0]
    return 0


def cli_prices_text(reference) -> str:
    """Where the command's prices come from: a settings file's values over the built-in examples."""
    if reference.override_origins:
        return (
            f"your values from the settings file {', '.join(reference.override_origins)} where it gives them; "
            "built-in invented example prices for the rest"
        )
    return "built-in invented example prices"


def _provenance(args, report, result, purchase_lines):
    """The provenance block of the files ``gas-ledger report`` writes (the page's, from the same function)."""
    import os

    from model.present.provenance import input_file
    from model.present.report_document import report_provenance

    rep = result.report
    rows = rep.file_rows if len(rep.file_rows) == len(rep.files) else [None] * len(rep.files)
    files = [input_file("case records", name, Path(name), n) for name, n in zip(rep.files, rows, strict=True)]
    files += [input_file("purchases", f, Path(f), n) for f, n in zip(args.purchases, purchase_lines, strict=True)]
    if args.sites:
        files.append(input_file("sites", args.sites, Path(args.sites)))
    settings_file = args.settings or os.environ.get("GAS_LEDGER_SETTINGS")
    if settings_file:
        files.append(input_file("settings", settings_file, Path(settings_file)))
    return report_provenance(report, files, cli_prices_text(report.reference))


def _print(report, result, out) -> None:
    s = result.report.summary()
    out.write(
        f"Records: {len(s['files'])} file(s), {s['rows_valid']:,} rows used, {s['rows_set_aside']:,} set aside "
        f"(gas-ledger audit lists them)\n\n"
    )
    out.write(report.headline() + "\n\n")
    table = report.figures_table()
    print_table(table.to_dict("records"), list(table.columns), out)
    out.write("\nBy agent (use-based)\n")
    print_table(report.period.by_agent.to_dict("records"), list(report.period.by_agent.columns), out)
    out.write("\nBy site\n")
    print_table(report.period.by_site.to_dict("records"), list(report.period.by_site.columns), out)
    if report.period.use_vs_purchase is not None:
        out.write("\nUse-based against purchase-based (gap = purchased - used)\n")
        t = report.period.use_vs_purchase
        print_table(t.to_dict("records"), list(t.columns), out)
    if report.period.use_vs_purchase_by_site is not None:
        out.write(
            f"\nUse-based against purchase-based by site (t CO2e, {report.gwp_label}; gap = purchase-based - "
            "use-based)\n"
        )
        t = report.period.use_vs_purchase_by_site
        print_table(t.to_dict("records"), list(t.columns), out)
    elif report.period.purchases is not None:
        out.write("\nThe purchases name no site: purchase-based figures are for all sites together.\n")
    if report.decomposition is not None:
        out.write(f"\nWhat drove the change from {report.baseline.period.label} (additive LMDI-I, t CO2e)\n")
        t = report.decomposition_table()
        print_table(t.to_dict("records"), list(t.columns), out)
        for _, sentence in report.sentences():
            out.write(f"  - {sentence}\n")
    if report.target is not None:
        out.write("\n" + report.target.sentence() + "\n")
    out.write("\nMethod\n")
    for line in report.method_statement():
        out.write(f"  - {line}\n")
    out.write("\nCautions\n")
    for line in report.cautions:
        out.write(f"  - {line}\n")
