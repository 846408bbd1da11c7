"""Tsu–Esaki tunnelling current through a multilayer barrier, and J–V sweeps.

    J = q m_s m0 / (2 pi^2 hbar^3) * integral of T(E) S(E) dE,
    S(E) = kT ln[(1 + exp((E_FL - E)/kT)) / (1 + exp((E_FR - E)/kT))],

E being the longitudinal energy on the absolute scale of the band edges,
m_s the supply (transverse) mass, by default the left lead's mass, and T(E)
the exact transmission (or the WKB one, for comparisons on the same
integration). The transverse momentum is conserved with the supply mass
everywhere (the usual Tsu–Esaki assumption; the mass change at the
interfaces does not couple transverse and longitudinal motion). J > 0 for a
net electron flow from left to right (E_FL > E_FR).

Numerics
--------
S(E) is written as a difference of softplus terms,
kT ln(1 + e^{u/kT}) = max(u, 0) + kT log1p(e^{-|u|/kT}), with the difference
of the max() terms taken in closed form, so it never overflows, is exactly 0
for equal Fermi levels and reduces to the 0 K supply max(E_FL - E, 0) -
max(E_FR - E, 0) at T = 0 without a special case.

The integral runs from the higher lead band edge (T = 0 below it) to
max(highest barrier top, Fermi levels) + 40 kT (the Fermi tail beyond is below
e^-40 of the integrand there); at 0 K it ends at the higher Fermi level. It is
done by adaptive Gauss–Kronrod (7/15 points) on panels that start at every
kink of the integrand (band edges of the layers and leads, Fermi levels),
geometrically spaced within +-32 kT of each Fermi level and around every
sharp resonance (below), no wider than 0.1 eV, and are bisected where
|K15 - G7| is largest until the summed |K15 - G7| (a pessimistic error
estimate) is below rtol (1e-4) of |J|. Where the bisection cannot get there
(the error left sits in panels at the resolution limit of the energy axis, or
the panel budget is spent) the integral is still accepted if the error is
below rtol |J| + atol, the absolute floor atol_A_cm2 defaulting to 1e-30 A/cm^2
(one electron per cm^2 in ~5000 years; the record says which criterion held).
An integration that does not get there raises ConvergenceError.

Sharp resonances (quasi-bound states of a well inside the stack, e.g. the
nitride of a biased oxide/nitride/oxide barrier) can be far narrower than any
affordable grid and can still carry most of the current. For the exact model
they are located first (`find_resonances`: zeros of the two smooth functions
whose squares make up 1/T, refined by regula falsi, with a width estimate),
and panel edges are placed at z +- w 6^k around each peak that could matter,
before the adaptive bisection starts. No scattering broadens the resonances
here (coherent transport); peaks narrower than ~1e-14 eV are below the
resolution of the energy axis.

References
----------
.. [1] R. Tsu and L. Esaki, Appl. Phys. Lett. 22, 562 (1973).
.. [2] Physics-data sheet Sec. 6 item 7 (form and prefactor), Sec. 1
       (prefactor q m0 kT/(2 pi^2 hbar^3) = 4.1837e8 A cm^-2 eV^-1 at 300 K).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import partial
from typing import Callable

import numpy as np

from solver.errors import ComputationError, ConvergenceError, ConvergenceRecord
from solver.tunneling.barrier import require_barrier
from solver.units import A_PER_M2_TO_A_PER_CM2, BOLTZMANN_EV_K, EV_TO_J, HBAR_J_S, M0_KG, Q_C

__all__ = [
    "current_density",
    "tsu_esaki",
    "TsuEsakiResult",
    "current_sweep",
    "current_voltage",
    "current_field",
    "CurrentVoltage",
    "with_bias",
    "bias_for_field",
    "supply_function_eV",
    "find_resonances",
    "TSU_ESAKI_PREFACTOR_A_CM2_EV2",
    "ATOL_A_CM2",
]

# q m0 / (2 pi^2 hbar^3) * (1 eV)^2 in A/cm^2 per eV^2: J = this * m_s * integral of T S dE[eV^2]
TSU_ESAKI_PREFACTOR_A_CM2_EV2 = Q_C * M0_KG / (2.0 * math.pi**2 * HBAR_J_S**3) * EV_TO_J**2 * A_PER_M2_TO_A_PER_CM2

# Gauss–Kronrod 7/15 on [-1, 1] (QUADPACK qk15 abscissae and weights); nodes in
# increasing order, Gauss nodes at the odd positions 1, 3, ..., 13.
_XK_HALF = np.array([
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.0,
])
_WK_HALF = np.array([
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714,
])
_WG_HALF = np.array([
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327,
])
GK_NODES = np.concatenate((-_XK_HALF[:-1], _XK_HALF[::-1]))
GK_KRONROD_WEIGHTS = np.concatenate((_WK_HALF[:-1], _WK_HALF[::-1]))
GK_GAUSS_WEIGHTS = np.zeros(15)
GK_GAUSS_WEIGHTS[1::2] = np.concatenate((_WG_HALF[:-1], _WG_HALF[::-1]))
for _a in (GK_NODES, GK_KRONROD_WEIGHTS, GK_GAUSS_WEIGHTS):
    _a.flags.writeable = False

_TAIL_KT = 40.0  # integrate this many kT beyond the highest barrier top / Fermi level
_MAX_PANEL_EV = 0.1
_SCAN_EV = 0.0125  # grid spacing of the resonance search
_RESONANCE_RATIO = 6.0  # panel edges at z +- w * ratio^k around a sharp resonance
_FERMI_STEPS = 2.0 ** np.arange(0, 6)  # panel edges at E_F +- kT * (1, 2, ..., 32)
_MAX_PANELS = 20000
_MAX_ROUNDS = 60
_MIN_PANEL_REL = 1e-13
# Default absolute tolerance of the current, A/cm^2. 1e-30 A/cm^2 is 6e-12 electrons
# per cm^2 and second, one electron per cm^2 in ~1.6e11 s (~5000 years): ten years
# of it move ~2e-3 electrons per cm^2, nothing any measurement or retention budget
# sees. Below it the relative error of a current is not worth resolving, and
# quasi-bound states narrower than the energy axis resolves (see above) can
# leave it stuck at ~1e-2 for such currents (e.g. ~1e-50 A/cm^2 of holes from the
# gate at 1 MV/cm through an oxide/nitride/oxide stack).
ATOL_A_CM2 = 1e-30


def supply_function_eV(energy_eV, fermi_left_eV, fermi_right_eV, temperature_K):
    """S(E) = kT ln[(1 + e^{(E_FL-E)/kT}) / (1 + e^{(E_FR-E)/kT})] in eV, stable at any T >= 0.

    At T = 0 it is max(E_FL - E, 0) - max(E_FR - E, 0).
    """
    if not (np.isfinite(temperature_K) and temperature_K >= 0):
        raise ValueError(f"supply_function_eV: temperature_K must be finite and >= 0, got {temperature_K!r}")
    e = np.asarray(energy_eV, dtype=np.float64)
    kT = BOLTZMANN_EV_K * temperature_K
    hi, lo = max(fermi_left_eV, fermi_right_eV), min(fermi_left_eV, fermi_right_eV)
    sign = 1.0 if fermi_left_eV >= fermi_right_eV else -1.0
    # max(E_FL - E, 0) - max(E_FR - E, 0) = sign * clip(hi - E, 0, hi - lo), no cancellation
    s = sign * np.clip(hi - e, 0.0, hi - lo)
    if kT > 0.0 and hi != lo:
        tail_l = np.log1p(np.exp(-np.abs(fermi_left_eV - e) / kT))
        tail_r = np.log1p(np.exp(-np.abs(fermi_right_eV - e) / kT))
        s = s + kT * (tail_l - tail_r)
    return s


def _transmission_model(model) -> Callable:
    if callable(model):
        return model
    if model == "exact":
        from solver.tunneling.exact import transmission

        return transmission
    if model == "wkb":
        from solver.tunneling.wkb import wkb_transmission

        return wkb_transmission
    raise ValueError(f"model must be 'exact', 'wkb' or a callable T(barrier, energy_eV), got {model!r}")


def _check_inputs(fermi_left_eV, fermi_right_eV, temperature_K, rtol, supply_mass, atol_A_cm2=0.0):
    for name, value in (("fermi_left_eV", fermi_left_eV), ("fermi_right_eV", fermi_right_eV),
                        ("temperature_K", temperature_K)):
        if np.ndim(value) != 0:
            raise ValueError(f"{name} must be a single number, got an array of shape {np.shape(value)}")
    for name, value in (("fermi_left_eV", fermi_left_eV), ("fermi_right_eV", fermi_right_eV)):
        if not np.isfinite(value):
            raise ValueError(f"{name} must be finite, got {value!r}")
    if not (np.isfinite(temperature_K) and temperature_K >= 0):
        raise ValueError(f"temperature_K must be finite and >= 0, got {temperature_K!r}")
    if not (np.isfinite(rtol) and 1e-12 <= rtol <= 0.1):
        raise ValueError(f"rtol must be in [1e-12, 0.1], got {rtol!r}")
    if not (np.isfinite(atol_A_cm2) and atol_A_cm2 >= 0):
        raise ValueError(f"atol_A_cm2 must be finite and >= 0, got {atol_A_cm2!r}")
    if supply_mass is not None and not (np.isfinite(supply_mass) and supply_mass > 0):
        raise ValueError(f"supply_mass must be finite and > 0 (units of m0), got {supply_mass!r}")


@dataclass(frozen=True)
class TsuEsakiResult:
    """A converged Tsu–Esaki integration.

    current_A_cm2 : J, A/cm^2, > 0 for net electron flow left to right.
    error_estimate_A_cm2 : summed |K15 - G7| over the panels (pessimistic).
    energy_range_eV : (lower, upper) integration limits.
    panels : number of Gauss–Kronrod panels at convergence.
    evaluations : transmission evaluations (energies) used.
    resonances : sharp resonances given panel edges of their own.
    record : the ConvergenceRecord of the refinement.
    """

    current_A_cm2: float
    error_estimate_A_cm2: float
    energy_range_eV: tuple[float, float]
    panels: int
    evaluations: int
    resonances: int
    record: ConvergenceRecord


def _energy_limits(barrier, fermi_left_eV, fermi_right_eV, kT):
    lower = max(barrier.left[0], barrier.right[0])
    top = max(max(barrier.u_start_eV), max(barrier.u_end_eV), lower)
    fermi_hi = max(fermi_left_eV, fermi_right_eV)
    # at 0 K the supply vanishes above the higher Fermi level
    upper = max(top, fermi_hi) + _TAIL_KT * kT if kT > 0 else fermi_hi
    return lower, upper


def _initial_edges(barrier, fermi_left_eV, fermi_right_eV, kT, lower, upper) -> np.ndarray:
    pts = [lower, upper, *barrier.u_start_eV, *barrier.u_end_eV, barrier.left[0], barrier.right[0]]
    for ef in {fermi_left_eV, fermi_right_eV}:
        pts.append(ef)
        if kT > 0:
            pts.extend(ef + kT * _FERMI_STEPS)
            pts.extend(ef - kT * _FERMI_STEPS)
    p = np.unique(np.asarray(pts, dtype=np.float64))
    return _split_wide(p[(p >= lower) & (p <= upper)])


def _split_wide(p: np.ndarray, max_width: float = _MAX_PANEL_EV) -> np.ndarray:
    """Sorted edges with every gap wider than `max_width` split evenly."""
    widths = np.diff(p)
    pieces = np.maximum(1, np.ceil(widths / max_width - 1e-9).astype(np.int64))
    gap = np.repeat(np.arange(widths.size), pieces)
    step = np.arange(gap.size) - np.repeat(np.cumsum(pieces) - pieces, pieces) + 1
    inner = p[:-1][gap] + widths[gap] * step / pieces[gap]
    inner[np.cumsum(pieces) - 1] = p[1:]  # the original edges exactly
    return np.concatenate((p[:1], inner))


def _panel_sums(t_of_e, a, b, fermi_left_eV, fermi_right_eV, temperature_K):
    """Kronrod and Gauss sums (eV^2) of T(E) S(E) on panels [a_i, b_i]."""
    half = 0.5 * (b - a)
    mid = 0.5 * (b + a)
    e = mid[:, None] + half[:, None] * GK_NODES[None, :]
    t = np.asarray(t_of_e(e.ravel()), dtype=np.float64).reshape(e.shape)
    if not np.all(np.isfinite(t)):
        bad = e[~np.isfinite(t)][0]
        raise ComputationError(f"transmission returned a non-finite value at energy_eV = {bad!r}")
    f = t * supply_function_eV(e, fermi_left_eV, fermi_right_eV, temperature_K)
    return half * (f @ GK_KRONROD_WEIGHTS), half * (f @ GK_GAUSS_WEIGHTS)


# ---------------------------------------------------------------- resonances

_KAPPA_PER_NM = math.sqrt(2.0 * M0_KG * EV_TO_J) / HBAR_J_S * 1e-9  # k = this * sqrt(m (E - U)/eV), nm^-1
_ROOT_ITERATIONS = 40
_BROAD_EV = 0.01  # resonances wider than this need no panel edges of their own


def _lead_factor(edge_eV, mass, e):
    """k/m of a lead in nm^-1 per m0 (the reduced units of exact.transfer_matrix); 0 if closed."""
    return _KAPPA_PER_NM * np.sqrt(np.maximum(mass * (e - edge_eV), 0.0)) / mass


def _matching_functions(barrier, e):
    """g1 = a P22 - c P11 and g2 = P21 + a c P12 times exp(logs - ref), and logs.

    For the real stack matrix P on (psi, psi'/m), T = 1/(1 + X) with
    X = exp(2 logs) (g1^2 + g2^2)/(4 a c) (see tunneling._kernels): T peaks
    where g1 and g2 nearly vanish together. Both are smooth in E, so their
    sign changes on a grid locate even resonances far narrower than the grid.
    """
    from solver.tunneling.exact import transfer_matrix

    p11, p12, p21, p22, logs = transfer_matrix(barrier, e)
    a = _lead_factor(barrier.left[0], barrier.left[1], e)
    c = _lead_factor(barrier.right[0], barrier.right[1], e)
    return a * p22 - c * p11, p21 + a * c * p12, logs


def find_resonances(barrier, energy_eV):
    """Candidate transmission resonances located from a sorted energy grid.

    Each sign change of g1 or g2 (see `_matching_functions`) between two grid
    energies where both leads propagate is refined by the Illinois variant of
    regula falsi to a zero z (to 1e-10 relative); the half-width of the peak of
    T near z is estimated as w = |g_other(z)| / |dg/dE(z)|. Two zeros of the
    same function within one grid interval cancel and are missed; such peaks
    are broad compared with the grid and left to the adaptive quadrature.

    Returns
    -------
    (centers_eV, half_widths_eV) : two 1-D arrays.
    """
    e = np.unique(np.asarray(energy_eV, dtype=np.float64).ravel())
    e = e[(e > barrier.left[0]) & (e > barrier.right[0])]
    if e.size < 2:
        return np.empty(0), np.empty(0)
    g1, g2, logs = _matching_functions(barrier, e)
    idx, which = [], []
    for k, g in enumerate((g1, g2)):
        i = np.flatnonzero(np.signbit(g[:-1]) != np.signbit(g[1:]))
        idx.append(i)
        which.append(np.full(i.size, k == 1))
    idx, second = np.concatenate(idx), np.concatenate(which)
    if idx.size == 0:
        return np.empty(0), np.empty(0)

    def pick(r1, r2, sel):
        return np.where(sel, r2, r1)

    lo, hi = e[idx], e[idx + 1]
    ref = logs[idx]
    flo = pick(g1[idx], g2[idx], second)
    fhi = pick(g1[idx + 1], g2[idx + 1], second) * np.exp(logs[idx + 1] - ref)
    side = np.zeros(idx.size, dtype=np.int8)
    for _ in range(_ROOT_ITERATIONS):
        act = np.flatnonzero((hi - lo) > 1e-10 * np.maximum(np.abs(hi), 1.0))
        if act.size == 0:
            break
        l, h, fl, fh = lo[act], hi[act], flo[act], fhi[act]
        denom = fh - fl
        m = (l * fh - h * fl) / np.where(denom != 0.0, denom, 1.0)
        m = np.where((denom != 0.0) & (m > l) & (m < h), m, 0.5 * (l + h))
        r1, r2, lm = _matching_functions(barrier, m)
        fm = pick(r1, r2, second[act]) * np.exp(lm - ref[act])
        right = np.signbit(fm) == np.signbit(fl)  # the zero lies in [m, hi]
        a_r, a_l = act[right], act[~right]
        lo[a_r], flo[a_r] = m[right], fm[right]
        fhi[a_r[side[a_r] == 1]] *= 0.5  # Illinois: halve the stale end
        side[a_r] = 1
        hi[a_l], fhi[a_l] = m[~right], fm[~right]
        flo[a_l[side[a_l] == -1]] *= 0.5
        side[a_l] = -1
    z = 0.5 * (lo + hi)
    h = np.maximum(hi - lo, 1e-9 * np.maximum(np.abs(z), 1.0))
    r1, r2, lz = _matching_functions(barrier, np.concatenate((z, z + h, z - h)))
    n = z.size
    g_here = pick(r1, r2, np.tile(second, 3))
    g_other = pick(r2[:n], r1[:n], second)
    up = g_here[n:2 * n] * np.exp(lz[n:2 * n] - lz[:n])
    dn = g_here[2 * n:] * np.exp(lz[2 * n:] - lz[:n])
    slope = np.abs(up - dn) / (2.0 * h)
    w = np.abs(g_other) / np.where(slope > 0.0, slope, np.inf)
    return z, np.maximum(w, np.maximum(hi - lo, 16.0 * np.spacing(np.maximum(np.abs(z), 1.0))))


def _resonance_edges(centers, widths, lower, upper):
    """Panel edges at z +- w 6^k around each resonance, up to the panel width limit."""
    pts = [centers]
    for z, w in zip(centers, widths):
        n = max(1, int(math.ceil(math.log(max(0.5 * _MAX_PANEL_EV / w, 1.0), _RESONANCE_RATIO))) + 1)
        offsets = w * _RESONANCE_RATIO ** np.arange(-1, n)
        pts.append(z + offsets)
        pts.append(z - offsets)
    p = np.concatenate(pts)
    return p[(p > lower) & (p < upper)]


def tsu_esaki(barrier, fermi_left_eV, fermi_right_eV, temperature_K, *, model="exact", rtol=1e-4,
              supply_mass=None, resonances=True, atol_A_cm2=ATOL_A_CM2) -> TsuEsakiResult:
    """Tsu–Esaki current density with its integration record (see `current_density`)."""
    require_barrier(barrier, "current_density")
    _check_inputs(fermi_left_eV, fermi_right_eV, temperature_K, rtol, supply_mass, atol_A_cm2)
    fermi_left_eV, fermi_right_eV = float(fermi_left_eV), float(fermi_right_eV)
    t_model = _transmission_model(model)
    m_s = barrier.left[1] if supply_mass is None else float(supply_mass)
    scale = TSU_ESAKI_PREFACTOR_A_CM2_EV2 * m_s
    # the absolute tolerance in the units of the sums (eV^2)
    atol = float(atol_A_cm2) / scale
    kT = BOLTZMANN_EV_K * temperature_K
    lower, upper = _energy_limits(barrier, fermi_left_eV, fermi_right_eV, kT)
    if fermi_left_eV == fermi_right_eV or not upper > lower:
        record = ConvergenceRecord(True, 0, (0.0,), "no supply difference or empty energy range", "relative")
        return TsuEsakiResult(0.0, 0.0, (lower, max(lower, upper)), 0, 0, 0, record)

    def t_of_e(e):
        return t_model(barrier, e)

    edges = _initial_edges(barrier, fermi_left_eV, fermi_right_eV, kT, lower, upper)
    a, b = edges[:-1], edges[1:]
    k, g = _panel_sums(t_of_e, a, b, fermi_left_eV, fermi_right_eV, temperature_K)
    evaluations = 15 * a.size
    n_resonances = 0
    if resonances and model == "exact":
        # sign changes of the matching functions on a grid of spacing <= _SCAN_EV
        # (below the level spacing of nm-thick wells)
        centers, widths = find_resonances(barrier, _split_wide(edges, _SCAN_EV))
        # keep the peaks that could matter: T <= 1, so a peak adds at most ~ pi w S(z)
        guess = abs(math.fsum(k))
        if centers.size:
            bound = math.pi * widths * np.abs(supply_function_eV(centers, fermi_left_eV, fermi_right_eV, temperature_K))
            # broad peaks (w >= _BROAD_EV) are left to the adaptive bisection
            keep = (bound > 1e-3 * rtol * guess) & (widths < _BROAD_EV)
            centers, widths = centers[keep], widths[keep]
        n_resonances = int(centers.size)
        if n_resonances:
            extra = _resonance_edges(centers, widths, lower, upper)
            edges = _split_wide(np.unique(np.concatenate((edges, extra))))
            # panels of the first pass that no new edge cuts keep their sums
            na, nb = edges[:-1], edges[1:]
            j = np.clip(np.searchsorted(a, na), 0, a.size - 1)
            same = (a[j] == na) & (b[j] == nb)
            nk, ng = np.empty(na.size), np.empty(na.size)
            nk[same], ng[same] = k[j[same]], g[j[same]]
            if not same.all():
                nk[~same], ng[~same] = _panel_sums(t_of_e, na[~same], nb[~same], fermi_left_eV, fermi_right_eV,
                                                   temperature_K)
            evaluations += 15 * int((~same).sum())
            a, b, k, g = na, nb, nk, ng
    history = []
    for rounds in range(_MAX_ROUNDS + 1):
        err = np.abs(k - g)
        total, err_sum = math.fsum(k), math.fsum(err)
        rel = err_sum / abs(total) if total != 0.0 else (0.0 if err_sum == 0.0 else math.inf)
        history.append(rel)
        target = rtol * abs(total)
        # panels narrower than _MIN_PANEL_REL |E| only resolve the round-off of T(E)
        splittable = (b - a) > _MIN_PANEL_REL * np.maximum(np.abs(a), 1.0)
        last = rounds == _MAX_ROUNDS or a.size > _MAX_PANELS
        # The bisection always works toward rtol |J|. The absolute floor only accepts
        # what it cannot improve: the error left in panels that can still be split
        # is within rtol |J| (the rest sits in panels at the resolution limit of the
        # energy axis, e.g. on a quasi-bound state narrower than ~1e-13 |E|), or the
        # round/panel budget is spent. So a small current keeps the relative accuracy
        # wherever it can be had, and the floor never hides a resolvable error.
        if err_sum <= target:
            criterion = "relative"
        elif err_sum <= target + atol and (last or math.fsum(err[splittable]) <= target):
            criterion = "absolute"
        else:
            criterion = None
        if criterion is not None:
            extra_info = {"panels": int(a.size), "evaluations": int(evaluations), "resonances": n_resonances,
                          "criterion": criterion, "atol_A_cm2": float(atol_A_cm2)}
            message = "converged" if criterion == "relative" else (
                f"converged to the absolute tolerance {atol_A_cm2:g} A/cm^2 (relative error estimate {rel:.3g})")
            record = ConvergenceRecord(True, rounds, tuple(history), message, "relative", extra_info)
            return TsuEsakiResult(scale * total, scale * err_sum, (lower, upper), int(a.size), int(evaluations),
                                  n_resonances, record)
        if last or not splittable.any():
            break
        # bisect the panels that carry more than their share of the allowed error
        share = 0.5 * target / a.size
        split = (err > share) & splittable
        if not split.any():
            split[np.argmax(np.where(splittable, err, -1.0))] = True
        ms = 0.5 * (a[split] + b[split])
        na = np.concatenate((a[split], ms))
        nb = np.concatenate((ms, b[split]))
        nk, ng = _panel_sums(t_of_e, na, nb, fermi_left_eV, fermi_right_eV, temperature_K)
        evaluations += 15 * na.size
        keep = ~split
        a = np.concatenate((a[keep], na))
        b = np.concatenate((b[keep], nb))
        k = np.concatenate((k[keep], nk))
        g = np.concatenate((g[keep], ng))
    record = ConvergenceRecord(False, len(history) - 1, tuple(history),
                               f"energy integral not converged to rtol {rtol:g} + atol {atol_A_cm2:g} A/cm^2 "
                               f"with {a.size} panels", "relative",
                               {"panels": int(a.size), "evaluations": int(evaluations),
                                "current_A_cm2": scale * total, "error_estimate_A_cm2": scale * err_sum,
                                "atol_A_cm2": float(atol_A_cm2)})
    worst = int(np.argmax(np.abs(k - g)))
    raise ConvergenceError(
        f"Tsu–Esaki energy integral did not converge: error estimate {scale * err_sum:.3g} A/cm^2 "
        f"(relative {history[-1]:.3g}) > rtol {rtol:g} x |J| + atol {atol_A_cm2:g} A/cm^2 "
        f"(largest error near energy_eV = {0.5 * (a[worst] + b[worst]):.6g})", record)


def current_density(barrier, fermi_left_eV, fermi_right_eV, temperature_K, *, model="exact", rtol=1e-4,
                    supply_mass=None, resonances=True, atol_A_cm2=ATOL_A_CM2) -> float:
    """Tsu–Esaki tunnelling current density, A/cm^2.

    J = q m_s m0 kT / (2 pi^2 hbar^3) * integral of T(E) ln[(1 + e^{(E_FL-E)/kT}) /
    (1 + e^{(E_FR-E)/kT})] dE, with Fermi–Dirac occupation in both leads.

    Parameters
    ----------
    barrier : solver.tunneling.Barrier
        The profile, leads included.
    fermi_left_eV, fermi_right_eV : float
        Fermi levels of the left and right leads, on the scale of the band edges.
    temperature_K : float
        Temperature, K; >= 0 (0 gives the 0 K supply).
    model : {"exact", "wkb"} or callable, keyword-only
        T(E) from `transmission` (default), from `wkb_transmission`, or any
        callable `(barrier, energy_eV) -> T`.
    rtol : float, keyword-only
        Relative accuracy of the energy integral (default 1e-4).
    atol_A_cm2 : float, keyword-only
        Absolute accuracy, A/cm^2 (default ATOL_A_CM2 = 1e-30, far below any
        measurable or retention-relevant current); the integral has converged
        when its error estimate is <= rtol |J| + atol_A_cm2. 0 asks for rtol alone.
    supply_mass : float or None, keyword-only
        Transverse (supply) mass in m0; None (default) takes the left lead's mass.
    resonances : bool, keyword-only
        Locate sharp resonances before integrating (exact model only; default
        True). False is for diagnostics: narrow peaks may then be missed.

    Returns
    -------
    float
        J in A/cm^2, positive when the net electron flow is from left to right.

    Raises
    ------
    ValueError
        Non-finite Fermi levels, negative temperature, bad rtol or supply_mass.
    ConvergenceError
        The adaptive integration did not reach rtol |J| + atol_A_cm2.
    """
    return tsu_esaki(barrier, fermi_left_eV, fermi_right_eV, temperature_K, model=model, rtol=rtol,
                     supply_mass=supply_mass, resonances=resonances, atol_A_cm2=atol_A_cm2).current_A_cm2


# ---------------------------------------------------------------- sweeps


def _thickness_and_permittivity(barrier, relative_permittivity, where):
    """Layer thicknesses (nm) and relative permittivities (None: all equal) as arrays, checked."""
    require_barrier(barrier, where)
    d = np.asarray(barrier.thickness_nm, dtype=np.float64)
    if relative_permittivity is None:
        return d, np.ones_like(d)
    eps = np.asarray(relative_permittivity, dtype=np.float64)
    if eps.shape != d.shape:
        raise ValueError(f"{where}: relative_permittivity must have one value per layer ({d.size}), got shape "
                         f"{eps.shape}")
    for i, e in enumerate(eps):
        if not (np.isfinite(e) and e > 0):
            raise ValueError(f"{where}: relative_permittivity layer {i}: must be finite and > 0, got {e}")
    return d, eps


def with_bias(barrier, bias_V, relative_permittivity=None):
    """The barrier with a voltage `bias_V` applied to the right lead relative to the left.

    Electron energies on the right shift by -q bias_V. The drop is shared by the
    layers like the voltage of capacitors in series, layer i taking the fraction
    (d_i / eps_i) / sum_j (d_j / eps_j); `relative_permittivity` None means equal
    permittivities (drop proportional to thickness). Sheet charges and the
    semiconductor's band bending are not modelled here (see tunneling.stack for
    a case's stack at a gate voltage).
    """
    d, eps = _thickness_and_permittivity(barrier, relative_permittivity, "with_bias")
    if not np.isfinite(bias_V):
        raise ValueError(f"with_bias: bias_V must be finite, got {bias_V!r}")
    weight = d / eps
    drop = float(bias_V) * weight / weight.sum()
    shift_end = -np.cumsum(drop)
    shift_start = np.concatenate(([0.0], shift_end[:-1]))
    return type(barrier)(
        thickness_nm=barrier.thickness_nm,
        u_start_eV=tuple(np.asarray(barrier.u_start_eV) + shift_start),
        u_end_eV=tuple(np.asarray(barrier.u_end_eV) + shift_end),
        mass=barrier.mass,
        left=barrier.left,
        right=(barrier.right[0] - float(bias_V), barrier.right[1]),
    )


def bias_for_field(barrier, layer, field_MV_cm, relative_permittivity=None):
    """Bias (V) that `with_bias` needs for the field `field_MV_cm` in layer `layer`."""
    d, eps = _thickness_and_permittivity(barrier, relative_permittivity, "bias_for_field")
    if isinstance(layer, bool) or not isinstance(layer, (int, np.integer)) or not 0 <= layer < d.size:
        raise ValueError(f"bias_for_field: layer must be an integer in 0..{d.size - 1}, got {layer!r}")
    # field_i = V (1/eps_i) / sum_j (d_j/eps_j); 1 MV/cm = 0.1 V/nm
    return np.asarray(field_MV_cm, dtype=np.float64) * 0.1 * eps[layer] * np.sum(d / eps)


def current_sweep(barriers, fermi_left_eV, fermi_right_eV, temperature_K, *, model="exact", rtol=1e-4,
                  supply_mass=None, atol_A_cm2=ATOL_A_CM2) -> np.ndarray:
    """Tsu–Esaki current (A/cm^2) for a sequence of barriers, one per point.

    `fermi_left_eV` and `fermi_right_eV` are scalars or one value per barrier.
    Each point is an independent adaptive integration; the transmission of
    all its Gauss–Kronrod nodes is evaluated in one vectorised call.
    """
    barriers = list(barriers)
    n = len(barriers)
    efl, efr = (np.asarray(v, dtype=np.float64) for v in (fermi_left_eV, fermi_right_eV))
    for name, v in (("fermi_left_eV", efl), ("fermi_right_eV", efr)):
        if v.ndim > 1 or (v.ndim == 1 and v.size != n):
            raise ValueError(f"current_sweep: {name} must be a scalar or one value per barrier ({n}), "
                             f"got shape {v.shape}")
    efl, efr = np.broadcast_to(efl, (n,)), np.broadcast_to(efr, (n,))
    out = np.empty(n)
    for i, bar in enumerate(barriers):
        out[i] = tsu_esaki(bar, efl[i], efr[i], temperature_K, model=model, rtol=rtol,
                           supply_mass=supply_mass, atol_A_cm2=atol_A_cm2).current_A_cm2
    return out


@dataclass(frozen=True)
class CurrentVoltage:
    """A J–V sweep: read-only arrays `bias_V`, `current_A_cm2`, `evaluations`
    (transmission evaluations per point), and the `model` and `temperature_K` used."""

    bias_V: np.ndarray
    current_A_cm2: np.ndarray
    evaluations: np.ndarray
    model: str
    temperature_K: float


def current_voltage(barrier_at, bias_V, temperature_K, *, fermi_left_eV=0.0, model="exact", rtol=1e-4,
                    supply_mass=None, atol_A_cm2=ATOL_A_CM2) -> CurrentVoltage:
    """J–V sweep: `barrier_at(bias)` gives the Barrier at each bias of `bias_V`.

    The right lead's Fermi level is fermi_left_eV - bias (a bias raises the right
    electrode's potential), so J > 0 for bias > 0. For a fixed stack use
    `functools.partial(with_bias, barrier, relative_permittivity=eps)` as
    `barrier_at`; for a case's stack, tunneling.stack. `model` as in
    `current_density`; the same biases and integration rules serve the exact
    and the WKB sweeps, so the two compare point by point.
    """
    biases = np.array(bias_V, dtype=np.float64).ravel()
    if not np.all(np.isfinite(biases)):
        raise ValueError("bias_V must be finite")
    name = model if isinstance(model, str) else getattr(model, "__name__", "custom")
    cur = np.empty(biases.size)
    evals = np.empty(biases.size, dtype=np.int64)
    for i, v in enumerate(biases):
        res = tsu_esaki(barrier_at(float(v)), fermi_left_eV, fermi_left_eV - v, temperature_K, model=model,
                        rtol=rtol, supply_mass=supply_mass, atol_A_cm2=atol_A_cm2)
        cur[i], evals[i] = res.current_A_cm2, res.evaluations
    for arr in (biases, cur, evals):
        arr.flags.writeable = False
    return CurrentVoltage(biases, cur, evals, name, float(temperature_K))


def current_field(barrier, layer, field_MV_cm, temperature_K, *, relative_permittivity=None, fermi_left_eV=0.0,
                  model="exact", rtol=1e-4, supply_mass=None, atol_A_cm2=ATOL_A_CM2) -> CurrentVoltage:
    """J–F sweep: the current at the biases that put `field_MV_cm` into layer `layer`.

    The biases follow `bias_for_field` and the profiles `with_bias` (series
    capacitors with `relative_permittivity`, None = equal); the result's
    `bias_V` holds the biases used, in the order of `field_MV_cm`.
    """
    biases = np.atleast_1d(bias_for_field(barrier, layer, field_MV_cm, relative_permittivity))
    return current_voltage(partial(with_bias, barrier, relative_permittivity=relative_permittivity), biases,
                           temperature_K, fermi_left_eV=fermi_left_eV, model=model, rtol=rtol,
                           supply_mass=supply_mass, atol_A_cm2=atol_A_cm2)
