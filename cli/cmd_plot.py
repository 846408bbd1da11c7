"""`tunnelstack plot FILE`: PNG figures of a study (lines over one axis, maps
over two) or of a run file (each 1-D quantity over its axis)."""
from __future__ import annotations

from pathlib import Path

NAME = "plot"
HELP = "draw a study or run file as PNG figures: lines over one axis, maps over two"


def add_arguments(parser):
    parser.add_argument("file", metavar="FILE", help="HDF5 file written by tunnelstack")
    parser.add_argument("--output-dir", metavar="DIR",
                        help="directory for the figures (default: beside FILE)")
    parser.add_argument("--quantity", action="append", metavar="NAME",
                        help="output to draw (repeatable; default: every scalar output)")
    parser.add_argument("--over", metavar="KEY",
                        help="for a grid: the axis of the line plot (default: the second axis)")
    parser.add_argument("--at", action="append", default=[], metavar="KEY=VALUE",
                        help="for a grid of more than two axes: the value of a further axis "
                             "(nearest is taken; default: its first value)")


def _parse_at(items) -> dict:
    from solver.errors import CaseError

    out = {}
    for item in items:
        key, sep, value = item.partition("=")
        try:
            if not sep:
                raise ValueError
            out[key.strip()] = float(value)
        except ValueError:
            raise CaseError(f"--at {item!r}: expected KEY=NUMBER, e.g. bias.gate_V=12") from None
    return out


def _check_quantities(wanted, known, path) -> None:
    from solver.errors import CaseError

    for q in wanted or ():
        if q not in known:
            import difflib

            close = difflib.get_close_matches(q, known, n=1)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            raise CaseError(f"--quantity {q!r}: not in {path} (outputs: {', '.join(known)}).{hint}")


def run(args) -> int:
    from solver.errors import CaseError
    from solver.store import StoreError, file_kind, read_run, read_study

    path = Path(args.file)
    kind = file_kind(path)
    if kind is None:
        raise StoreError(f"{path}: no such file")
    out_dir = Path(args.output_dir) if args.output_dir else (path.parent if str(path.parent) else Path("."))
    out_dir.mkdir(parents=True, exist_ok=True)
    at = _parse_at(args.at)
    from solver.plots.study import plot_run, plot_study

    if kind == "study":
        d = read_study(path)
        _check_quantities(args.quantity, list(d.outputs) + list(d.profiles), path)
        keys = [a.key for a in d.axes]
        further = keys[2:] if d.mode == "grid" else []
        for key in at:
            if key not in further:
                allowed = ", ".join(further) if further else "none (only a grid of more than two axes has them)"
                raise CaseError(f"--at {key}: not a further axis of {path} beyond the two drawn; "
                                f"allowed: {allowed}")
        if args.over:
            lines_over = keys[:2] if d.mode == "grid" and len(keys) > 1 else []
            if args.over not in lines_over:
                allowed = ", ".join(lines_over) if lines_over else "none (a grid of two or more axes needs it)"
                raise CaseError(f"--over {args.over}: not allowed for {path}; allowed: {allowed}")
        paths = plot_study(d, out_dir, args.quantity, at=at, over=args.over)
    else:
        r = read_run(path)
        _check_quantities(args.quantity, [n for entries in r["groups"].values() for n in entries], path)
        paths = plot_run(r, out_dir, path.stem, args.quantity)
    if not paths:
        print(f"{path}: nothing to draw")
        return 0
    for p in paths:
        print(f"wrote {p}")
    return 0
