"""`tunnelstack validate`: closed-form checks of the installed package."""
from __future__ import annotations

import json

from cli.common import table

NAME = "validate"
HELP = "run the closed-form checks of the installed package and print computed vs reference values"


def add_arguments(parser):
    from solver.validation import GROUPS

    parser.add_argument("--group", action="append", choices=GROUPS, metavar="GROUP",
                        help=f"run only this group (repeatable): {', '.join(GROUPS)}")
    parser.add_argument("--json", action="store_true", help="print the results as JSON instead of a table")


def _num(x: float) -> str:
    return "-" if x != x else f"{x:.6g}"


def run(args) -> int:
    from solver.validation import run_checks

    results = run_checks(args.group)
    failed = sum(r.failed for r in results)
    skipped = sum(r.status == "skip" for r in results)
    summary = {"checks": len(results), "passed": len(results) - failed - skipped, "failed": failed,
               "skipped": skipped}
    if args.json:
        print(json.dumps({"summary": summary, "results": [r.as_dict() for r in results]}, indent=1))
    else:
        rows = [[r.group, r.case, _num(r.computed), _num(r.reference),
                 "-" if r.relative_error != r.relative_error else f"{r.relative_error:.2e}",
                 f"{r.tolerance:.0e}", r.status.upper() if r.failed else r.status, r.source]
                for r in results]
        print(table(rows, ["group", "case", "computed", "reference", "rel. error", "tolerance", "status", "source"],
                    ["<", "<", ">", ">", ">", ">", "<", "<"]))
        for r in results:
            if r.note:
                print(f"note [{r.group}] {r.case}: {r.note}")
        print(f"{summary['passed']} passed, {failed} failed, {skipped} skipped "
              "(relative error: |computed - reference| / |reference|, absolute where the reference is 0)")
    return 1 if failed else 0
