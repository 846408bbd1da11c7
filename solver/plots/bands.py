"""Band-diagram and C–V figures (matplotlib on the Agg backend).

The functions take plain arrays and small tuples, not solver objects, so a
notebook user can draw stored results as easily as fresh ones.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from solver.plots import new_figure, save

__all__ = ["Span", "SubbandCurve", "band_diagram", "cv_figure"]

# Region fills: light, print-safe tints; the dielectrics cycle through three.
_FILL = {"gate": "#d9d9d9", "channel": "#f3f0e4", "core": "#e4ecf3"}
_LAYER_FILLS = ("#dcebdc", "#f4e1d2", "#e2dcef")
_VALLEY_COLORS = ("#1f5fa8", "#c2571a", "#2f8a3b", "#8a3b8f", "#7a6a12", "#3d7f86")


@dataclass(frozen=True)
class Span:
    """A region of the structure along x: kind "gate" | "layer" | "channel" | "core"."""

    name: str
    material: str
    kind: str
    x_lo_nm: float
    x_hi_nm: float


@dataclass(frozen=True)
class SubbandCurve:
    """A subband to draw: its energy and |psi|^2 (any normalisation) on x_nm;
    a hole subband's |psi|^2 hangs below its line (hole energy grows downward)."""

    label: str
    energy_eV: float
    x_nm: np.ndarray
    density: np.ndarray
    hole: bool = False


def band_diagram(path, *, x_nm, conduction_band_eV, valence_band_eV, fermi_level_eV,
                 spans=(), subbands=(), gate_fermi_level_eV=None, title="",
                 radial=False) -> str:
    """Draw E_c, E_v and E_F across the structure and write a PNG to `path`.

    Panels: the whole structure; the gate stack with a few nm of channel on
    the energy scale of the dielectric bands; with subbands, the channel next
    to the interface with every subband as a horizontal line at its energy
    and its |psi|^2 scaled to a common height and offset at that energy.

    x_nm, conduction_band_eV, valence_band_eV : node arrays (NaN where a band
        does not exist, e.g. inside a metal gate)
    fermi_level_eV : channel Fermi level (dashed across the channel)
    spans : Span per region, x order; shaded and labelled with its material
    subbands : SubbandCurve per state
    gate_fermi_level_eV : gate Fermi level, dashed across the gate region
    radial : x is the radius (cylindrical cell)
    Returns the path written.
    """
    x = np.asarray(x_nm, dtype=float)
    ec = np.asarray(conduction_band_eV, dtype=float)
    ev = np.asarray(valence_band_eV, dtype=float)
    panels = 3 if subbands else 2
    fig, axes = new_figure(1, panels, figsize=(4.6 * panels + 0.6, 5.0))
    xlabel = "radius from the axis (nm)" if radial else "depth from the gate (nm)"

    whole = (min([x.min()] + [sp.x_lo_nm for sp in spans]), max([x.max()] + [sp.x_hi_nm for sp in spans]))
    ax = axes[0]
    _draw(ax, x, ec, ev, fermi_level_eV, spans, (), gate_fermi_level_eV, whole,
          _energy_window(x, ec, ev, whole, [fermi_level_eV, gate_fermi_level_eV]), labels=False)
    ax.set_title("whole structure", fontsize=9)
    ax.set_ylabel("energy (eV)")
    ax.set_xlabel(xlabel)
    ax.legend(loc="best", fontsize=7, framealpha=0.9)

    ax = axes[1]
    window = _stack_window(spans, whole)
    _draw(ax, x, ec, ev, fermi_level_eV, spans, (), gate_fermi_level_eV, window,
          _energy_window(x, ec, ev, window, [fermi_level_eV, gate_fermi_level_eV]), labels=True)
    ax.set_title("gate stack", fontsize=9)
    ax.set_xlabel(xlabel)

    if subbands:
        ax = axes[2]
        sx = np.concatenate([np.asarray(sb.x_nm, dtype=float) for sb in subbands])
        zx = (float(sx.min()), float(sx.max()))
        inside = (x >= zx[0]) & (x <= zx[1]) & np.isfinite(ec)
        levels = [sb.energy_eV for sb in subbands] + [fermi_level_eV]
        e_lo = min(levels + ([float(ec[inside].min())] if inside.any() else [])) - 0.05
        e_hi = max(levels) + 0.15
        _draw(ax, x, ec, ev, fermi_level_eV, spans, subbands, None, zx, (e_lo, e_hi), labels=False)
        ax.set_xlabel(xlabel)
        ax.set_title("channel at the interface: subbands and |psi|$^2$", fontsize=9)
        ax.legend(loc="upper right", fontsize=7, framealpha=0.9)
    if title:
        fig.suptitle(title, fontsize=10)
    return save(fig, path)


def _energy_window(x, ec, ev, x_window, levels):
    inside = (x >= x_window[0]) & (x <= x_window[1])
    values = [v for v in levels if v is not None]
    for band in (ec, ev):
        b = band[inside & np.isfinite(band)]
        if b.size:
            values += [float(b.min()), float(b.max())]
    lo, hi = min(values), max(values)
    pad = 0.06 * (hi - lo if hi > lo else 1.0)
    return lo - pad, hi + 0.12 * (hi - lo if hi > lo else 1.0) + pad  # room for the labels


def _stack_window(spans, whole):
    """The dielectric layers with some gate on one side and channel on the other."""
    layers = [s for s in spans if s.kind == "layer"]
    if not layers:
        return whole
    lo = min(s.x_lo_nm for s in layers)
    hi = max(s.x_hi_nm for s in layers)
    t = hi - lo
    channel = [s for s in spans if s.kind == "channel"]
    channel_left = bool(channel) and channel[0].x_hi_nm <= lo + 1e-9
    gate_side, channel_side = max(0.25 * t, 1.5), max(t, 10.0)
    if channel_left:
        return max(whole[0], lo - channel_side), min(whole[1], hi + gate_side)
    return max(whole[0], lo - gate_side), min(whole[1], hi + channel_side)


def _draw(ax, x, ec, ev, fermi_level_eV, spans, subbands, gate_fermi_level_eV, x_window,
          e_window, labels):
    e_lo, e_hi = e_window
    layer_count = 0
    for span in spans:
        if span.kind == "layer":
            color = _LAYER_FILLS[layer_count % len(_LAYER_FILLS)]
            layer_count += 1
        else:
            color = _FILL.get(span.kind, "#eeeeee")
        ax.axvspan(span.x_lo_nm, span.x_hi_nm, color=color, zorder=0, lw=0)
        lo, hi = max(span.x_lo_nm, x_window[0]), min(span.x_hi_nm, x_window[1])
        if not labels or hi <= lo:
            continue
        narrow = (hi - lo) < 0.08 * (x_window[1] - x_window[0])
        text = span.material if span.kind in ("gate", "channel") else f"{span.material}\n({span.name})"
        ax.text(0.5 * (lo + hi), e_hi - 0.02 * (e_hi - e_lo), text, ha="center", va="top",
                fontsize=7 if narrow else 8, rotation=90 if narrow else 0, color="#333333", zorder=5)

    ax.plot(x, ec, color="#1f3f7a", lw=1.6, label="$E_c$", zorder=3)
    ax.plot(x, ev, color="#7a1f3f", lw=1.6, label="$E_v$", zorder=3)
    channel = [s for s in spans if s.kind in ("channel", "core")]
    gate = [s for s in spans if s.kind == "gate"]
    xs = ((min(s.x_lo_nm for s in channel), max(s.x_hi_nm for s in channel)) if channel
          else (x.min(), x.max()))
    ax.hlines(fermi_level_eV, *xs, colors="#222222", linestyles="--", lw=1.1, label="$E_F$", zorder=4)
    if gate_fermi_level_eV is not None:
        xg = (min(s.x_lo_nm for s in gate), max(s.x_hi_nm for s in gate)) if gate else xs
        ax.hlines(gate_fermi_level_eV, *xg, colors="#555555", linestyles="--", lw=1.1,
                  label="$E_F$ (gate)", zorder=4)
    if subbands:
        names = sorted({s.label for s in subbands})
        peak = max(float(np.max(s.density)) for s in subbands) or 1.0
        height = 0.15 * (e_hi - e_lo)
        seen = set()
        for sb in subbands:
            color = _VALLEY_COLORS[names.index(sb.label) % len(_VALLEY_COLORS)]
            sx = np.asarray(sb.x_nm, dtype=float)
            dens = np.asarray(sb.density, dtype=float)
            where = np.nonzero(dens > 1e-3 * dens.max())[0] if dens.max() > 0 else np.arange(sx.size)
            label = None if sb.label in seen else sb.label
            seen.add(sb.label)
            ax.hlines(sb.energy_eV, sx[where.min()], sx[where.max()], colors=color, lw=0.9,
                      zorder=4, label=label)
            ax.plot(sx, sb.energy_eV + (-height if sb.hole else height) * dens / peak, color=color, lw=0.8, alpha=0.85, zorder=4)
    ax.set_xlim(*x_window)
    ax.set_ylim(e_lo, e_hi)


def cv_figure(path, *, gate_V, curves, oxide_capacitance_F_cm2=None, title="") -> str:
    """Quasi-static C–V curves overlaid, C in uF/cm^2 against gate voltage.

    curves : {label: capacitance_F_cm2 array (NaN where not computed)}
    oxide_capacitance_F_cm2 : the stack capacitance drawn as a dotted line
    Returns the path written.
    """
    fig, ax = new_figure(figsize=(6.5, 4.5))
    v = np.asarray(gate_V, dtype=float)
    styles = ("-", "--", "-.", ":")
    for k, (label, c) in enumerate(curves.items()):
        ax.plot(v, np.asarray(c, dtype=float) * 1e6, styles[k % len(styles)], lw=1.5,
                color=_VALLEY_COLORS[k % len(_VALLEY_COLORS)], label=label)
    if oxide_capacitance_F_cm2 is not None:
        ax.axhline(oxide_capacitance_F_cm2 * 1e6, color="#666666", ls=":", lw=1.0, label="$C_{stack}$")
    ax.set_xlabel("gate voltage (V)")
    ax.set_ylabel(r"capacitance ($\mu$F/cm$^2$)")
    top = max([float(np.nanmax(np.asarray(c, dtype=float))) for c in curves.values()]
              + [oxide_capacitance_F_cm2 or 0.0]) * 1e6
    ax.set_ylim(0.0, 1.08 * top if top > 0 else None)
    if title:
        ax.set_title(title, fontsize=10)
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    return save(fig, path)
