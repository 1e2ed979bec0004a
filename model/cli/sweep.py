"""Command-line sub-commands of the low-flow physics: ``gas-ledger sweep``."""

from __future__ import annotations

from model.base.errors import InputError


def _flows(text):
    try:
        return [float(x) for x in text.split(",") if x.strip()]
    except ValueError:
        raise InputError("--flows", text, "give flows in L/min separated by commas, e.g. 0.5,1,2") from None


def cmd_sweep(args) -> int:
    """The ``sweep`` command: a case plan's figures over a range of fresh gas flows; the exit code."""
    from model.cli.common import CAUTION, _reference, print_json, print_table
    from model.io.plans import load_plan
    from model.sweep import flow_sweep

    reference = _reference(args)
    plan = load_plan(args.plan, reference)
    flows = _flows(args.flows) if args.flows else None
    if args.phase is not None and not 1 <= args.phase <= len(plan.phases):
        raise InputError("--phase", args.phase, f"the plan has phases 1 to {len(plan.phases)}")
    phase = None if args.phase is None else args.phase - 1
    result = flow_sweep(plan, reference, flows, phase)
    if args.json:
        print_json({**result.to_dict(), "caution": CAUTION})
        return 0
    name = plan.phases[result.phase_index].name
    print(
        f"{plan.name}  ({plan.agent}); flow of phase {result.phase_index + 1} ({name}) varied, "
        f"end-tidal held at {result.target_mac:.2f} MAC"
    )
    print(f"MAC at age 40: {result.mac_label}")
    print()
    rows = result.table.to_dict("records")
    for r in rows:
        r["O2 safe"] = "yes" if r["o2_safe"] else "NO"
        r["target held"] = "yes" if r["target_held"] else "NO"
    print_table(
        rows,
        [
            "fgf_l_min",
            "flow_band",
            "liquid_agent_ml",
            "absorbent_g",
            "cost_total",
            "co2e_total_kg",
            "min_inspired_o2_pct",
            "O2 safe",
            "target held",
        ],
        currency=result.currency,
    )
    print()

    def show(v):
        return "none keeps inspired O2 above the floor" if v is None else f"{v:g} L/min"

    print(f"Cost-lowest flow ({result.currency}):  {show(result.cost_lowest_flow_l_min)}")
    print(f"Emission-lowest flow:     {show(result.emission_lowest_flow_l_min)}")
    print(f"(inspired O2 floor {result.inspired_o2_floor_pct:.0f} %)")
    print()
    print(CAUTION)
    return 0


def register(subparsers) -> None:
    """Add the physiology sub-commands to the ``gas-ledger`` parser."""
    p = subparsers.add_parser("sweep", help="consumption, cost and CO2e of a plan across fresh gas flows")
    p.add_argument("plan", help="case plan file (TOML)")
    p.add_argument(
        "--phase", type=int, metavar="N", help="phase whose flow varies (1 = first; default: the longest phase)"
    )
    p.add_argument("--flows", metavar="LIST", help="flows in L/min, comma-separated (default 0.25 to 8)")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_sweep)
