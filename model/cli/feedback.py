"""The ``gas-ledger feedback`` sub-command: each anaesthetist's months beside the department's, pseudonymised."""

from __future__ import annotations

import sys

from model.cli.common import CAUTION, print_json, print_table


def register(subparsers) -> None:
    """Add ``feedback`` to the ``gas-ledger`` command line."""
    p = subparsers.add_parser(
        "feedback",
        help="personal feedback: a person's months beside the department's median and quartiles (pseudonyms only)",
        description="Joins a staff file (CSV case_id,anaesthetist) to the audited records, replaces each "
        "anaesthetist by a keyed-hash pseudonym under the department's key (read from --key-file, "
        "never stored), and shows one person's monthly measure beside the department's median and "
        "quartiles; a person under the minimum of cases is not shown. Without --person: the "
        "pseudonyms and case counts, for editors. SECURITY.md says what is and is not protected.",
    )
    p.add_argument("files", nargs="+", metavar="RECORDS", help="record files or globs (.csv, .parquet)")
    p.add_argument("--staff", required=True, metavar="FILE", help="CSV with columns case_id, anaesthetist")
    p.add_argument(
        "--key-file", required=True, metavar="FILE", help="file holding the department's key (kept apart from the data)"
    )
    p.add_argument(
        "--person", default=None, help="the person (identifier or pseudonym P-...); default: the list of pseudonyms"
    )
    p.add_argument("--measure", default="co2e_kg_per_case", help="monthly measure (default co2e_kg_per_case)")
    p.add_argument("--min-cases", type=int, default=None, help="fewest cases before anything is shown (default 20)")
    p.add_argument(
        "--html-dir", default=None, metavar="DIR", help="write one HTML report per person, named by pseudonym"
    )
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_feedback)


def _read_key(path: str) -> str:
    from pathlib import Path

    from model.base.errors import InputError

    try:
        return Path(path).read_text(encoding="utf-8").strip()
    except (OSError, UnicodeDecodeError):
        raise InputError("--key-file", path, "a readable text file holding the department's key") from None


def cmd_feedback(args) -> int:
    """The ``feedback`` command; the exit code."""
    from pathlib import Path

    import pandas as pd

    from model.audit.engine import audit_records
    from model.base.errors import InputError
    from model.reference import load_settings
    from model.trends.feedback import MIN_CASES, attach_staff, people_list, personal_feedback, pseudonymise

    key = _read_key(args.key_file)
    pseudonymise(["check"], key)  # a missing or short key is refused before anything is read
    min_cases = MIN_CASES if args.min_cases is None else args.min_cases
    if min_cases < 1:
        raise InputError("--min-cases", str(args.min_cases), "a whole number of cases, 1 or more")
    if args.html_dir and not Path(args.html_dir).is_dir():
        raise InputError("--html-dir", args.html_dir, "an existing folder")
    try:
        staff = pd.read_csv(args.staff, dtype=str, keep_default_na=False, comment="#")
    except (OSError, UnicodeDecodeError, pd.errors.ParserError, pd.errors.EmptyDataError) as err:
        raise InputError(
            "--staff", args.staff, f"a CSV file with columns case_id, anaesthetist ({type(err).__name__})"
        ) from None
    result = audit_records(args.files, reference=load_settings(args.settings))
    cases, notes = attach_staff(result.cases, staff, Path(args.staff).name)
    people = people_list(cases, key, min_cases)
    chosen = [args.person] if args.person else list(people["person"])
    reports = [personal_feedback(cases, p, key, args.measure, min_cases) for p in chosen]
    if args.html_dir:
        from model.present.exports import html_export

        for f in reports:
            if f.shown:
                html = html_export(
                    f"Your months: {f.measure}",
                    inputs={"Person": f.person, "Measure": f.measure, "Minimum of cases": str(min_cases)},
                    tables={"Your months beside the department's": f.table},
                    warnings=[f.note],
                    cautions=[CAUTION],
                )
                (Path(args.html_dir) / f"feedback_{f.person}.html").write_text(html, encoding="utf-8")
    if args.json:
        print_json(
            {
                "people": people.to_dict("records") if not args.person else [],
                "feedback": [f.to_dict() for f in reports] if args.person or args.html_dir else [],
                "notes": notes,
                "caution": CAUTION,
            }
        )
        return 0
    out = sys.stdout
    if not args.person:
        out.write(f"People with at least {min_cases} cases (pseudonyms; for editors)\n")
        print_table(people.to_dict("records"), ["person", "cases"], out)
    else:
        f = reports[0]
        if not f.shown:
            out.write(f"{f.person}: {f.note}\n")
        else:
            out.write(f"{f.person}: {f.measure} by month beside the department's median and quartiles\n")
            print_table(f.table.to_dict("records"), list(f.table.columns), out)
            out.write(f"Note: {f.note}\n")
    for n in notes:
        out.write(f"Note: {n}\n")
    out.write(f"\n{CAUTION}\n")
    return 0
