"""The headless command line, ``gas-ledger`` (also ``python -m model``)."""

from __future__ import annotations

import argparse
import json
import math
import sys

from .errors import InputError

EXIT_INPUT = 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports a bad flag as one line with exit status 2."""

    def error(self, message):
        self.exit(EXIT_INPUT, f"gas-ledger: {message} (see 'gas-ledger --help')\n")


def _fmt(value, digits=2):
    if value is None or (isinstance(value, float) and value != value):
        return "-"  # None or NaN: no figure (e.g. the mean flow of a case with no minutes)
    if isinstance(value, float):
        if value != 0 and abs(value) < 10 ** -digits:
            return f"{value:.2g}"  # small shares (e.g. 0.0002) would print as 0.00
        return f"{value:,.{digits}f}"
    return str(value)


def print_table(rows, columns, out=None):
    """Print rows (dicts) as a plain aligned text table."""
    out = out or sys.stdout  # looked up at call time, so redirected output is honoured
    cells = [[_fmt(r.get(c)) for c in columns] for r in rows]
    widths = [max([len(c)] + [len(row[i]) for row in cells]) for i, c in enumerate(columns)]
    out.write("  ".join(c.ljust(w) for c, w in zip(columns, widths)).rstrip() + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for row in cells:
        out.write("  ".join(v.ljust(w) for v, w in zip(row, widths)).rstrip() + "\n")


def print_json(data, out=None):
    out = out or sys.stdout
    json.dump(data, out, indent=2, ensure_ascii=False, allow_nan=False)
    out.write("\n")


CAUTION = ("Estimates for planning, budgeting and reporting, not a prescription. Flows, mixes and "
           "dial settings follow local protocols, the workstation's instructions for use and "
           "licensed practice, with inspired O2 and end-tidal agent monitored.")


def _reference(args):
    from .reference import load_settings
    return load_settings(args.settings)


def cmd_case(args) -> int:
    from .case import compute_case
    from .plan import load_plan

    reference = _reference(args)
    plan = load_plan(args.plan, reference)
    result = compute_case(plan, reference)
    if args.json:
        print_json({**result.to_dict(), "caution": CAUTION})
        return 0
    t = result.totals
    cur = result.currency
    print(f"{plan.name}  ({plan.agent}, {t['duration_min']:g} min)")
    print()
    print_table(result.phases.to_dict("records"),
                ["phase", "duration_min", "fgf_l_min", "flow_band", "dial_pct", "liquid_agent_ml",
                 "co2e_kg", "mac_hours"])
    print()
    rows = [
        ("Liquid agent", f"{t['liquid_agent_ml']:.1f} mL ({t['bottles']:.2f} bottles)"),
        ("Agent mass", f"{t['agent_mass_g']:.1f} g"),
        ("Oxygen / air / N2O", f"{t['oxygen_l']:.0f} / {t['air_l']:.0f} / {t['nitrous_oxide_l']:.0f} L"),
        ("Absorbent", f"{t['absorbent_g']:.0f} g ({t.get('co2_absorbed_l', 0.0):.1f} L CO2 absorbed)"),
        ("Agent taken up", f"{t.get('agent_uptake_g', 0.0):.1f} g by the patient "
                           f"(metabolised {t.get('agent_metabolised_g', 0.0):.2f} g)"),
        ("Inspired O2, lowest", f"{t.get('min_inspired_o2_pct', float('nan')):.0f} % at "
                                f"{t.get('min_inspired_o2_time_min', float('nan')):.0f} min "
                                f"(floor {t.get('inspired_o2_floor_pct', 30.0):.0f} %)"),
        (f"CO2e ({result.gwp_label})", f"{t['co2e_total_kg']:.2f} kg "
                                       f"(agent {t['co2e_agent_kg']:.2f}, N2O {t['co2e_nitrous_oxide_kg']:.2f})"),
        ("Cost", f"{t['cost_total']:.2f} {cur} (agent {t['cost_agent']:.2f}, gases "
                 f"{t['cost_oxygen'] + t['cost_air'] + t['cost_nitrous_oxide']:.2f}, "
                 f"absorbent {t['cost_absorbent']:.2f})"),
        ("MAC-hours", f"{t['mac_hours']:.2f}"),
    ]
    safe = t.get("lowest_safe_fd_o2_pct")
    if safe is not None and math.isfinite(safe):
        at = next(i for i, (k, _) in enumerate(rows) if k == "Inspired O2, lowest") + 1
        rows.insert(at, ("Lowest safe fresh gas O2", f"{safe:.0f} % at the longest phase's flow "
                                                     f"(keeps inspired O2 above the floor at steady state)"))
    width = max(len(k) for k, _ in rows)
    for k, v in rows:
        print(f"{k.ljust(width)}  {v}")
    if result.warnings:
        print()
        print("Warnings:")
        for w in result.warnings:
            print(f"  - {w}")
    print()
    print(CAUTION)
    return 0


def cmd_reference(args) -> int:
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


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="gas-ledger",
                     description="Fresh Gas Ledger: what anaesthesia consumes, costs and emits.")
    parser.add_argument("--settings", metavar="FILE",
                        help="user settings file (TOML) overriding reference values and prices; "
                             "default: $GAS_LEDGER_SETTINGS")
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
    """Sub-commands defined beside the model parts they run (each module has ``register``)."""
    import importlib

    out = []
    for name in ("model.physiology_cli", "model.year_cli", "model.audit_cli", "model.store_cli"):
        try:
            module = importlib.import_module(name)
        except ModuleNotFoundError as exc:
            if exc.name != name:
                raise
            continue
        out.append(module.register)
    return out


def _command_names(parser) -> list[str]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return list(action.choices)
    return []


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        sys.stderr.write("gas-ledger: no command given; choose one of "
                         + ", ".join(_command_names(parser)) + "\n")
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
