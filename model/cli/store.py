"""The ``store`` sub-command of ``gas-ledger``: copy a store, show it, save a plan into it.

Registered by :mod:`model.cli`: copy a store, show what it holds, save a plan file into it.
"""

from __future__ import annotations

from model.cli.common import print_json, print_table


def _open(location):
    from model.store import Store

    return Store(location)


def cmd_store_copy(args) -> int:
    """``store copy``: every version of one store into another, empty one; the exit code."""
    source = _open(args.source)
    try:
        target = _open(args.target)
        try:
            n = source.copy_into(target)
            print(
                f"Copied {n} versions from {source.location} to {target.location}; every version kept "
                f"with its number, time, author and note."
            )
        finally:
            target.close()
    finally:
        source.close()
    return 0


def cmd_store_info(args) -> int:
    """``store info``: the store's database, schema version, integrity and counts; the exit code."""
    from model.store import KINDS

    with _open(args.store) as store:
        rows = [
            {"kind": k, "items": len(store.names(k, include_hidden=True)), "versions": store.count_versions(k)}
            for k in KINDS
        ]
        info = {
            "store": store.location,
            "database": store.dialect,
            "schema_version": store.schema_version(),
            "integrity": store.integrity(),
            "kinds": rows,
        }
    if args.json:
        print_json(info)
        return 0
    print(f"{info['store']}  ({info['database']}, schema {info['schema_version']}, integrity {info['integrity']})")
    print()
    print_table(rows, ["kind", "items", "versions"])
    return 0


def cmd_store_save_plan(args) -> int:
    """``store save-plan``: a plan file saved into a store as a new version; the exit code."""
    from model.base.files import read_user_text
    from model.io.plans import MAX_PLAN_BYTES
    from model.store.access import command_line_author

    text = read_user_text(args.plan, "plan", MAX_PLAN_BYTES)
    with _open(args.store) as store:
        plan, version = store.import_plan_text(text, args.plan, args.note or "", author=command_line_author())
        print(f"Saved '{plan.name}' as version {version} in {store.location} (author: {command_line_author()}).")
    return 0


def register(sub) -> None:
    """Add the ``store`` sub-command and its actions to the sub-parsers ``sub``."""
    p = sub.add_parser("store", help="copy a store, show what it holds, save a plan file into it")
    ssub = p.add_subparsers(dest="store_command", metavar="ACTION", parser_class=type(p))
    ssub.required = True
    where = "a store: an SQLite file or a postgresql:// URL"

    c = ssub.add_parser("copy", help="copy every version of one store into another, empty one")
    c.add_argument("source", metavar="FROM", help=where)
    c.add_argument("target", metavar="TO", help=where + " (must hold no versions yet)")
    c.set_defaults(func=cmd_store_copy)

    c = ssub.add_parser("info", help="the store's database, schema version, integrity and counts")
    c.add_argument(
        "store",
        nargs="?",
        default=None,
        metavar="STORE",
        help=where + "; default: $GAS_LEDGER_STORE or ~/.gas-ledger/store.sqlite3",
    )
    c.add_argument("--json", action="store_true", help="machine-readable output")
    c.set_defaults(func=cmd_store_info)

    c = ssub.add_parser(
        "save-plan", help="check a plan file and save it as a new version (author: the command line and the OS user)"
    )
    c.add_argument("plan", help="case plan file (TOML)")
    c.add_argument(
        "--store",
        default=None,
        metavar="STORE",
        help=where + "; default: $GAS_LEDGER_STORE or ~/.gas-ledger/store.sqlite3",
    )
    c.add_argument("--note", default="", help="a note for this version")
    c.set_defaults(func=cmd_store_save_plan)
