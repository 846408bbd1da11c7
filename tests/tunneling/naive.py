"""Slow, plainly written twins of the transmission kernels (test references).

Straight numpy with complex 2x2 matrices on (psi, psi'/m) in SI units:

* `transmission`: flat layers with complex k, linear layers with
  scipy.special.airy / airye (the exponential scales multiplied back in).
  Valid while the matrix entries stay below ~1e300 (T above ~1e-300).
* `staircase_transmission`: every layer cut into `n_slices` flat slices at the
  midpoint potential, the running product renormalised after every slice and
  the scale kept as a logarithm, so T far below 1e-300 is representable.
  `staircase_log_transmission` returns ln T.

Nothing here is shared with solver.tunneling except the Barrier type.
"""
from __future__ import annotations

import numpy as np
import scipy.special as sp
from scipy.constants import e as Q_C
from scipy.constants import hbar as HBAR
from scipy.constants import m_e as M0


def _lead_factors(barrier, e_J):
    (uL, mL), (uR, mR) = barrier.left, barrier.right
    kL2 = 2 * mL * M0 * (e_J - uL * Q_C) / HBAR**2
    kR2 = 2 * mR * M0 * (e_J - uR * Q_C) / HBAR**2
    ok = (kL2 > 0) & (kR2 > 0)
    a = np.sqrt(np.where(ok, kL2, 1.0)) / (mL * M0)
    c = np.sqrt(np.where(ok, kR2, 1.0)) / (mR * M0)
    return ok, a, c


def _flat_matrix(e_J, u_J, m_kg, d_m):
    k = np.sqrt((2 * m_kg * (e_J - u_J)).astype(complex)) / HBAR
    k = np.where(k == 0, 1e-30, k)
    c, s = np.cos(k * d_m), np.sin(k * d_m)
    return np.array([[c, m_kg / k * s], [-k / m_kg * s, c]])


def _airy_values(z):
    """Ai, Ai', Bi, Bi' and zeta_plus with Ai, Ai' scaled by exp(zeta_plus), Bi, Bi' by exp(-zeta_plus)."""
    ai, aip, bi, bip = sp.airy(z)
    eai, eaip, ebi, ebip = sp.airye(np.abs(z))
    pos = z > 0
    zeta = np.where(pos, 2.0 / 3.0 * np.abs(z) ** 1.5, 0.0)
    return (np.where(pos, eai, ai), np.where(pos, eaip, aip), np.where(pos, ebi, bi),
            np.where(pos, ebip, bip), zeta)


def _sloped_matrix(e_J, u0_J, u1_J, m_kg, d_m):
    s = (u1_J - u0_J) / d_m
    lam = np.cbrt(2 * m_kg * s / HBAR**2)
    z0 = lam * (u0_J - e_J) / s
    z1 = lam * (u1_J - e_J) / s
    a0, ap0, b0, bp0, x0 = _airy_values(z0)
    a1, ap1, b1, bp1, x1 = _airy_values(z1)
    up, dn = np.exp(x1 - x0), np.exp(x0 - x1)     # Bi1*Ai0 ~ up, Ai1*Bi0 ~ dn
    f = lam / m_kg
    m11 = np.pi * (a1 * bp0 * dn - b1 * ap0 * up)
    m12 = np.pi / f * (b1 * a0 * up - a1 * b0 * dn)
    m21 = np.pi * f * (ap1 * bp0 * dn - bp1 * ap0 * up)
    m22 = np.pi * (bp1 * a0 * up - ap1 * b0 * dn)
    return np.array([[m11, m12], [m21, m22]], dtype=complex)


def _t_from_matrix(M, a, c):
    den = a * M[1, 1] + c * M[0, 0] + 1j * (M[1, 0] - a * c * M[0, 1])
    return 4 * a * c / np.abs(den) ** 2


def transmission(barrier, energy_eV):
    """Exact T with complex matrices and scipy's Airy functions (no log scaling)."""
    e_J = np.atleast_1d(np.asarray(energy_eV, dtype=float)) * Q_C
    M = np.array([[np.ones_like(e_J), np.zeros_like(e_J)], [np.zeros_like(e_J), np.ones_like(e_J)]], dtype=complex)
    for d, u0, u1, m in zip(barrier.thickness_nm, barrier.u_start_eV, barrier.u_end_eV, barrier.mass):
        if u0 == u1:
            L = _flat_matrix(e_J, u0 * Q_C, m * M0, d * 1e-9)
        else:
            L = _sloped_matrix(e_J, u0 * Q_C, u1 * Q_C, m * M0, d * 1e-9)
        M = np.einsum("ijn,jkn->ikn", L, M)
    ok, a, c = _lead_factors(barrier, e_J)
    return np.where(ok, _t_from_matrix(M, a, c), 0.0)


def staircase_log_transmission(barrier, energy_eV, n_slices):
    """ln T of the midpoint staircase with `n_slices` slices per layer (-inf where T = 0)."""
    e_J = np.atleast_1d(np.asarray(energy_eV, dtype=float)) * Q_C
    n = e_J.size
    M = np.array([[np.ones(n), np.zeros(n)], [np.zeros(n), np.ones(n)]], dtype=complex)
    log_scale = np.zeros(n)
    for d, u0, u1, m in zip(barrier.thickness_nm, barrier.u_start_eV, barrier.u_end_eV, barrier.mass):
        h = d / n_slices
        for k in range(n_slices):
            u = u0 + (u1 - u0) * (k + 0.5) / n_slices
            M = np.einsum("ijn,jkn->ikn", _flat_matrix(e_J, u * Q_C, m * M0, h * 1e-9), M)
            big = np.abs(M).max(axis=(0, 1))
            M = M / big
            log_scale += np.log(big)
    ok, a, c = _lead_factors(barrier, e_J)
    den = a * M[1, 1] + c * M[0, 0] + 1j * (M[1, 0] - a * c * M[0, 1])
    with np.errstate(divide="ignore"):
        logT = np.log(4 * a * c) - 2 * np.log(np.abs(den)) - 2 * log_scale
    return np.where(ok, logT, -np.inf)


def staircase_transmission(barrier, energy_eV, n_slices):
    """T of the midpoint staircase with `n_slices` slices per layer."""
    return np.exp(staircase_log_transmission(barrier, energy_eV, n_slices))
