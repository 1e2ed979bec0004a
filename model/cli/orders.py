"""The ``orders`` sub-command of ``gas-ledger`` (registered by model.cli.main)."""

from __future__ import annotations

from pathlib import Path

from model.base.errors import InputError
from model.cli.common import print_json, print_table
from model.stock.orders import FORECAST_CAUTION, notes


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
    if result.year_budget is not None:
        print(f"The Department year's cost of these items: {result.year_budget:,.0f} {result.currency}")
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
