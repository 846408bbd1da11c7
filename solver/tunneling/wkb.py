"""WKB transmission through a piecewise-linear multilayer barrier.

    T_WKB(E) = exp(-2 * sum over layers of the integral of kappa dx),
    kappa(x) = sqrt(2 m_i m0 (U(x) - E)) / hbar   where U(x) > E,

each layer i with its own mass m_i. Inside a layer U is linear, so the
turning points are found exactly and the integral of sqrt(U - E) over the
classically forbidden part of the layer has a closed form. With a = U_end - E,
b = U_start - E (eV) and A = max(a, 0), B = max(b, 0):

    integral of sqrt(U - E) dx = (2/3) d_f (A + sqrt(A B) + B) / (sqrt(A) + sqrt(B)),

d_f being the forbidden length of the layer (d if a, b > 0; d * max(a, b)/|a - b|
if the layer holds a turning point; 0 if a, b <= 0). This is the usual
(2/3)(A^{3/2} - B^{3/2})/slope with the difference of the 3/2 powers divided
out, so that a flat layer (a = b, giving d sqrt(a)) and nearly flat layers
need no special case and lose no digits to cancellation.

References
----------
Physics-data sheet Sec. 6 item 3 (WKB form); any quantum-mechanics text,
e.g. D. J. Griffiths, Introduction to Quantum Mechanics, 2nd ed., Sec. 8.2.
"""
from __future__ import annotations

import numpy as np

from solver.tunneling.barrier import as_energy_eV, require_barrier
from solver.units import EV_TO_J, HBAR_J_S, M0_KG, NM_TO_M

__all__ = ["wkb_transmission", "wkb_exponent"]

# sqrt(2 m0 q) / hbar: kappa = _KAPPA_PER_M * sqrt(m (U - E)/eV) (5.12317 nm^-1,
# physics-data sheet Sec. 1)
_KAPPA_PER_M = np.sqrt(2.0 * M0_KG * EV_TO_J) / HBAR_J_S


def _as_energy(energy_eV, where) -> np.ndarray:
    e = as_energy_eV(energy_eV, where)
    bad = np.flatnonzero(~np.isfinite(e))
    if bad.size:
        raise ValueError(f"{where}: energy_eV must be finite, got energy_eV[{bad[0]}] = {e.ravel()[bad[0]]}")
    return e


def _layer_terms(barrier):
    """(thickness_m, u_start_eV, u_end_eV, sqrt(mass)) as float arrays."""
    return (
        np.asarray(barrier.thickness_nm, dtype=np.float64) * NM_TO_M,
        np.asarray(barrier.u_start_eV, dtype=np.float64),
        np.asarray(barrier.u_end_eV, dtype=np.float64),
        np.sqrt(np.asarray(barrier.mass, dtype=np.float64)),
    )


def wkb_exponent(barrier, energy_eV) -> np.ndarray:
    """The WKB exponent 2 * integral of kappa dx over the forbidden parts.

    Dimensionless, >= 0, same shape as `energy_eV` (absolute scale of the band
    edges). `wkb_transmission` is exp(-exponent) where both leads propagate;
    the exponent itself stays finite where T would underflow (thick barriers).
    The leads do not enter: only the layers are integrated.
    """
    require_barrier(barrier, "wkb_exponent")
    e = _as_energy(energy_eV, "wkb_exponent")
    d_m, u0, u1, sqrt_m = _layer_terms(barrier)
    flat = e.reshape(-1, 1)
    b = u0[None, :] - flat  # U - E at the start of each layer, eV
    a = u1[None, :] - flat  # ... at the end
    A = np.maximum(a, 0.0)
    B = np.maximum(b, 0.0)
    both = (a > 0.0) & (b > 0.0)
    some = (A + B) > 0.0
    span = np.abs(a - b)
    # forbidden fraction of the layer: 1, or the part beyond the turning point
    frac = np.where(both, 1.0, np.divide(A + B, span, out=np.zeros_like(span), where=some & ~both))
    rootA, rootB = np.sqrt(A), np.sqrt(B)
    denom = rootA + rootB
    mean = np.divide(A + rootA * rootB + B, denom, out=np.zeros_like(denom), where=some)
    integral = (2.0 / 3.0) * (d_m[None, :] * frac) * mean  # m sqrt(eV)
    exponent = 2.0 * _KAPPA_PER_M * (integral * sqrt_m[None, :]).sum(axis=1)
    return exponent.reshape(e.shape)


def wkb_transmission(barrier, energy_eV) -> np.ndarray:
    """WKB transmission probability, exp(-2 * integral of kappa dx).

    Parameters
    ----------
    barrier : solver.tunneling.Barrier
        The piecewise-linear profile; each layer uses its own mass.
    energy_eV : float or array_like
        Longitudinal energy on the absolute scale of the band edges, eV.

    Returns
    -------
    numpy.ndarray
        Same shape as `energy_eV` (a scalar gives shape ()), values in [0, 1].
        0 where either lead has no propagating state (E <= its band edge);
        1 where no part of the barrier is classically forbidden.

    Raises
    ------
    ValueError
        If `barrier` is not a Barrier or `energy_eV` holds NaN or infinite values.

    Notes
    -----
    The WKB form has no prefactor: it misses the reflection at abrupt
    interfaces and the interference above barriers, which the exact
    `transmission` keeps. Its logarithm approaches the exact one for thick,
    opaque barriers (relative difference ~ 1/exponent).
    """
    require_barrier(barrier, "wkb_transmission")
    e = _as_energy(energy_eV, "wkb_transmission")
    exponent = wkb_exponent(barrier, e)
    open_leads = (e > barrier.left[0]) & (e > barrier.right[0])
    return np.where(open_leads, np.exp(-exponent), 0.0)
