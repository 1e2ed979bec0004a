"""The headless command line, ``gas-ledger`` (also ``python -m model``)."""

from __future__ import annotations

import argparse
import math
import sys

from model.base.errors import InputError
from model.cautions import severity_of
from model.cli.common import (
    CAUTION,
    EXIT_INPUT,
    _Parser,
    _reference,
    print_json,
    print_table,
    refuse_infinite,
    shown_cell,
    shown_output,
)


def cmd_case(args) -> int:
    """The ``case`` command: one case plan's consumption, emissions and cost; the exit code."""
    from model.case import compute_case
    from model.io.plans import load_plan

    reference = _reference(args)
    plan = load_plan(args.plan, reference)
    result = compute_case(plan, reference)
    refuse_infinite({"totals": result.totals, "phases": result.phases}, "case")
    if args.json:
        print_json({**result.to_dict(), "caution": CAUTION})
        return 0
    t = result.totals
    cur = result.currency
    print(f"{shown_cell(plan.name)}  ({plan.agent}, {t['duration_min']:g} min)")
    print()
    print_table(
        result.phases.to_dict("records"),
        [
            "phase",
            "duration_min",
            "fgf_l_min",
            "flow_band",
            "dial_pct",
            "liquid_agent_ml",
            "co2e_kg",
            "mac_hours",
            "end_tidal_mac_hours",
        ],
    )
    print()
    rows = [
        ("Liquid agent", f"{t['liquid_agent_ml']:.1f} mL ({t['bottles']:.2f} bottles)"),
        ("Agent mass", f"{t['agent_mass_g']:.1f} g"),
        ("Oxygen / air / N2O", f"{t['oxygen_l']:.0f} / {t['air_l']:.0f} / {t['nitrous_oxide_l']:.0f} L"),
        ("Absorbent", f"{t['absorbent_g']:.0f} g ({t.get('co2_absorbed_l', 0.0):.1f} L CO2 absorbed)"),
        (
            "Agent taken up",
            f"{t.get('agent_uptake_g', 0.0):.1f} g by the patient "
            f"(metabolised {t.get('agent_metabolised_g', 0.0):.2f} g)",
        ),
        (
            "Inspired O2, lowest",
            f"{t.get('min_inspired_o2_pct', float('nan')):.0f} % at "
            f"{t.get('min_inspired_o2_time_min', float('nan')):.0f} min "
            f"(floor {t.get('inspired_o2_floor_pct', 30.0):.0f} %)",
        ),
        (
            f"CO2e ({result.gwp_label})",
            f"{t['co2e_total_kg']:.2f} kg (agent {t['co2e_agent_kg']:.2f}, N2O {t['co2e_nitrous_oxide_kg']:.2f})",
        ),
        (
            "Cost",
            f"{t['cost_total']:.2f} {cur} (agent {t['cost_agent']:.2f}, gases "
            f"{t['cost_oxygen'] + t['cost_air'] + t['cost_nitrous_oxide']:.2f}, "
            f"absorbent {t['cost_absorbent']:.2f})",
        ),
        ("MAC-hours, end-tidal", f"{t['end_tidal_mac_hours']:.2f}"),
        ("MAC-hours, dial-based", f"{t['mac_hours']:.2f}"),
        ("MAC at age 40", result.mac_label),
    ]
    safe = t.get("lowest_safe_fd_o2_pct")
    if safe is not None and math.isfinite(safe):
        at = next(i for i, (k, _) in enumerate(rows) if k == "Inspired O2, lowest") + 1
        rows.insert(
            at,
            (
                "Lowest safe fresh gas O2",
                f"{safe:.0f} % at the longest phase's flow (keeps inspired O2 above the floor at steady state)",
            ),
        )
    width = max(len(k) for k, _ in rows)
    for k, v in rows:
        print(f"{k.ljust(width)}  {v}")
    if result.warnings:
        print()
        print("Warnings:")
        for w in result.warnings:  # most severe first (model.cautions.SEVERITIES)
            print(f"  - {severity_of(w).upper()}: {w}")
    print()
    print(CAUTION)
    return 0


def cmd_reference(args) -> int:
    """The ``reference`` command: every reference value with its unit and source; the exit code."""
    ref = _reference(args)
    rows = ref.table()
    if args.json:
        print_json(rows)
        return 0
    columns = ["item", "field", "value", "unit", "basis", "source"]
    if any(r.get("default") is not None for r in rows):
        # Overridden values keep their built-in default (and its source) beside them.
        columns += ["default", "default_source"]
    print_table(rows, columns)
    if ref.override_origins:
        print()
        print("Overrides from: " + ", ".join(ref.override_origins))
    return 0


def _version() -> str:
    """The installed version of fresh-gas-ledger, from its package metadata (written once, in pyproject.toml)."""
    import importlib.metadata

    try:
        return importlib.metadata.version("fresh-gas-ledger")
    except importlib.metadata.PackageNotFoundError:
        return "unknown (run from a source folder that is not installed)"


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``gas-ledger``, with every sub-command registered."""
    parser = _Parser(prog="gas-ledger", description="Fresh Gas Ledger: what anaesthesia consumes, costs and emits.")
    parser.add_argument("--version", action="version", version=f"gas-ledger (fresh-gas-ledger) {_version()}")
    parser.add_argument(
        "--settings",
        metavar="FILE",
        help="user settings file (TOML) overriding reference values and prices; default: $GAS_LEDGER_SETTINGS",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser("case", help="consumption, cost and CO2e of one case plan")
    p.add_argument("plan", help="case plan file (TOML)")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_case)

    p = sub.add_parser("reference", help="the reference table with every value's source")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_reference)

    for register in _extra_commands():
        register(sub)
    return parser


def _extra_commands():
    """Sub-commands kept in modules of their own (each module has ``register``)."""
    from model.cli.audit import register as audit
    from model.cli.feedback import register as feedback
    from model.cli.orders import register as orders
    from model.cli.report import register as report
    from model.cli.store import register as store
    from model.cli.sweep import register as sweep
    from model.cli.trends import register as trends
    from model.cli.year import register as year

    return [sweep, year, audit, report, trends, feedback, orders, store]


def _command_names(parser) -> list[str]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return list(action.choices)
    return []


#: Options whose value may start with "-" (a reduction target such as "-5%/year"), which
#: argparse would otherwise take for an option of its own.
_DASH_VALUES = ("--target",)


def _join_dash_values(argv):
    """``--target -5%/year`` as ``--target=-5%/year``, so argparse reads the value."""
    argv = list(sys.argv[1:] if argv is None else argv)
    out, i = [], 0
    while i < len(argv):
        a = str(argv[i])
        if a in _DASH_VALUES and i + 1 < len(argv) and str(argv[i + 1]).startswith("-"):
            out.append(f"{a}={argv[i + 1]}")
            i += 2
            continue
        out.append(argv[i])
        i += 1
    return out


def main(argv=None) -> int:
    """Run ``gas-ledger`` with ``argv`` (the process's arguments when None); the exit code.

    Everything it prints shows control characters escaped (:func:`model.cli.common.shown`):
    a plan, phase or theatre name holding an escape sequence cannot drive the terminal.
    """
    with shown_output():
        return _main(argv)


def _main(argv) -> int:
    parser = build_parser()
    args = parser.parse_args(_join_dash_values(argv))
    if not getattr(args, "func", None):
        parser.print_help()
        sys.stderr.write("gas-ledger: no command given; choose one of " + ", ".join(_command_names(parser)) + "\n")
        return EXIT_INPUT
    try:
        return args.func(args)
    except InputError as exc:
        # One line, whatever the message holds (file paths and TOML errors may hold newlines).
        sys.stderr.write("gas-ledger: " + " ".join(str(exc).split()) + "\n")
        return EXIT_INPUT
    except BrokenPipeError:
        return 0


if __name__ == "__main__":
    sys.exit(main())
