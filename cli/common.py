"""Small helpers shared by the command modules (formatting only)."""
from __future__ import annotations

import sys

from solver.caution import CAUTION  # noqa: F401  (re-exported for the commands)


def table(rows, headers, aligns=None) -> str:
    """A plain text table; numbers are expected pre-formatted as strings."""
    cols = list(zip(*([headers] + [list(map(str, r)) for r in rows]))) if rows else [[h] for h in headers]
    widths = [max(len(c) for c in col) for col in cols]
    aligns = aligns or ["<"] + [">"] * (len(headers) - 1)
    def line(cells):
        return "  ".join(f"{c:{a}{w}}" for c, a, w in zip(cells, aligns, widths)).rstrip()
    out = [line(headers), line(["-" * w for w in widths])]
    out += [line(list(map(str, r))) for r in rows]
    return "\n".join(out)


def add_quiet(parser):
    parser.add_argument("--quiet", action="store_true", help="print nothing but errors")


def info(args, *text):
    if not getattr(args, "quiet", False):
        print(*text)


def err(*text):
    print(*text, file=sys.stderr)


def bad_input(message):
    """A CaseError for a refused command-line option (exit code 2)."""
    from solver.errors import CaseError

    return CaseError(message)


def output_paths(args, case, kind: str, figures: dict):
    """(HDF5 path, {figure key: PNG path}) from `--output FILE.h5` (figures beside it as
    FILE-<name>.png) or `--output-dir DIR` (default ./<case name>-<kind>/, holding <kind>.h5)."""
    from pathlib import Path

    def make(directory: Path, option: str) -> None:
        try:
            directory.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            raise bad_input(f"{option}: cannot create the directory {directory} ({err.strerror or err})") from None

    if args.output:
        h5 = Path(args.output)
        if h5.is_dir():
            raise bad_input(f"--output: {h5} is a directory; give a file name (FILE.h5) or use --output-dir")
        make(h5.parent, "--output")
        stem = h5.with_suffix("")
        return h5, {k: Path(f"{stem}-{v}") for k, v in figures.items()}
    directory = Path(args.output_dir) if args.output_dir else Path(f"{Path(case.source).stem}-{kind}")
    if directory.exists() and not directory.is_dir():
        raise bad_input(f"--output-dir: {directory} exists and is not a directory")
    make(directory, "--output-dir")
    return directory / f"{kind}.h5", {k: directory / v for k, v in figures.items()}


def check_output_file(path, option: str):
    """Refuse, before any computation, an output file that cannot be written: a directory,
    or a file in a directory that does not exist or is not writable (CaseError, exit 2)."""
    import os
    from pathlib import Path

    if path is None:
        return
    target = Path(path)
    if target.is_dir():
        raise bad_input(f"{option}: {target} is a directory; give a file name")
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise bad_input(f"{option}: the directory {directory} does not exist")
    if not os.access(directory, os.W_OK | os.X_OK):
        raise bad_input(f"{option}: the directory {directory} is not writable")
