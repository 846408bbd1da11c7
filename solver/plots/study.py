"""Figures of study and run files: lines over one axis, maps over two.

Log scales where the physics wants them: a quantity flagged `log_scale` by its
computation, or whose unit is a current density, a carrier or trap density,
or a transmission; an axis that was swept with log spacing or is a doping.
A quantity with both signs on a log scale is drawn as its magnitude, said so
in the label. Failed and pending points are gaps (NaN), never zeros.
"""
from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from solver.plots import new_figure, save

__all__ = ["plot_study", "plot_run", "wants_log", "axis_wants_log"]

_LOG_UNITS = {"A/cm^2", "A/m^2", "cm^-3", "m^-3", "cm^-2", "cm^-2 eV^-1", "A"}
_LOG_NAMES = re.compile(r"(current|transmission|density|_cm3$|_A_cm2$|leakage)")


def wants_log(name: str, units: str, flagged: bool = False) -> bool:
    """Whether a quantity is drawn on a log scale."""
    return bool(flagged or units in _LOG_UNITS or _LOG_NAMES.search(name))


def axis_wants_log(values, units: str, spacing: str = "list") -> bool:
    v = np.asarray(values, dtype=float)
    if v.size < 2 or not np.all(v > 0):
        return False
    if spacing == "log" or units in ("cm^-3", "cm^-2"):
        return True
    return spacing == "list" and v.max() / v.min() >= 1e3


def _label(name: str, units: str) -> str:
    return f"{name} [{units}]" if units and units != "1" else name


def _prepare(values, log: bool, name: str, units: str):
    """Values and label for plotting; magnitudes when a log quantity changes sign."""
    v = np.array(values, dtype=float)
    label = _label(name, units)
    if not log:
        return v, label, False
    finite = v[np.isfinite(v)]
    if finite.size == 0:
        return v, label, False
    if np.all(finite > 0):
        return v, label, True
    mag = np.abs(v)
    mag[mag == 0] = np.nan
    if not np.any(np.isfinite(mag)):
        return v, label, False
    return mag, f"|{name}| [{units}]" if units and units != "1" else f"|{name}|", True


def _safe(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", name)


def _select(d, values, at: dict) -> tuple[np.ndarray, list[str]]:
    """Reduce an N-D grid to its first two axes, fixing the others at `at`
    (nearest value) or at their first value; returns the slice and notes."""
    notes = []
    index = []
    for k, axis in enumerate(d.axes):
        if k < 2:
            index.append(slice(None))
            continue
        target = at.get(axis.key, axis.values[0])
        i = int(np.argmin(np.abs(np.asarray(axis.values) - float(target))))
        index.append(i)
        notes.append(f"{axis.key} = {axis.values[i]:.4g}")
    return np.asarray(values)[tuple(index)], notes


def plot_study(d, out_dir, quantities=None, at=None, stem=None, over=None) -> list[str]:
    """Write PNGs of the scalar outputs of a study (store.StudyData); returns the paths.

    One axis (or zipped axes): lines. Two or more grid axes: a map over the
    first two, and lines over `over` (default: the second axis), one per value
    of the other.
    quantities : output names (default: every scalar output)
    at : {axis key: value} fixing the axes beyond the first two of a grid
    over : axis key for the family of lines
    """
    out_dir = Path(out_dir)
    stem = stem or Path(d.path).stem
    at = dict(at or {})
    names = list(quantities) if quantities else [
        n for n, data in d.outputs.items() if np.asarray(data.values).ndim == len(d.shape)]
    paths = []
    for name in names:
        if name in d.profiles:
            paths.append(_plot_profiles(d, name, out_dir, stem, at))
            continue
        data = d.outputs[name]
        values = np.asarray(data.values, dtype=float)
        if values.ndim != len(d.shape):
            continue
        log = wants_log(name, data.units, d.log_scale.get(name, False))
        title = f"{name}  ({d.compute}, {int(d.completed.sum())}/{d.completed.size} points)"
        if d.mode == "zip" or len(d.axes) == 1:
            paths.append(_line(d, name, data.units, values, log, out_dir, stem, title))
        else:
            grid, notes = _select(d, values, at)
            paths.append(_map(d, name, data.units, grid, log, out_dir, stem, title, notes))
            paths.append(_family(d, name, data.units, grid, log, out_dir, stem, title, notes, over))
    return paths


def _line_axes(ax, x, xname, xunits, spacing, ylabel, logy) -> None:
    """Axis labels and log scales of a line plot over one axis."""
    ax.set_xlabel(_label(xname, xunits))
    ax.set_ylabel(ylabel)
    if logy:
        ax.set_yscale("log")
    if axis_wants_log(x, xunits, spacing):
        ax.set_xscale("log")


def _family(d, name, units, grid, log, out_dir, stem, title, notes, over=None, max_lines=12):
    """Lines over one of the first two axes of a grid, one per value of the other."""
    keys = [d.axes[0].key, d.axes[1].key]
    k = keys.index(over) if over in keys else 1
    xa, la = d.axes[k], d.axes[1 - k]
    z = grid if k == 1 else grid.T            # rows: line axis, columns: x axis
    y_all, label, logy = _prepare(z, log, name, units)
    x = np.asarray(xa.values, dtype=float)
    fig, ax = new_figure(figsize=(6.0, 4.2))
    rows = range(0, z.shape[0], max(1, int(np.ceil(z.shape[0] / max_lines))))
    for i in rows:
        ax.plot(x, y_all[i], marker="o", markersize=3, linewidth=1.1,
                label=f"{la.values[i]:.4g} {la.units if la.units != '1' else ''}".strip())
    _line_axes(ax, x, xa.key, xa.units, xa.spacing, label, logy)
    ax.legend(title=la.key, fontsize=7, title_fontsize=7)
    if notes:
        title += "\nat " + ", ".join(notes)
    ax.set_title(title, fontsize=9)
    ax.grid(True, which="both", alpha=0.3)
    return save(fig, out_dir / f"{stem}-{_safe(name)}-over-{_safe(xa.key)}.png")


def _line(d, name, units, values, log, out_dir, stem, title):
    axis = d.axes[0]
    x = np.asarray(axis.values, dtype=float)
    y, label, logy = _prepare(values, log, name, units)
    fig, ax = new_figure(figsize=(6.0, 4.0))
    ax.plot(x, y, marker="o", markersize=3.5, linewidth=1.2)
    _line_axes(ax, x, axis.key, axis.units, axis.spacing, label, logy)
    if d.mode == "zip" and len(d.axes) > 1:
        others = ", ".join(a.key for a in d.axes[1:])
        title += f"\nzipped with {others}"
    ax.set_title(title, fontsize=9)
    ax.grid(True, which="both", alpha=0.3)
    return save(fig, out_dir / f"{stem}-{_safe(name)}.png")


def _map(d, name, units, grid, log, out_dir, stem, title, notes):
    from matplotlib.colors import LogNorm

    ax0, ax1 = d.axes[0], d.axes[1]
    x = np.asarray(ax0.values, dtype=float)
    y = np.asarray(ax1.values, dtype=float)
    z, label, logz = _prepare(grid, log, name, units)
    fig, ax = new_figure(figsize=(6.4, 4.8))
    norm = None
    finite = z[np.isfinite(z)]
    if logz and finite.size:
        norm = LogNorm(vmin=finite.min(), vmax=finite.max())
    masked = np.ma.masked_invalid(z.T)
    mesh = ax.pcolormesh(x, y, masked, shading="nearest", cmap="viridis", norm=norm)
    fig.colorbar(mesh, ax=ax, label=label)
    ax.set_xlabel(_label(ax0.key, ax0.units))
    ax.set_ylabel(_label(ax1.key, ax1.units))
    if axis_wants_log(x, ax0.units, ax0.spacing):
        ax.set_xscale("log")
    if axis_wants_log(y, ax1.units, ax1.spacing):
        ax.set_yscale("log")
    if notes:
        title += "\nat " + ", ".join(notes)
    ax.set_title(title, fontsize=9)
    return save(fig, out_dir / f"{stem}-{_safe(name)}-map.png")


def _plot_profiles(d, name, out_dir, stem, at, max_lines=12):
    """A profile output drawn for up to `max_lines` finished points."""
    data = d.profiles[name]
    values = np.asarray(data.values, dtype=float)
    extra = data.dims[len(d.shape):]
    lengths = d.lengths.get(extra[0]) if extra else None
    # positions for the abscissa: an "x_..." array over the same axis (none for e.g. per-layer values)
    xname = next((n for n, p in d.profiles.items()
                  if n.startswith("x_") and n != name and p.dims[len(d.shape):] == extra), None)
    log = wants_log(name, data.units, d.log_scale.get(name, False))
    fig, ax = new_figure(figsize=(6.0, 4.0))
    ok = np.argwhere(d.completed & ~d.failed)
    step = max(1, int(np.ceil(len(ok) / max_lines)))
    logy = False
    for pos in ok[::step]:
        pos = tuple(int(i) for i in pos)
        n = int(lengths[pos]) if lengths is not None else values.shape[-1]
        y, label, logy = _prepare(values[pos][:n], log, name, data.units)
        x = np.asarray(d.profiles[xname].values, dtype=float)[pos][:n] if xname else np.arange(n)
        if d.mode == "zip":
            tag = ", ".join(f"{a.key}={a.values[pos[0]]:.3g}" for a in d.axes)
        else:
            tag = ", ".join(f"{a.key}={a.values[i]:.3g}" for a, i in zip(d.axes, pos))
        ax.plot(x, y, linewidth=1.0, label=tag)
    ax.set_xlabel(_label(xname, d.profiles[xname].units) if xname else f"{extra[0] if extra else ''} index".strip())
    ax.set_ylabel(_label(name, data.units))
    if logy:
        ax.set_yscale("log")
    if len(ok):
        ax.legend(fontsize=6)
    ax.set_title(f"{name} ({d.compute})", fontsize=9)
    return save(fig, out_dir / f"{stem}-{_safe(name)}-profiles.png")


def plot_run(r: dict, out_dir, stem: str, quantities=None) -> list[str]:
    """Lines of each 1-D dataset of a run file over its axis; one PNG per dataset."""
    out_dir = Path(out_dir)
    paths = []
    for gname, entries in r["groups"].items():
        for name, data in entries.items():
            arr = np.asarray(data.values)
            if arr.ndim != 1 or arr.dtype.kind not in "iuf" or not data.dims:
                continue
            dim = data.dims[0]
            if name == dim or (quantities and name not in quantities):
                continue
            coord = entries.get(dim)
            if coord is None or np.asarray(coord.values).dtype.kind not in "iuf":
                x, xlabel, xunits, spacing = np.arange(arr.size), dim, "", "list"
            else:
                x, xlabel, xunits, spacing = np.asarray(coord.values, float), dim, coord.units, "list"
            y, label, logy = _prepare(arr, wants_log(name, data.units), name, data.units)
            fig, ax = new_figure(figsize=(6.0, 4.0))
            ax.plot(x, y, linewidth=1.2)
            _line_axes(ax, x, xlabel, xunits, spacing, label, logy)
            ax.set_title(f"{gname}: {name}", fontsize=9)
            ax.grid(True, which="both", alpha=0.3)
            paths.append(save(fig, out_dir / f"{stem}-{_safe(gname)}-{_safe(name)}.png"))
    return paths
