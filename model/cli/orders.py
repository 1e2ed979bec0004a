"""The ``orders`` sub-command of ``gas-ledger`` (registered by model.cli.main)."""

from __future__ import annotations

from pathlib import Path

from model.base.errors import InputError
from model.cli.common import CAUTION, print_json, print_table

#: Said wherever the order table is shown.
FORECAST_CAUTION = (
    "A forecast is not a guarantee: use can differ from it (see the hold-out error). "
    "Keep local minimum stock rules and check orders with pharmacy before placing them."
)


def _holdout_lines(result) -> list[str]:
    lines = []
    for name, f in result.forecasts.items():
        if f.holdout:
            h = f.holdout
            lines.append(
                f"{name}: the last 3 months held out were forecast {h['mean_abs_error']:,.0f} {f.unit} off a month"
                f" on average ({h['mean_abs_pct_error']:.0f} %), {h['inside_p5_p95']} of 3 inside P5-P95"
            )
        else:
            lines.append(f"{name}: no hold-out check (a model year, not history)")
    return lines


def notes(result) -> list[str]:
    """Provenance and cautions written with every export of the orders."""
    import importlib.metadata

    try:
        version = importlib.metadata.version("fresh-gas-ledger")
    except importlib.metadata.PackageNotFoundError:
        version = "unknown (not installed)"
    return [
        f"Orders plan: {result.plan.title}",
        f"gas-ledger (fresh-gas-ledger) {version}",
        "Method: periodic-review order-up-to (R, S) policy, Silver, Pyke and Thomas 2017 (docs/methods.md, "
        "Stock and orders)",
        *[f"Forecast of {k}: {f.source}" for k, f in result.forecasts.items()],
        *_holdout_lines(result),
        FORECAST_CAUTION,
        CAUTION,
    ]


def cmd_orders(args) -> int:
    """The ``orders`` command: the order schedule and stock of an orders plan; the exit code."""
    from model.present.exports import to_csv, to_xlsx
    from model.reference import load_settings
    from model.stock.orders import read_orders_plan, work_out_orders

    reference = load_settings(getattr(args, "settings", None))
    plan = read_orders_plan(args.plan, reference)
    result = work_out_orders(plan, reference)
    orders = result.orders_table()
    if args.csv:
        Path(args.csv).write_bytes(to_csv(orders))
    if args.xlsx:
        Path(args.xlsx).write_bytes(
            to_xlsx({"Orders": orders, "Months": result.months_table(), "Cash": result.cash_by_month()}, notes(result))
        )
    if args.json:
        print_json({**result.to_dict(), "notes": notes(result)})
        return 0
    print(f"{plan.title}  (currency {result.currency})")
    print_table(orders.to_dict("records"), list(orders.columns))
    total = float(result.months_table()[f"cash_{result.currency}"].sum())
    print(f"\nPaid for deliveries in the plan's months: {total:,.0f} {result.currency}")
    for line in notes(result)[3:]:
        print(line)
    return 0


def register(sub) -> None:
    """Add ``orders`` to the ``gas-ledger`` sub-command parser."""
    p = sub.add_parser("orders", help="what to order each month, its cost and the chance of running out")
    p.add_argument("plan", help="orders plan file (TOML, docs/formats.md 'Orders plan')")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.add_argument("--csv", default=None, metavar="FILE", help="also write the order table as CSV")
    p.add_argument("--xlsx", default=None, metavar="FILE", help="also write orders, months and cash as a workbook")
    p.set_defaults(func=cmd_orders)


__all__ = ["FORECAST_CAUTION", "InputError", "cmd_orders", "notes", "register"]
