"""Airy functions Ai, Ai', Bi, Bi' of a real argument, written for numba.

Three regions:

* |z| <= 10: Taylor series of y'' = z y about the nearest of 161 anchors
  (spacing 1/8, |h| <= 1/16, degree 12; the n-th term is about
  (sqrt(|z|) h)^n / n! <= 0.2^n / n!, so truncation stays below 1e-18 relative).
  Coefficients come from the recurrence c_(n+2) = (z0 c_n + c_(n-1))/((n+1)(n+2)).
  The anchor values are computed once at import with the Maclaurin series in
  80-digit decimal arithmetic (also the Taylor coefficients); the constants Ai(0), -Ai'(0) come from the
  same computation (Wronskian of the Maclaurin pair with the asymptotic Ai(20),
  accurate to about 1e-50), so nothing is taken from a table by hand.
* z > 10: the asymptotic series of Ai, Ai', Bi, Bi' with the factors
  exp(-+zeta), zeta = 2/3 z^(3/2), kept out (returned scaled).
* z < -10: the modulus/phase form of the oscillatory asymptotic series; the
  large phase zeta is handed to the caller separately so that the transfer
  matrix of a near-flat layer can use phase differences only.

At |z| = 10, zeta = 21.08 and the optimally truncated asymptotic series are
accurate to about exp(-2 zeta) = 5e-19 relative, so the switch costs nothing.

References
----------
.. [1] M. Abramowitz and I. A. Stegun, Handbook of Mathematical Functions
       (1964), Sec. 10.4: Maclaurin series 10.4.2-10.4.3, asymptotic series
       10.4.58-10.4.67 (from memory; checked against scipy.special.airy in
       tests/tunneling/test_airy.py).
"""
from __future__ import annotations

import math
from decimal import Decimal, localcontext

import numba
import numpy as np

__all__ = ["airy", "airy_scaled", "airy_scaled_kernel", "airy_negative_asymptotic", "ZETA_SWITCH_Z"]

ZETA_SWITCH_Z = 10.0          # |z| beyond which the asymptotic series are used
_ANCHORS_PER_UNIT = 8
_N_ANCHORS = 161              # anchors at -10, -9.875, ..., 10
_N_TAYLOR = 13
_N_ASYM = 40                  # at zeta >= 21 the terms fall below 1e-17 before k = 30

_PI_DIGITS = "3.14159265358979323846264338327950288419716939937510582097494459"


def _asymptotic_coefficients(n):
    """u_k, v_k of A&S 10.4.58-10.4.59 (float64)."""
    u = np.empty(n)
    v = np.empty(n)
    u[0] = v[0] = 1.0
    for k in range(1, n):
        u[k] = u[k - 1] * (6 * k - 5) * (6 * k - 3) * (6 * k - 1) / ((2 * k - 1) * 216.0 * k)
        v[k] = -u[k] * (6 * k + 1) / (6 * k - 1)
    return u, v


def _anchor_table():
    """Ai, Ai', Bi, Bi' at the anchors, 80-digit Maclaurin series, rounded to float64."""
    with localcontext() as ctx:
        ctx.prec = 80
        pi = Decimal(_PI_DIGITS)
        tiny = Decimal(10) ** -75

        def maclaurin(z):
            # f = sum a_k z^3k, g = sum b_k z^(3k+1)   (A&S 10.4.2-10.4.3)
            f = fp = g = gp = Decimal(0)
            a = Decimal(1)
            b = Decimal(1)
            k = 0
            z3 = z * z * z
            zp3k = Decimal(1)          # z^(3k)
            while True:
                tf = a * zp3k
                tg = b * zp3k * z
                f += tf
                g += tg
                if k > 0:
                    fp += a * 3 * k * zp3k / z
                gp += b * (3 * k + 1) * zp3k
                if k > 2 and abs(tf) + abs(tg) < tiny * (abs(f) + abs(g)):
                    break
                k += 1
                a = a / ((3 * k - 1) * (3 * k))
                b = b / ((3 * k) * (3 * k + 1))
                zp3k *= z3
            return f, fp, g, gp

        # Ai(20), Ai'(20) from the asymptotic series (error ~ exp(-2 zeta) ~ 1e-52)
        z = Decimal(20)
        zeta = Decimal(2) / 3 * z * z.sqrt()
        su = sv = Decimal(0)
        u = v = Decimal(1)
        term_prev = None
        k = 0
        while True:
            tu = u / zeta ** k
            if term_prev is not None and abs(tu) > term_prev:
                break
            su += (-1) ** k * tu
            sv += (-1) ** k * v / zeta ** k
            term_prev = abs(tu)
            if term_prev < tiny:
                break
            k += 1
            u = u * (6 * k - 5) * (6 * k - 3) * (6 * k - 1) / ((2 * k - 1) * 216 * k)
            v = -u * (6 * k + 1) / (6 * k - 1)
        e = (-zeta).exp() / (2 * pi.sqrt())
        z4 = z.sqrt().sqrt()
        ai20 = e / z4 * su
        aip20 = -e * z4 * sv
        f, fp, g, gp = maclaurin(z)
        # Wronskian f g' - f' g = 1, so Ai = c1 f - c2 g gives c1, c2 directly
        c1 = ai20 * gp - aip20 * g
        c2 = ai20 * fp - aip20 * f
        sqrt3 = Decimal(3).sqrt()
        # Taylor coefficients about each anchor, in decimal: y = sum c_n h^n,
        # c_(n+2) = (z0 c_n + c_(n-1)) / ((n+1)(n+2)); rows: Ai, Ai', Bi, Bi'
        table = np.empty((_N_ANCHORS, _N_TAYLOR, 4))
        for j in range(_N_ANCHORS):
            zj = Decimal(-10) + Decimal(j) / _ANCHORS_PER_UNIT
            if zj == 0:
                f, fp, g, gp = Decimal(1), Decimal(0), Decimal(0), Decimal(1)
            else:
                f, fp, g, gp = maclaurin(zj)
            for row, (y0, y1) in enumerate(((c1 * f - c2 * g, c1 * fp - c2 * gp),
                                            (sqrt3 * (c1 * f + c2 * g), sqrt3 * (c1 * fp + c2 * gp)))):
                c = [y0, y1]
                for n in range(_N_TAYLOR - 1):
                    c.append((zj * c[n] + (c[n - 1] if n > 0 else 0)) / ((n + 1) * (n + 2)))
                for n in range(_N_TAYLOR):
                    table[j, n, 2 * row] = float(c[n])
                    table[j, n, 2 * row + 1] = float((n + 1) * c[n + 1])
    return table


_ANCHORS = _anchor_table()
_U, _V = _asymptotic_coefficients(_N_ASYM)
_INV_SQRT_PI = 1.0 / math.sqrt(math.pi)
_QUARTER_PI = 0.25 * math.pi


@numba.njit(cache=True, error_model="numpy", inline="always")
def _taylor(z, anchors):
    """Unscaled Ai, Ai', Bi, Bi' for |z| <= 10 (Taylor polynomials about an anchor).

    anchors[j, n, f]: coefficient of h^n of function f (Ai, Ai', Bi, Bi') about
    z_j; four independent Horner chains side by side.
    """
    j = int(math.floor((z + 10.0) * _ANCHORS_PER_UNIT + 0.5))
    if j < 0:
        j = 0
    elif j > _N_ANCHORS - 1:
        j = _N_ANCHORS - 1
    h = z - (-10.0 + j / _ANCHORS_PER_UNIT)
    n = _N_TAYLOR - 1
    ai = anchors[j, n, 0]
    aip = anchors[j, n, 1]
    bi = anchors[j, n, 2]
    bip = anchors[j, n, 3]
    for k in range(n - 1, -1, -1):
        ai = ai * h + anchors[j, k, 0]
        aip = aip * h + anchors[j, k, 1]
        bi = bi * h + anchors[j, k, 2]
        bip = bip * h + anchors[j, k, 3]
    return ai, aip, bi, bip


@numba.njit(cache=True, error_model="numpy")
def _positive_asymptotic(z, zeta, u, v):
    """exp(zeta) Ai, exp(zeta) Ai', exp(-zeta) Bi, exp(-zeta) Bi' for z > 10."""
    inv = 1.0 / zeta
    su = 1.0
    sua = 1.0
    sv = 1.0
    sva = 1.0
    p = 1.0
    sign = 1.0
    for k in range(1, u.shape[0]):
        p *= inv
        sign = -sign
        tu = u[k] * p
        tv = v[k] * p
        su += tu
        sua += sign * tu
        sv += tv
        sva += sign * tv
        if abs(tu) < 1e-18 * su and abs(tv) < 1e-18 * abs(sv):
            break
    q = math.sqrt(math.sqrt(z))
    c = _INV_SQRT_PI
    return 0.5 * c / q * sua, -0.5 * c * q * sva, c / q * su, c * q * sv


@numba.njit(cache=True, error_model="numpy")
def airy_negative_asymptotic(x, zeta, u, v):
    """P, Q, Pv, Qv of the oscillatory series at z = -x < -10 (A&S 10.4.60-10.4.67).

    Ai(-x)  = x^(-1/4)/sqrt(pi) (sin(chi) P - cos(chi) Q)
    Bi(-x)  = x^(-1/4)/sqrt(pi) (cos(chi) P + sin(chi) Q)
    Ai'(-x) = -x^(1/4)/sqrt(pi) (cos(chi) Pv + sin(chi) Qv)
    Bi'(-x) = x^(1/4)/sqrt(pi) (sin(chi) Pv - cos(chi) Qv),   chi = zeta + pi/4.
    """
    inv = 1.0 / zeta
    P = 1.0
    Q = 0.0
    Pv = 1.0
    Qv = 0.0
    p = 1.0
    for k in range(1, u.shape[0]):
        p *= inv
        # sign pattern (-1)^(k//2) for both the even (P) and the odd (Q) terms
        s = -1.0 if (k // 2) % 2 == 1 else 1.0
        tu = s * u[k] * p
        tv = s * v[k] * p
        if k % 2 == 0:
            P += tu
            Pv += tv
        else:
            Q += tu
            Qv += tv
        if abs(tu) < 1e-18 and abs(tv) < 1e-18:
            break
    return P, Q, Pv, Qv


@numba.njit(cache=True, error_model="numpy")
def _two_product(a, b):
    """a*b = p + e exactly (Dekker, Veltkamp splitting; no FMA needed)."""
    p = a * b
    c = 134217729.0 * a
    a_hi = c - (c - a)
    a_lo = a - a_hi
    c = 134217729.0 * b
    b_hi = c - (c - b)
    b_lo = b - b_hi
    e = ((a_hi * b_hi - p) + a_hi * b_lo + a_lo * b_hi) + a_lo * b_lo
    return p, e


_TWO_THIRDS_HI = 2.0 / 3.0
_TWO_THIRDS_LO = float((Decimal(2) / Decimal(3)) - Decimal(_TWO_THIRDS_HI))


@numba.njit(cache=True, error_model="numpy")
def _zeta_double_double(x):
    """2/3 x^(3/2) as hi + lo to about 1e-30 relative (for x up to ~1e100).

    The phase of Ai(-x) is zeta + pi/4; rounding zeta to double would cost an
    absolute phase error of eps*zeta (5e-12 at x = 1000).
    """
    s = math.sqrt(x)
    p, e = _two_product(s, s)
    r = ((x - p) - e) / (2.0 * s)              # sqrt(x) = s + r
    p2, e2 = _two_product(x, s)
    lo = e2 + x * r                            # x^(3/2) = p2 + lo
    p3, e3 = _two_product(_TWO_THIRDS_HI, p2)
    lo3 = e3 + _TWO_THIRDS_HI * lo + _TWO_THIRDS_LO * p2
    hi = p3 + lo3
    return hi, lo3 - (hi - p3)


@numba.njit(cache=True, error_model="numpy", inline="always")
def airy_scaled_kernel(z, anchors, u, v):
    """(ai, aip, bi, bip, zeta_plus) at real z.

    z > 0: ai = Ai exp(zeta), aip = Ai' exp(zeta), bi = Bi exp(-zeta),
    bip = Bi' exp(-zeta), zeta_plus = zeta = 2/3 z^(3/2) (the convention of
    scipy.special.airye). z <= 0: unscaled values and zeta_plus = 0.
    """
    if z > 10.0:
        zeta = (2.0 / 3.0) * z * math.sqrt(z)
        ai, aip, bi, bip = _positive_asymptotic(z, zeta, u, v)
        return ai, aip, bi, bip, zeta
    if z >= -10.0:
        ai, aip, bi, bip = _taylor(z, anchors)
        if z > 0.0:
            zeta = (2.0 / 3.0) * z * math.sqrt(z)
            e = math.exp(zeta)
            return ai * e, aip * e, bi / e, bip / e, zeta
        return ai, aip, bi, bip, 0.0
    x = -z
    zeta_hi, zeta_lo = _zeta_double_double(x)
    P, Q, Pv, Qv = airy_negative_asymptotic(x, zeta_hi, u, v)
    # chi = zeta + pi/4 with zeta in double-double: libm reduces the exact
    # double zeta_hi, the small remainder goes through the addition formula
    delta = zeta_lo + _QUARTER_PI
    sh = math.sin(zeta_hi)
    ch = math.cos(zeta_hi)
    sd = math.sin(delta)
    cd = math.cos(delta)
    s = sh * cd + ch * sd
    c = ch * cd - sh * sd
    q = math.sqrt(math.sqrt(x))
    w = _INV_SQRT_PI
    return (w / q * (s * P - c * Q), -w * q * (c * Pv + s * Qv),
            w / q * (c * P + s * Q), w * q * (s * Pv - c * Qv), 0.0)


@numba.njit(cache=True, error_model="numpy")
def _airy_scaled_array(z, anchors, u, v):
    out = np.empty((4, z.shape[0]))
    for i in range(z.shape[0]):
        ai, aip, bi, bip, _ = airy_scaled_kernel(z[i], anchors, u, v)
        out[0, i] = ai
        out[1, i] = aip
        out[2, i] = bi
        out[3, i] = bip
    return out


def airy_scaled(z):
    """Ai, Ai', Bi, Bi' at real z, scaled like scipy.special.airye for z > 0.

    For z > 0 returns Ai exp(zeta), Ai' exp(zeta), Bi exp(-zeta), Bi' exp(-zeta)
    with zeta = 2/3 z^(3/2); for z <= 0 the unscaled values. Arrays of the
    shape of `z`.
    """
    z = np.asarray(z, dtype=np.float64)
    out = _airy_scaled_array(np.ascontiguousarray(z.ravel()), _ANCHORS, _U, _V)
    return tuple(out[k].reshape(z.shape) for k in range(4))


def airy(z):
    """Unscaled Ai, Ai', Bi, Bi' at real z (Bi overflows to inf beyond z ~ 104)."""
    z = np.asarray(z, dtype=np.float64)
    ai, aip, bi, bip = airy_scaled(z)
    zeta = np.where(z > 0, (2.0 / 3.0) * np.abs(z) ** 1.5, 0.0)
    with np.errstate(over="ignore"):
        grow = np.exp(zeta)
    shrink = np.exp(-zeta)
    return ai * shrink, aip * shrink, bi * grow, bip * grow


def anchors_and_coefficients():
    """The arrays the kernels need: (anchors, u, v)."""
    return _ANCHORS, _U, _V
