"""numba kernels of the exact transfer-matrix transmission.

State vector w = (psi, psi'/m) in reduced units: lengths in units of
L0 = 1 nm, masses in m0, energies multiplied by C = 2 m0 L0^2 / hbar^2 so that
k^2 = mu (eps - upsilon). Every layer matrix is real with determinant 1 (the
Wronskian of two real solutions is constant), so the product over the stack
is real and T follows from it without complex arithmetic:

    T = 1 / (1 + X),  X = [(a P22 - c P11)^2 + (P21 + a c P12)^2] / (4 a c)

with a = k_L/m_L, c = k_R/m_R. This form uses det P = 1 exactly, so T <= 1
even at a sharp resonance. Each layer's dominant exponential exp(S_i) is kept
out of its matrix and summed as a logarithm; the running product is
renormalised every few layers, so nothing overflows for T far below 1e-300.

Kernels take SI arrays and floats only.

numba's on-disk cache checks only the file that defines a kernel: after an
edit to `_airy.py` that keeps the argument types, touch this file (or clear
`__pycache__`) so the kernels here are recompiled with it.
"""
from __future__ import annotations

import math

import numba
import numpy as np

from solver.tunneling._airy import airy_negative_asymptotic, airy_scaled_kernel
from solver.units import HBAR_J_S, M0_KG

__all__ = ["transfer_product", "transmission_from_product", "transmission_kernel", "FLAT_LAMBDA_D"]

L0_M = 1e-9
# 2 m0 L0^2 / hbar^2 in 1/J: E_J * REDUCED_PER_J is an energy in units of hbar^2/(2 m0 L0^2)
REDUCED_PER_J = 2.0 * M0_KG * L0_M * L0_M / (HBAR_J_S * HBAR_J_S)

# A linear layer with |lambda| d < FLAT_LAMBDA_D is treated as flat at its
# midpoint potential. Midpoint slicing integrates the (linear) generator of
# the layer exactly; the leading error is the second Magnus term,
# (lambda d)^3/12 diag(1, -1), i.e. a relative error below 7e-13 here. The Airy
# form loses about eps/(lambda d) (< 6e-13) to cancellation in that limit,
# so the switch sits where the two errors are equal and both negligible.
FLAT_LAMBDA_D = 2e-4
_RENORM_EVERY = 8
_PI = math.pi


@numba.njit(cache=True, error_model="numpy")
def _flat_layer(q, mu, d):
    """Matrix of a flat layer, q = mu (upsilon - eps), and its log scale."""
    if q > 0.0:
        kappa = math.sqrt(q)
        x = kappa * d
        em = math.expm1(-2.0 * x)          # exp(-2x) - 1, accurate for small x
        ch = 1.0 + 0.5 * em                # cosh(x) exp(-x)
        sh = -0.5 * em                     # sinh(x) exp(-x)
        shx = sh / x if x > 1e-8 else 1.0 - x
        return ch, mu * d * shx, q / mu * d * shx, ch, x
    if q < 0.0:
        k = math.sqrt(-q)
        t = k * d
        c = math.cos(t)
        s = math.sin(t)
        st = s / t if t > 1e-8 else 1.0
        return c, mu * d * st, q / mu * d * st, c, 0.0
    return 1.0, mu * d, 0.0, 1.0, 0.0


# Constants of the branch-free flat-layer evaluation (Cody-Waite splits: the
# high parts have trailing zero bits, so n * HI is exact for the n that occur).
_LN2_HI = 6.93147180369123816490e-01
_LN2_LO = 1.90821492927058770002e-10
_INV_LN2 = 1.44269504088896338700e+00
_PIO2_1 = 1.57079632673412561417e+00
_PIO2_2 = 6.07710050650619224932e-11
_PIO2_3 = 2.02226624879595063154e-21
_TWO_OVER_PI = 6.36619772367581382433e-01
# Above this phase k d the three-part reduction above loses accuracy; such
# layers use the library sin/cos instead (see transfer_product).
POLY_PHASE_MAX = 1.0e5
# exp(-2x) < 4.3e-18 for x > 20: cosh and sinh are exp(x)/2 to round-off
_EXP_CUT = 40.0


@numba.njit(cache=True, error_model="numpy", inline="always")
def _flat_layer_poly(q, mu, d):
    """Branch-free twin of `_flat_layer` (polynomials instead of libm calls).

    Both the evanescent (q > 0) and the propagating (q < 0) forms are
    evaluated and one is selected, so the loop over energies vectorises.
    exp(-y), 0 <= y <= 40: y = n ln2 + r, |r| <= ln2/2, Taylor series of
    exp(-r) - 1 to degree 14 (truncation < 5e-18), 2^-n from the bits of n.
    sin, cos: t = n pi/2 + r, |r| <= pi/4, Taylor to degree 17/18 (< 2e-17).
    """
    r = math.sqrt(abs(q)) * d
    # -- evanescent: em = exp(-2r) - 1
    y = min(2.0 * r, _EXP_CUT)
    n = math.floor(y * _INV_LN2 + 0.5)
    t = (y - n * _LN2_HI) - n * _LN2_LO
    # exp(-t) - 1 = -t (1 - t/2 (1 - t/3 (1 - ... )))
    p = 1.0 - t / 14.0
    p = 1.0 - t / 13.0 * p
    p = 1.0 - t / 12.0 * p
    p = 1.0 - t / 11.0 * p
    p = 1.0 - t / 10.0 * p
    p = 1.0 - t / 9.0 * p
    p = 1.0 - t / 8.0 * p
    p = 1.0 - t / 7.0 * p
    p = 1.0 - t / 6.0 * p
    p = 1.0 - t / 5.0 * p
    p = 1.0 - t / 4.0 * p
    p = 1.0 - t / 3.0 * p
    p = 1.0 - t / 2.0 * p
    em_t = -t * p
    f = 1.0
    m = n
    h = math.floor(m * 0.5)
    f *= 1.0 - 0.5 * (m - 2.0 * h)
    m = h
    h = math.floor(m * 0.5)
    f *= 1.0 - 0.75 * (m - 2.0 * h)
    m = h
    h = math.floor(m * 0.5)
    f *= 1.0 - 0.9375 * (m - 2.0 * h)
    m = h
    h = math.floor(m * 0.5)
    f *= 1.0 - 0.99609375 * (m - 2.0 * h)
    m = h
    h = math.floor(m * 0.5)
    f *= 1.0 - (1.0 - 2.0 ** -16) * (m - 2.0 * h)
    m = h
    h = math.floor(m * 0.5)
    f *= 1.0 - (1.0 - 2.0 ** -32) * (m - 2.0 * h)
    em = em_t if n == 0.0 else f * (1.0 + em_t) - 1.0
    ch = 1.0 + 0.5 * em
    shx = -0.5 * em / r if r > 1e-8 else 1.0 - r
    # -- propagating: cos r, sin r / r
    k = math.floor(r * _TWO_OVER_PI + 0.5)
    w = ((r - k * _PIO2_1) - k * _PIO2_2) - k * _PIO2_3
    w2 = w * w
    sp = 1.0 - w2 / (16.0 * 17.0)
    sp = 1.0 - w2 / (14.0 * 15.0) * sp
    sp = 1.0 - w2 / (12.0 * 13.0) * sp
    sp = 1.0 - w2 / (10.0 * 11.0) * sp
    sp = 1.0 - w2 / (8.0 * 9.0) * sp
    sp = 1.0 - w2 / (6.0 * 7.0) * sp
    sp = 1.0 - w2 / (4.0 * 5.0) * sp
    sp = 1.0 - w2 / (2.0 * 3.0) * sp
    sw = w * sp
    cp = 1.0 - w2 / (17.0 * 18.0)
    cp = 1.0 - w2 / (15.0 * 16.0) * cp
    cp = 1.0 - w2 / (13.0 * 14.0) * cp
    cp = 1.0 - w2 / (11.0 * 12.0) * cp
    cp = 1.0 - w2 / (9.0 * 10.0) * cp
    cp = 1.0 - w2 / (7.0 * 8.0) * cp
    cp = 1.0 - w2 / (5.0 * 6.0) * cp
    cp = 1.0 - w2 / (3.0 * 4.0) * cp
    cp = 1.0 - w2 / (1.0 * 2.0) * cp
    cw = cp
    quad = k - 4.0 * math.floor(k * 0.25)
    odd = quad == 1.0 or quad == 3.0
    s1 = cw if odd else sw
    c1 = sw if odd else cw
    sin_r = -s1 if quad >= 2.0 else s1
    cos_r = -c1 if (quad == 1.0 or quad == 2.0) else c1
    st = sin_r / r if r > 1e-8 else 1.0
    evan = q > 0.0
    diag = ch if evan else cos_r
    g = shx if evan else st
    return diag, mu * d * g, q / mu * d * g, diag, (r if evan else 0.0)


@numba.njit(cache=True, error_model="numpy")
def _zeta_difference(z0, z1, lam_d):
    """2/3 (z1^(3/2) - z0^(3/2)) for z0, z1 >= 0 without cancellation, z1 - z0 = lam_d."""
    r0 = math.sqrt(z0)
    r1 = math.sqrt(z1)
    den = r0 + r1
    if den == 0.0:
        return 0.0
    return (2.0 / 3.0) * lam_d * (z0 + r0 * r1 + z1) / den


@numba.njit(cache=True, error_model="numpy")
def _sloped_layer(z0, z1, lam, mu, d, anchors, u, v):
    """Matrix of a linear layer from the Airy functions at its two ends, and its log scale.

    psi = alpha Ai(z) + beta Bi(z), z = lam (U - E)/s, dz/dx = lam; the
    matrix maps (psi, psi'/m) at the start to the end:
    M = F(z1) F(z0)^-1, F = [[Ai, Bi], [lam/m Ai', lam/m Bi']], det F = lam/(pi m).
    """
    lam_d = lam * d
    if z0 < -10.0 and z1 < -10.0:
        # oscillatory at both ends: modulus/phase form with the phase
        # difference computed directly, so near-flat layers (huge |z|) stay exact
        x0 = -z0
        x1 = -z1
        zeta0 = (2.0 / 3.0) * x0 * math.sqrt(x0)
        zeta1 = (2.0 / 3.0) * x1 * math.sqrt(x1)
        dz = _zeta_difference(x0, x1, -lam_d)          # zeta1 - zeta0
        P0, Q0, Pv0, Qv0 = airy_negative_asymptotic(x0, zeta0, u, v)
        P1, Q1, Pv1, Qv1 = airy_negative_asymptotic(x1, zeta1, u, v)
        c = math.cos(dz)
        s = math.sin(dz)
        q0 = math.sqrt(math.sqrt(x0))
        q1 = math.sqrt(math.sqrt(x1))
        # Re/Im of products of (P + iQ)-type factors with exp(+-i dz)
        # m11 = x1^-1/4 x0^1/4 Re[(Pv0 + iQv0)(P1 - iQ1) e^{i dz}]
        ar = Pv0 * P1 + Qv0 * Q1
        ai_ = Qv0 * P1 - Pv0 * Q1
        m11 = q0 / q1 * (ar * c - ai_ * s)
        # m12 = (mu/lam)(x1 x0)^-1/4 Im[(P1 + iQ1)(P0 - iQ0) e^{-i dz}]
        br = P1 * P0 + Q1 * Q0
        bi_ = Q1 * P0 - P1 * Q0
        m12 = mu / lam / (q0 * q1) * (bi_ * c - br * s)
        # m21 = (lam/mu)(x1 x0)^1/4 Im[(Pv0 + iQv0)(Pv1 - iQv1) e^{i dz}]
        cr = Pv0 * Pv1 + Qv0 * Qv1
        ci = Qv0 * Pv1 - Pv0 * Qv1
        m21 = lam / mu * (q0 * q1) * (ci * c + cr * s)
        # m22 = x1^1/4 x0^-1/4 Re[(P0 + iQ0)(Pv1 - iQv1) e^{i dz}]
        dr = P0 * Pv1 + Q0 * Qv1
        di = Q0 * Pv1 - P0 * Qv1
        m22 = q1 / q0 * (dr * c - di * s)
        return m11, m12, m21, m22, 0.0
    ai0, aip0, bi0, bip0, eta0 = airy_scaled_kernel(z0, anchors, u, v)
    ai1, aip1, bi1, bip1, eta1 = airy_scaled_kernel(z1, anchors, u, v)
    # Ai = ai exp(-eta), Bi = bi exp(eta); delta = eta1 - eta0 without cancellation
    if z0 > 0.0 and z1 > 0.0:
        delta = _zeta_difference(z0, z1, lam_d)
    else:
        delta = eta1 - eta0                            # at most one of them is nonzero
    # products Ai(z1) Bi(z0)-like carry exp(-delta), Bi(z1) Ai(z0)-like exp(+delta);
    # exp(|delta|) is taken out, so the smaller kind keeps exp(-2 |delta|)
    g = math.exp(-2.0 * abs(delta))
    g_dn = g if delta >= 0.0 else 1.0
    g_up = 1.0 if delta >= 0.0 else g
    a = mu / lam
    b = lam / mu
    m11 = _PI * (ai1 * bip0 * g_dn - bi1 * aip0 * g_up)
    m12 = _PI * a * (bi1 * ai0 * g_up - ai1 * bi0 * g_dn)
    m21 = _PI * b * (aip1 * bip0 * g_dn - bip1 * aip0 * g_up)
    m22 = _PI * (bip1 * ai0 * g_up - aip1 * bi0 * g_dn)
    return m11, m12, m21, m22, abs(delta)


@numba.njit(cache=True, error_model="numpy")
def _renormalise(p11, p12, p21, p22, logs):
    for j in range(p11.shape[0]):
        big = max(max(abs(p11[j]), abs(p12[j])), max(abs(p21[j]), abs(p22[j])))
        if big > 0.0 and big < math.inf:
            inv = 1.0 / big
            p11[j] *= inv
            p12[j] *= inv
            p21[j] *= inv
            p22[j] *= inv
            logs[j] += math.log(big)


_BLOCK = 512   # energies per block: the running products stay in cache across layers


@numba.njit(cache=True, error_model="numpy", inline="always")
def _update(p11, p12, p21, p22, logs, j, m11, m12, m21, m22, sc):
    a11 = p11[j]
    a21 = p21[j]
    a12 = p12[j]
    a22 = p22[j]
    p11[j] = m11 * a11 + m12 * a21
    p12[j] = m11 * a12 + m12 * a22
    p21[j] = m21 * a11 + m22 * a21
    p22[j] = m21 * a12 + m22 * a22
    logs[j] += sc


@numba.njit(cache=True, error_model="numpy")
def _apply_flat_poly(eps, p11, p12, p21, p22, logs, mu, d, y):
    """P <- M P for one flat layer over a block of energies (a separate function
    so that LLVM sees a simple loop and vectorises it)."""
    for j in range(eps.shape[0]):
        m11, m12, m21, m22, sc = _flat_layer_poly(mu * (y - eps[j]), mu, d)
        _update(p11, p12, p21, p22, logs, j, m11, m12, m21, m22, sc)


@numba.njit(cache=True, error_model="numpy")
def transfer_product(energy_J, thickness_m, u_start_J, u_end_J, mass_kg, anchors, u, v):
    """Real transfer matrix of the whole stack at each energy.

    Returns (p11, p12, p21, p22, logs): the product M_N ... M_1 acting on
    (psi, psi'/m) in reduced units equals exp(logs) [[p11, p12], [p21, p22]].
    Energies are processed in blocks; inside a block the layers form the
    outer loop and the energies the inner, vectorised one.
    """
    n = energy_J.shape[0]
    n_layers = thickness_m.shape[0]
    eps = energy_J * REDUCED_PER_J
    p11 = np.ones(n)
    p12 = np.zeros(n)
    p21 = np.zeros(n)
    p22 = np.ones(n)
    logs = np.zeros(n)
    if n == 0:
        return p11, p12, p21, p22, logs
    eps_min = eps.min()
    eps_max = eps.max()
    # per-layer constants
    d_ = np.empty(n_layers)
    mu_ = np.empty(n_layers)
    y0_ = np.empty(n_layers)
    y1_ = np.empty(n_layers)
    lam_ = np.empty(n_layers)
    kind = np.empty(n_layers, dtype=np.int64)      # 0 flat (poly), 1 flat (libm), 2 linear (Airy)
    for i in range(n_layers):
        d = thickness_m[i] / L0_M
        mu = mass_kg[i] / M0_KG
        y0 = u_start_J[i] * REDUCED_PER_J
        y1 = u_end_J[i] * REDUCED_PER_J
        ms = mu * (y1 - y0) / d                    # lambda^3 = 2 m s / hbar^2, lambda with the sign of s
        lam = math.copysign(abs(ms) ** (1.0 / 3.0), ms)
        d_[i] = d
        mu_[i] = mu
        y0_[i] = y0
        y1_[i] = y1
        lam_[i] = lam
        if abs(lam) * d < FLAT_LAMBDA_D:
            ym = 0.5 * (y0 + y1)
            y0_[i] = ym
            qmax = mu * max(abs(ym - eps_min), abs(ym - eps_max))
            kind[i] = 0 if math.sqrt(qmax) * d < POLY_PHASE_MAX else 1
        else:
            kind[i] = 2
    for b0 in range(0, n, _BLOCK):
        b1 = min(n, b0 + _BLOCK)
        for i in range(n_layers):
            d = d_[i]
            mu = mu_[i]
            y0 = y0_[i]
            if kind[i] == 0:
                _apply_flat_poly(eps[b0:b1], p11[b0:b1], p12[b0:b1], p21[b0:b1], p22[b0:b1], logs[b0:b1],
                                 mu, d, y0)
            elif kind[i] == 1:
                for j in range(b0, b1):
                    m11, m12, m21, m22, sc = _flat_layer(mu * (y0 - eps[j]), mu, d)
                    _update(p11, p12, p21, p22, logs, j, m11, m12, m21, m22, sc)
            else:
                y1 = y1_[i]
                lam = lam_[i]
                inv_lam2 = 1.0 / (lam * lam)
                for j in range(b0, b1):
                    z0 = mu * (y0 - eps[j]) * inv_lam2
                    z1 = mu * (y1 - eps[j]) * inv_lam2
                    m11, m12, m21, m22, sc = _sloped_layer(z0, z1, lam, mu, d, anchors, u, v)
                    _update(p11, p12, p21, p22, logs, j, m11, m12, m21, m22, sc)
            if (i + 1) % _RENORM_EVERY == 0:
                _renormalise(p11[b0:b1], p12[b0:b1], p21[b0:b1], p22[b0:b1], logs[b0:b1])
        _renormalise(p11[b0:b1], p12[b0:b1], p21[b0:b1], p22[b0:b1], logs[b0:b1])
    return p11, p12, p21, p22, logs


@numba.njit(cache=True, error_model="numpy")
def transmission_from_product(energy_J, p11, p12, p21, p22, logs, lead_edge_J, lead_mass_kg):
    """T = (k_R/m_R)/(k_L/m_L) |t|^2 from the stack product; 0 without propagating lead states."""
    n = energy_J.shape[0]
    out = np.empty(n)
    muL = lead_mass_kg[0] / M0_KG
    muR = lead_mass_kg[1] / M0_KG
    yL = lead_edge_J[0] * REDUCED_PER_J
    yR = lead_edge_J[1] * REDUCED_PER_J
    for j in range(n):
        e = energy_J[j] * REDUCED_PER_J
        kL2 = muL * (e - yL)
        kR2 = muR * (e - yR)
        if not (kL2 > 0.0 and kR2 > 0.0):
            out[j] = 0.0
            continue
        a = math.sqrt(kL2) / muL
        c = math.sqrt(kR2) / muR
        r1 = a * p22[j] - c * p11[j]
        r2 = p21[j] + a * c * p12[j]
        dn = r1 * r1 + r2 * r2
        if dn == 0.0:
            out[j] = 1.0
            continue
        # T = 1/(1 + X), X = exp(L); log1p form keeps T exact from 1 down to 1e-300
        big = 2.0 * logs[j] + math.log(dn / (4.0 * a * c))
        if big > 0.0:
            out[j] = math.exp(-big - math.log1p(math.exp(-big)))
        else:
            out[j] = 1.0 / (1.0 + math.exp(big))
    return out


@numba.njit(cache=True, error_model="numpy")
def transmission_kernel(energy_J, thickness_m, u_start_J, u_end_J, mass_kg, lead_edge_J, lead_mass_kg,
                        anchors, u, v):
    """T at each energy in one call; returns (T, status, index).

    status 0: all fine; 1: energy_J[index] is not finite (T not computed);
    2: T[index] came out non-finite or outside [0, 1] (a kernel failure, never to be hidden).
    """
    for j in range(energy_J.shape[0]):
        if not math.isfinite(energy_J[j]):
            return np.empty(0), 1, j
    p11, p12, p21, p22, logs = transfer_product(energy_J, thickness_m, u_start_J, u_end_J, mass_kg, anchors, u, v)
    t = transmission_from_product(energy_J, p11, p12, p21, p22, logs, lead_edge_J, lead_mass_kg)
    for j in range(t.shape[0]):
        if not (t[j] >= 0.0 and t[j] <= 1.0):
            return t, 2, j
    return t, 0, -1
