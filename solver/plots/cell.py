"""Figures of the cell stage (matplotlib, Agg backend).

    transient_figure   V_T against time (log axis) during program and erase pulses
    ispp_figure        V_T after each ISPP step against the pulse voltage, slope-1 guide
    retention_figure   V_T against storage time (log axis) out to the retention target

Each takes plain arrays, so stored results draw as easily as fresh ones, and
each carries the caution line (solver.caution) at its foot: the default
``caution`` is that text, and an empty one is refused.
"""
from __future__ import annotations

import math

import numpy as np

from solver.caution import CAUTION
from solver.cell import SECONDS_PER_YEAR as _YEAR_S
from solver.plots import new_figure, save

__all__ = ["transient_figure", "ispp_figure", "retention_figure"]

_PROGRAM = "#b2361f"
_ERASE = "#1f5fa8"
_GUIDE = "#777777"


def _check_caution(caution):
    if not (isinstance(caution, str) and caution.strip()):
        raise ValueError("caution: a figure of the cell stage carries the caution text (solver.caution.CAUTION)")


def _caution(fig, caution):
    """The caution line at the foot (a figure-level label, so the layout makes room for it)."""
    import textwrap

    fig.supxlabel("\n".join(textwrap.wrap(caution, 125)), fontsize=6.5, color="#555555")


def _state_lines(ax, neutral_threshold_V):
    if neutral_threshold_V is not None and math.isfinite(neutral_threshold_V):
        ax.axhline(neutral_threshold_V, color=_GUIDE, lw=0.9, ls=":")
        ax.text(0.005, neutral_threshold_V, " neutral cell", transform=ax.get_yaxis_transform(),
                ha="left", va="bottom", fontsize=7.5, color="#444444")


def transient_figure(path, *, program=None, erase=None, neutral_threshold_V=None, title="", caution=CAUTION) -> str:
    """V_T(t) on a log time axis. ``program`` / ``erase``: dicts with
    ``time_s``, ``threshold_V``, ``gate_V`` and optionally ``start_threshold_V``."""
    _check_caution(caution)
    fig, ax = new_figure(figsize=(7.2, 4.9))
    for curve, color, name in ((program, _PROGRAM, "program"), (erase, _ERASE, "erase")):
        if curve is None:
            continue
        t = np.asarray(curve["time_s"], float)
        v = np.asarray(curve["threshold_V"], float)
        ax.semilogx(t, v, color=color, lw=1.8, label=f"{name} at {curve['gate_V']:+.1f} V")
        start = curve.get("start_threshold_V")
        if start is not None:
            ax.plot([t[0]], [start], marker="o", mfc="none", color=color, ms=5)
        ax.plot([t[-1]], [v[-1]], marker="o", color=color, ms=4)
        ax.annotate(f"{v[-1]:.2f} V", (t[-1], v[-1]), textcoords="offset points", xytext=(-4, 6),
                    ha="right", fontsize=8, color=color)
    _state_lines(ax, neutral_threshold_V)
    ax.set_xlabel("time since the start of the pulse (s)")
    ax.set_ylabel("threshold voltage V_T (V)")
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    ax.set_title(title or "Program and erase transients", fontsize=10)
    _caution(fig, caution)
    return save(fig, path)


def ispp_figure(path, *, gate_V, threshold_V, slope_V_per_V, fit_steps, pulse_s, start_threshold_V=None,
                title="", caution=CAUTION) -> str:
    """V_T after each step against the step voltage, with a slope-1 line through the last point."""
    v = np.asarray(gate_V, float)
    vt = np.asarray(threshold_V, float)
    _check_caution(caution)
    fig, ax = new_figure(figsize=(7.2, 4.9))
    ax.plot(v, vt, color=_PROGRAM, marker="o", ms=4, lw=1.5, label=f"V_T after each {pulse_s * 1e6:.3g} µs pulse")
    guide = vt[-1] + (v - v[-1])
    ax.plot(v, guide, color=_GUIDE, ls="--", lw=1.0, label="slope 1 V/V (steady-state FN)")
    fit = v[-fit_steps:]
    coef = np.polyfit(fit, vt[-fit_steps:], 1)
    ax.plot(fit, np.polyval(coef, fit), color="#111111", lw=2.4, alpha=0.35,
            label=f"fit over the last {fit_steps} steps: {slope_V_per_V:.3f} V/V")
    if start_threshold_V is not None:
        ax.axhline(start_threshold_V, color=_GUIDE, lw=0.8, ls=":")
        ax.text(v[-1], start_threshold_V, "before the first pulse ", va="bottom", ha="right", fontsize=7.5,
                color="#444444")
    lo = min(vt.min(), start_threshold_V if start_threshold_V is not None else vt.min())
    ax.set_ylim(lo - 0.5, vt.max() + 0.8)
    ax.set_xlabel("program pulse voltage V_pgm (V)")
    ax.set_ylabel("threshold voltage V_T (V)")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="upper left")
    ax.set_title(title or "Incremental step pulse programming", fontsize=10)
    _caution(fig, caution)
    return save(fig, path)


def retention_figure(path, *, curves, temperature_K, target_s=10 * _YEAR_S, neutral_threshold_V=None,
                     title="", caution=CAUTION) -> str:
    """V_T against storage time (log axis). ``curves``: list of dicts with
    ``label``, ``time_s``, ``threshold_V`` and ``start_threshold_V``."""
    _check_caution(caution)
    fig, ax = new_figure(figsize=(7.2, 4.9))
    colors = (_PROGRAM, _ERASE, "#2f8a3b", "#8a3b8f")
    for i, c in enumerate(curves):
        t = np.asarray(c["time_s"], float)
        v = np.asarray(c["threshold_V"], float)
        color = colors[i % len(colors)]
        ax.semilogx(t, v, color=color, lw=1.8, label=c["label"])
        if c.get("start_threshold_V") is not None:
            ax.axhline(c["start_threshold_V"], color=color, lw=0.7, ls=":", alpha=0.7)
        ax.annotate(f"{v[-1]:.2f} V", (t[-1], v[-1]), textcoords="offset points", xytext=(-26, 6),
                    ha="right", fontsize=8, color=color)
    ax.axvline(target_s, color=_GUIDE, lw=0.9, ls="--")
    ax.text(target_s, 0.98, f"{target_s / _YEAR_S:.3g} years ", transform=ax.get_xaxis_transform(),
            rotation=90, ha="right", va="top", fontsize=7.5, color="#444444")
    for years in (1.0,):
        if years * _YEAR_S < target_s:
            ax.axvline(years * _YEAR_S, color=_GUIDE, lw=0.6, ls=":")
            ax.text(years * _YEAR_S, 0.98, "1 year ", transform=ax.get_xaxis_transform(), rotation=90,
                    ha="right", va="top", fontsize=7.5, color="#444444")
    _state_lines(ax, neutral_threshold_V)
    ax.set_xlabel("storage time (s)")
    ax.set_ylabel("threshold voltage V_T (V)")
    ax.grid(True, which="major", alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    celsius = temperature_K - 273.15
    ax.set_title(title or f"Retention at {temperature_K:.2f} K ({celsius:.0f} °C), gate grounded", fontsize=10)
    _caution(fig, caution)
    return save(fig, path)
