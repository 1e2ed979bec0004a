"""The ``year`` and ``compare`` sub-commands of ``gas-ledger`` (registered by model.cli.main)."""

from __future__ import annotations

import sys

from model.base.errors import InputError
from model.cautions import by_severity, severity_of
from model.cli.common import CAUTION, print_json, print_table, refuse_infinite
from model.year.inputs import MAX_DRAWS


def _draws(value: str) -> int:
    try:
        n = int(value)
    except ValueError:
        raise InputError("--draws", value, f"a whole number from 1 to {MAX_DRAWS}") from None
    if not 1 <= n <= MAX_DRAWS:
        raise InputError("--draws", value, f"a whole number from 1 to {MAX_DRAWS}")
    return n


def _seed(value: str) -> int:
    try:
        n = int(value)
    except ValueError:
        raise InputError("--seed", value, "a whole number from 0 up") from None
    if n < 0:
        raise InputError("--seed", value, "a whole number from 0 up")
    return n


def _options(args):
    draws = None if args.draws is None else _draws(args.draws)
    seed = None if args.seed is None else _seed(args.seed)
    return draws, seed


def _reference(args):
    from model.reference import load_settings

    return load_settings(getattr(args, "settings", None))


def _num(value: float, unit: str) -> str:
    if unit in ("cases", "bottles"):
        return f"{value:,.0f}"
    if unit.startswith("t CO2e"):
        return f"{value:,.2f}"
    if unit in ("km", "mL", "L"):
        return f"{value:,.0f}"
    return f"{value:,.1f}" if unit == "kg" else f"{value:,.0f}"


def cmd_year(args) -> int:
    """The ``year`` command: a department's year from a scenario, with P5-P95 ranges; the exit code."""
    from model.io.scenario import load_scenario
    from model.year.compare import nonzero_rows
    from model.year.result import compute_year

    draws, seed = _options(args)
    scenario = load_scenario(args.scenario)
    result = compute_year(scenario, _reference(args), draws=draws, seed=seed, model_uncertainty=args.model_uncertainty)
    refuse_infinite({"totals": result.totals, "summary": result.summary, "monthly": result.monthly}, "year")
    if args.json:
        print_json(result.to_dict(), sys.stdout)
        return 0
    print(
        f"{scenario.name}  ({result.totals['cases']:,.0f} cases a year; {result.inputs.gwp_label}; "
        f"{result.n_draws} draws, seed {result.seed})"
    )
    print(f"MAC at age 40: {result.inputs.mac_label}")
    print(f"{result.range_label}.")
    print()
    rows = [
        {
            "figure": r["figure"],
            "unit": r["unit"],
            "expected": _num(r["deterministic"], r["unit"]),
            "P5": _num(r["p5"], r["unit"]),
            "P50": _num(r["p50"], r["unit"]),
            "P95": _num(r["p95"], r["unit"]),
        }
        for r in nonzero_rows(result.summary).to_dict("records")
    ]
    print_table(rows, ["figure", "unit", "expected", "P5", "P50", "P95"], sys.stdout)
    print()
    print("Per month (expected):")
    month_rows = []
    used = [k for k in result.monthly.columns if k.startswith("bottles_") and result.monthly[k].sum() > 0]
    for r in result.monthly.to_dict("records"):
        row = {"month": r["month"]}
        for k in used:
            row[k] = f"{r[k]:.0f}"
        row["cost_total"] = f"{r['cost_total']:,.0f}"
        row["co2e_total_t"] = f"{r['co2e_total_t']:.2f}"
        month_rows.append(row)
    print_table(month_rows, ["month", *used, "cost_total", "co2e_total_t"], sys.stdout, result.currency)
    _tail(result.warnings, result.notes)
    return 0


def cmd_compare(args) -> int:
    """The ``compare`` command: a proposal year against a baseline over the same draws; the exit code."""
    from model.io.scenario import load_scenario
    from model.year.compare import compare_years, nonzero_rows

    draws, seed = _options(args)
    baseline = load_scenario(args.baseline)
    proposal = load_scenario(args.proposal)
    comp = compare_years(
        baseline, proposal, _reference(args), draws=draws, seed=seed, model_uncertainty=args.model_uncertainty
    )
    for name, year in (("baseline", comp.baseline), ("proposal", comp.proposal)):
        refuse_infinite({"totals": year.totals, "summary": year.summary, "monthly": year.monthly}, name)
    if args.json:
        print_json(comp.to_dict(), sys.stdout)
        return 0
    b = comp.baseline
    print(f"{proposal.name}  minus  {baseline.name}")
    print(f"({b.inputs.gwp_label}; {b.n_draws} paired draws, seed {b.seed}; negative = the proposal saves)")
    print(f"MAC at age 40: {b.inputs.mac_label}")
    print(f"{b.range_label}.")
    print()
    rows = []
    for r in nonzero_rows(comp.summary, ("baseline", "proposal", "p5", "p95")).to_dict("records"):
        u = r["unit"]
        rows.append(
            {
                "figure": r["figure"],
                "unit": u,
                "baseline": _num(r["baseline"], u),
                "proposal": _num(r["proposal"], u),
                "difference": _num(r["difference"], u),
                "P5": _num(r["p5"], u),
                "P50": _num(r["p50"], u),
                "P95": _num(r["p95"], u),
            }
        )
    print_table(rows, ["figure", "unit", "baseline", "proposal", "difference", "P5", "P50", "P95"], sys.stdout)
    _tail(list(dict.fromkeys(b.warnings + comp.proposal.warnings)), comp.notes + comp.proposal.notes)
    return 0


def _tail(warnings, notes):
    if warnings:
        print()
        print("Warnings:")
        for w in by_severity(warnings):
            print(f"  - {severity_of(w).upper()}: {w}")
    if notes:
        print()
        print("Notes:")
        for n in dict.fromkeys(notes):
            print(f"  - {n}")
    print()
    print(CAUTION)


_MODEL_UNCERTAINTY_HELP = (
    "let the P5-P95 ranges also draw the uptake model's uncertain physiology (partition coefficients, "
    "tissue volumes and flows, cardiac output, O2 consumption, ventilation, circle volume); slower"
)


def register(sub) -> None:
    """Add ``year`` and ``compare`` to the ``gas-ledger`` sub-command parser."""
    p = sub.add_parser("year", help="a department's year from a scenario: totals, months, P5/P50/P95")
    p.add_argument("scenario", help="scenario file (TOML) naming its case-mix file (CSV)")
    p.add_argument("--draws", metavar="N", help="Monte Carlo draws (default: the scenario's)")
    p.add_argument("--seed", metavar="S", help="random seed (default: the scenario's)")
    p.add_argument("--model-uncertainty", action="store_true", help=_MODEL_UNCERTAINTY_HELP)
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_year)

    p = sub.add_parser("compare", help="what a proposal changes against a baseline, with paired P5-P95 ranges")
    p.add_argument("baseline", help="baseline scenario file (TOML)")
    p.add_argument("proposal", help="proposal scenario file (TOML)")
    p.add_argument("--draws", metavar="N", help="Monte Carlo draws (default: the baseline's)")
    p.add_argument("--seed", metavar="S", help="random seed (default: the baseline's)")
    p.add_argument("--model-uncertainty", action="store_true", help=_MODEL_UNCERTAINTY_HELP)
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_compare)
