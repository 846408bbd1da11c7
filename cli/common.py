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
