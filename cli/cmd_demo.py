"""`tunnelstack demo CASE`: the main job on one case, in one go.

Runs, into one output directory: the stack check, the self-consistent band
diagram at the case's gate voltage, the quasi-static C–V (classical vs
quantum), the exact vs WKB vs Fowler–Nordheim comparison (J–F, FN plot,
T(E), thickness x field map), and the cell's program, erase, ISPP and
retention behaviour with its design window. Each step is the corresponding subcommand; this
module only strings them together.
"""
from __future__ import annotations

import time
from pathlib import Path

from cli.common import CAUTION

NAME = "demo"
HELP = ("run the main job on a case: check, band diagram, C–V, exact vs WKB/FN breakdown, "
        "program/erase/retention (HDF5 + PNG)")


DEFAULT_CASE = "cases/demo-cell.toml"


def add_arguments(parser):
    parser.add_argument("case", metavar="CASE", nargs="?", default=DEFAULT_CASE,
                        help="case file (TOML); default cases/demo-cell.toml")
    parser.add_argument("--output-dir", metavar="DIR", default="tunnelstack-demo",
                        help="directory for the HDF5 files and figures (default tunnelstack-demo)")
    parser.add_argument("--quiet", action="store_true", help="print nothing but errors")


def run(args) -> int:
    from cli.main import build_parser
    from solver.case import load_case

    from cli.common import bad_input

    if args.case == DEFAULT_CASE and not Path(DEFAULT_CASE).is_file():
        raise bad_input(f"CASE: the default case {DEFAULT_CASE} is not in {Path.cwd()}; run from the root of "
                        "the tunnelstack source tree or name a case file")
    load_case(args.case)  # bad input stops here, before anything is written
    out = Path(args.output_dir)
    if out.exists() and not out.is_dir():
        raise bad_input(f"--output-dir: {out} exists and is not a directory")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise bad_input(f"--output-dir: cannot create {out} ({err.strerror or err})") from None
    quiet = ["--quiet"] if args.quiet else []
    steps = [
        ("stack", ["check", args.case]),
        ("band diagram", ["bands", args.case, "--output", str(out / "bands.h5"),
                          "--figure", str(out / "bands.png"), *quiet]),
        ("C–V", ["cv", args.case, "--output", str(out / "cv.h5"), "--figure", str(out / "cv.png"), *quiet]),
        ("exact vs WKB vs Fowler–Nordheim", ["breakdown", args.case, "--output", str(out / "breakdown.h5"),
                                            *quiet]),
        ("cell: program, erase, ISPP, retention", ["cell", args.case, "--output", str(out / "cell.h5"), *quiet]),
    ]
    parser = build_parser()
    available = set(parser._subparsers._group_actions[0].choices)  # commands present in this build
    for title, argv in steps:
        if argv[0] not in available:
            continue
        if not args.quiet:
            print(f"\n=== {title}: tunnelstack {' '.join(argv)}")
        if argv[0] == "check" and args.quiet:
            continue
        start = time.perf_counter()
        sub = parser.parse_args(argv)
        code = int(sub._run(sub) or 0)
        if code != 0:
            return code
        if not args.quiet:
            print(f"({time.perf_counter() - start:.1f} s)")
    if not args.quiet:
        files = sorted(p.name for p in out.iterdir() if p.suffix in (".h5", ".png"))
        print(f"\nwrote into {out}/: {', '.join(files)}")
        print(CAUTION)
    return 0
