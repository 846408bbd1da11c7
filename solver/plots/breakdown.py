"""Figures of the exact-vs-approximation comparison (matplotlib, Agg backend).

Four figures, each taking plain arrays (so stored results draw as easily as
fresh ones):

    transmission_figure   T(E) on a log scale, exact solid and WKB dashed
    current_field_figure  J–F with exact, WKB, Fowler–Nordheim and trapezoid
                          curves, regimes shaded and named, ratio panel below
    fowler_nordheim_figure  ln(J/F^2) against 1/F
    ratio_map_figure      log10(J_exact/J_approx) over thickness x field, the
                          factor-2 contour and the FN onset line

Units on every axis: fields in MV/cm, currents in A/cm^2, energies in eV.
"""
from __future__ import annotations

import math

import numpy as np

from solver.plots import new_figure, save

__all__ = ["transmission_figure", "current_field_figure", "fowler_nordheim_figure", "ratio_map_figure"]

# one colour per quantity, kept in every figure
_COLORS = {"exact": "#111111", "wkb": "#1f5fa8", "fn": "#c2571a", "trapezoid": "#2f8a3b"}
_STYLES = {"exact": "-", "wkb": "--", "fn": "-.", "trapezoid": ":"}
_NAMES = {"exact": "exact (transfer matrix)", "wkb": "WKB", "fn": "Fowler–Nordheim",
          "trapezoid": "trapezoid (direct-tunneling formula)"}
_REGIME_FILL = {"direct": "#e9eef5", "fowler-nordheim": "#ffffff", "interference": "#fbefd9",
                "none": "#eeeeee"}
_REGIME_TEXT = {"direct": "direct tunneling", "fowler-nordheim": "Fowler–Nordheim",
                "interference": "FN + interference", "none": "no emission"}
_FIELD_COLORS = ("#1f5fa8", "#c2571a", "#2f8a3b", "#8a3b8f", "#7a6a12")


def _positive(a):
    a = np.asarray(a, float)
    return np.where(a > 0, a, np.nan)


def _log_limits(*arrays, floor=1e-300, decades=None):
    vals = np.concatenate([np.ravel(_positive(a)) for a in arrays])
    vals = vals[np.isfinite(vals) & (vals > floor)]
    if vals.size == 0:
        return None
    hi = 10 ** math.ceil(math.log10(vals.max()) + 0.3)
    lo = 10 ** math.floor(math.log10(vals.min()))
    if decades is not None:
        lo = max(lo, hi / 10 ** decades)
    return lo, hi


def transmission_figure(path, *, energy_eV, field_MV_cm, transmission_exact, transmission_wkb,
                        barrier_height_eV, emitter_fermi_eV=None, title="",
                        energy_label="energy above the emitter band edge (eV)") -> str:
    """T(E) at a few fields: exact solid, WKB dashed in the same colour.

    energy_eV (energies,), field_MV_cm (fields,), transmission_* (fields, energies).
    """
    e = np.asarray(energy_eV, float)
    te = np.atleast_2d(transmission_exact)
    tw = np.atleast_2d(transmission_wkb)
    fig, ax = new_figure(figsize=(7.2, 4.8))
    for i, f in enumerate(np.ravel(field_MV_cm)):
        c = _FIELD_COLORS[i % len(_FIELD_COLORS)]
        ax.semilogy(e, _positive(te[i]), color=c, lw=1.6, label=f"{f:.1f} MV/cm, exact")
        ax.semilogy(e, _positive(tw[i]), color=c, lw=1.2, ls="--", label=f"{f:.1f} MV/cm, WKB")
    lims = _log_limits(te, tw, decades=60)
    if lims:
        ax.set_ylim(lims[0], min(lims[1], 5.0))
    ax.axvline(barrier_height_eV, color="#555555", lw=0.9, ls=":")
    ax.text(barrier_height_eV, 0.5, f" barrier height {barrier_height_eV:.2f} eV",
            transform=ax.get_xaxis_transform(), va="center", ha="left", fontsize=8, color="#333333")
    if emitter_fermi_eV is not None:
        ef = np.ravel(emitter_fermi_eV)
        if ef.size and np.allclose(ef, ef[0], atol=0.02):
            ax.axvline(ef[0], color="#999999", lw=0.8, ls="-.")
            ax.text(ef[0], 0.03, " emitter Fermi level", transform=ax.get_xaxis_transform(),
                    va="bottom", ha="left", fontsize=8, color="#555555", rotation=90)
    ax.set_xlabel(energy_label)
    ax.set_ylabel("transmission T(E)")
    ax.set_xlim(e.min(), e.max())
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize=7.5, ncol=2, loc="lower right")
    ax.set_title(title or "Transmission: exact vs WKB", fontsize=10)
    return save(fig, path)


def _regime_spans(field, regime):
    """(start, stop, name) runs of equal regime along increasing field (midpoint edges)."""
    order = np.argsort(field)
    f = np.asarray(field, float)[order]
    r = [regime[i] for i in order]
    edges = np.concatenate(([f[0]], 0.5 * (f[1:] + f[:-1]), [f[-1]]))
    runs, start = [], 0
    for k in range(1, len(r) + 1):
        if k == len(r) or r[k] != r[start]:
            runs.append((edges[start], edges[k], r[start]))
            start = k
    return runs


def _shade_regimes(ax, field, regime, label=True):
    spans = _regime_spans(field, regime)
    total = (spans[-1][1] - spans[0][0]) if spans else 0.0
    for a, b, name in spans:
        ax.axvspan(a, b, color=_REGIME_FILL.get(name, "#ffffff"), zorder=0, lw=0)
        # label a span only where its name fits (the shading still shows narrow spans)
        if label and b - a > 0 and (b - a) >= 0.15 * total:
            ax.text(0.5 * (a + b), 0.985, _REGIME_TEXT.get(name, name), transform=ax.get_xaxis_transform(),
                    ha="center", va="top", fontsize=8, color="#333333")


def current_field_figure(path, *, field_MV_cm, current_exact_A_cm2, current_wkb_A_cm2,
                         current_fn_A_cm2, current_trapezoid_A_cm2=None, regime=None,
                         onset_field_MV_cm=None, gate_V=None, title="",
                         field_label="field in the injecting layer (MV/cm)") -> str:
    """J–F (log J) with all approximations, regimes shaded, ratios J_exact/J_approx below."""
    f = np.asarray(field_MV_cm, float)
    curves = {"exact": current_exact_A_cm2, "wkb": current_wkb_A_cm2, "fn": current_fn_A_cm2}
    if current_trapezoid_A_cm2 is not None:
        curves["trapezoid"] = current_trapezoid_A_cm2
    fig, (ax, axr) = new_figure(2, 1, figsize=(7.2, 7.0), sharex=True,
                                gridspec_kw={"height_ratios": (2.2, 1.0)})
    if regime is not None:
        _shade_regimes(ax, f, list(regime))
        _shade_regimes(axr, f, list(regime), label=False)
    order = np.argsort(f)
    for key, j in curves.items():
        ax.semilogy(f[order], _positive(j)[order], color=_COLORS[key], ls=_STYLES[key],
                    lw=1.8 if key == "exact" else 1.3, label=_NAMES[key])
    lims = _log_limits(current_exact_A_cm2, decades=None)
    if lims:
        ax.set_ylim(max(lims[0] / 10, 1e-30), lims[1] * 10)
    if onset_field_MV_cm is not None and np.isfinite(onset_field_MV_cm):
        for a in (ax, axr):
            a.axvline(onset_field_MV_cm, color="#555555", lw=0.9, ls=":")
        ax.text(onset_field_MV_cm, 0.90, " qV = barrier height", transform=ax.get_xaxis_transform(),
                fontsize=8, color="#333333", ha="left", va="top")
    ax.set_ylabel("current density J (A/cm²)")
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize=8, loc="lower right")
    ax.set_title(title or "Current density vs field", fontsize=10)
    je = _positive(current_exact_A_cm2)
    axr.axhspan(0.5, 2.0, color="#d8ecd8", zorder=0.5, lw=0)
    axr.text(f.min(), 1.0, "  within ×2", fontsize=7.5, va="center", color="#2f6a2f")
    for key in curves:
        if key == "exact":
            continue
        with np.errstate(divide="ignore", invalid="ignore"):
            r = je / _positive(curves[key])
        axr.semilogy(f[order], r[order], color=_COLORS[key], ls=_STYLES[key], lw=1.3,
                     label=f"exact / {_NAMES[key].split(' (')[0]}")
    axr.axhline(1.0, color="#777777", lw=0.8)
    with np.errstate(divide="ignore", invalid="ignore"):
        rr = np.concatenate([np.ravel(je / _positive(curves[k])) for k in curves if k != "exact"])
    rr = rr[np.isfinite(rr) & (rr > 0)]
    if rr.size:
        # at most 4 decades either way, so that the factor-2 band stays readable
        span = min(max(abs(math.log10(rr.min())), abs(math.log10(rr.max())), 1.0), 4.0)
        axr.set_ylim(10 ** -span, 10 ** span)
    axr.set_ylabel("J_exact / J_approx\n(clipped at 10^±4)", fontsize=9)
    axr.set_xlabel(field_label)
    axr.grid(True, which="major", alpha=0.3)
    axr.legend(fontsize=7.5, loc="lower right")
    if gate_V is not None:
        g = np.asarray(gate_V, float)[order]
        fo = f[order]
        if np.all(np.diff(fo) > 0) and np.all(np.isfinite(g)) and (np.all(np.diff(g) > 0) or np.all(np.diff(g) < 0)):
            gs = g if g[-1] > g[0] else g[::-1]
            fs = fo if g[-1] > g[0] else fo[::-1]
            top = ax.secondary_xaxis("top", functions=(lambda x: _interp_linear_ends(x, fo, g),
                                                        lambda v: _interp_linear_ends(v, gs, fs)))
            top.set_xlabel("gate voltage (V)", fontsize=9)
    return save(fig, path)


def _interp_linear_ends(x, xp, fp):
    """np.interp continued linearly beyond the ends (so that the ticks of a
    secondary axis outside the data do not pile up on the first or last point)."""
    x = np.asarray(x, float)
    y = np.interp(x, xp, fp)
    if len(xp) > 1:
        lo, hi = x < xp[0], x > xp[-1]
        y = np.where(lo, fp[0] + (x - xp[0]) * (fp[1] - fp[0]) / (xp[1] - xp[0]), y)
        y = np.where(hi, fp[-1] + (x - xp[-1]) * (fp[-1] - fp[-2]) / (xp[-1] - xp[-2]), y)
    return y


def fowler_nordheim_figure(path, *, field_MV_cm, current_exact_A_cm2, current_wkb_A_cm2,
                           current_fn_A_cm2, onset_field_MV_cm=None, title="") -> str:
    """Fowler–Nordheim plot: ln(J/F^2) (J in A/cm^2, F in MV/cm) against 1/F (cm/MV)."""
    f = np.asarray(field_MV_cm, float)
    order = np.argsort(f)
    with np.errstate(divide="ignore"):
        x = 1.0 / f[order]  # a zero field (flat band) lies at infinity
    fig, ax = new_figure(figsize=(7.2, 4.8))
    for key, j in (("exact", current_exact_A_cm2), ("wkb", current_wkb_A_cm2), ("fn", current_fn_A_cm2)):
        with np.errstate(divide="ignore", invalid="ignore"):
            y = np.log(_positive(j)[order] / f[order] ** 2)
        ax.plot(x, y, color=_COLORS[key], ls=_STYLES[key], lw=1.8 if key == "exact" else 1.3,
                label=_NAMES[key] + (" (straight line)" if key == "fn" else ""))
    if onset_field_MV_cm is not None and np.isfinite(onset_field_MV_cm) and onset_field_MV_cm > 0:
        xo = 1.0 / onset_field_MV_cm
        ax.axvline(xo, color="#555555", lw=0.9, ls=":")
        ax.text(xo, 0.04, " qV = barrier height\n ← Fowler–Nordheim | direct →", fontsize=8,
                transform=ax.get_xaxis_transform(), ha="left", va="bottom", color="#333333")
    with np.errstate(divide="ignore", invalid="ignore"):
        ye = np.log(_positive(current_exact_A_cm2) / f ** 2)
    ye = ye[np.isfinite(ye)]
    if ye.size:
        ax.set_ylim(ye.min() - 5, ye.max() + 3)
    ax.set_xlabel("1 / F (cm/MV)")
    ax.set_ylabel("ln(J / F²)   [J in A/cm², F in MV/cm]")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="upper right")
    ax.set_title(title or "Fowler–Nordheim plot", fontsize=10)
    return save(fig, path)


def ratio_map_figure(path, *, thickness_nm, field_MV_cm, ratios, onset_field_MV_cm=None,
                     layer_label="injecting layer", title="",
                     field_label="field in the injecting layer (MV/cm)") -> str:
    """log10(J_exact/J_approx) over thickness x field, one panel per approximation.

    ratios : {"wkb": array (thicknesses, fields), "fn": ..., ...}; the black
    contour encloses the region within a factor 2 of exact.
    """
    import matplotlib.colors as mcolors

    t = np.asarray(thickness_nm, float)
    f = np.asarray(field_MV_cm, float)
    keys = list(ratios)
    fig, axes = new_figure(1, len(keys), figsize=(4.2 * len(keys) + 0.8, 4.6), sharey=True, squeeze=False)
    axes = axes[0]
    norm = mcolors.Normalize(vmin=-3.0, vmax=3.0)
    mesh = None
    for ax, key in zip(axes, keys):
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.log10(_positive(ratios[key])).T  # (fields, thicknesses)
        mesh = ax.pcolormesh(t, f, np.clip(z, -3, 3), cmap="RdBu_r", norm=norm, shading="nearest")
        zz = np.where(np.isfinite(z), np.abs(z), 10.0)
        if np.any(zz <= math.log10(2.0)):
            # hatched where the approximation is within a factor 2 of exact
            ax.contourf(t, f, zz, levels=[-1.0, math.log10(2.0)], colors="none", hatches=["////"])
            ax.contour(t, f, zz, levels=[math.log10(2.0)], colors="k", linewidths=0.6)
        frac = float(np.mean(zz <= math.log10(2.0)))
        if onset_field_MV_cm is not None:
            ax.plot(t, onset_field_MV_cm, color="#ffffff", lw=2.2)
            ax.plot(t, onset_field_MV_cm, color="#333333", lw=1.0, ls="--")
            k = int(0.7 * (t.size - 1))
            ax.text(t[k], min(onset_field_MV_cm[k], f.max()), " FN onset (qV = Φ_B)", fontsize=7.5,
                    va="bottom", ha="left", color="#111111")
        ax.set_ylim(f.min(), f.max())
        ax.set_title(f"exact / {_NAMES[key].split(' (')[0]}\nhatched: within ×2 ({100 * frac:.0f} % of the map)",
                     fontsize=9.5)
        ax.set_xlabel(f"{layer_label} thickness (nm)")
    axes[0].set_ylabel(field_label)
    cb = fig.colorbar(mesh, ax=list(axes), shrink=0.9)
    cb.set_label("log10(J_exact / J_approx)  (clipped at ±3)")
    if title:
        fig.suptitle(title, fontsize=10)
    return save(fig, path)
