"""matplotlib figures. Nothing here is imported by the rest of the library;
the CLI imports a plot module only when it writes a figure.

Each figure module calls `new_figure` so the Agg backend is selected before
pyplot is loaded, and no display is ever needed.
"""
from __future__ import annotations

import os


def pyplot():
    """Return matplotlib.pyplot on the Agg backend (no display needed)."""
    os.environ.setdefault("MPLBACKEND", "Agg")
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    return plt


def new_figure(*args, **kwargs):
    plt = pyplot()
    kwargs.setdefault("layout", "constrained")
    return plt.subplots(*args, **kwargs)


def save(fig, path) -> str:
    """Write `fig` as PNG at `path` (150 dpi) and close it; returns the path."""
    plt = pyplot()
    fig.savefig(path, dpi=150)
    plt.close(fig)
    return str(path)
