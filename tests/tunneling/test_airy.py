"""numba Airy functions against scipy.special and a 50-digit reference."""
from decimal import Decimal, localcontext

import numpy as np
import pytest
import scipy.special as sp

from solver.tunneling._airy import _PI_DIGITS, airy, airy_scaled

EPS = np.finfo(float).eps


def _zeta(z):
    return 2.0 / 3.0 * np.abs(z) ** 1.5


def _mine_vs_scipy_negative(z):
    ai, aip, bi, bip = airy_scaled(z)
    rai, raip, rbi, rbip = sp.airy(z)
    mod = np.hypot(rai, rbi)
    modp = np.hypot(raip, rbip)
    return [np.abs(ai - rai) / mod, np.abs(aip - raip) / modp, np.abs(bi - rbi) / mod, np.abs(bip - rbip) / modp]


def test_values_at_zero():
    # A&S 10.4.4-10.4.5: Ai(0) = 0.355028053887817, Ai'(0) = -0.258819403792807; reference scipy.special.airy
    np.testing.assert_allclose(airy_scaled(0.0), sp.airy(0.0), rtol=2e-16, atol=0)


def test_negative_axis_near_origin_vs_scipy():
    # scipy.special.airy (cephes) in its power-series / short-asymptotic range;
    # errors relative to the modulus sqrt(Ai^2 + Bi^2) (and of the derivatives)
    z = np.linspace(-50.0, 0.0, 50001)
    for err in _mine_vs_scipy_negative(z):
        assert err.max() < 1e-13


def test_negative_axis_far_vs_scipy():
    # scipy.special.airy out to -1e3. The phase zeta + pi/4, zeta = 2/3 |z|^1.5,
    # is only defined to eps*zeta once zeta is rounded to double, as scipy does
    # (4.7e-12 at z = -1e3); ours carries zeta in double-double (see the
    # 50-digit test below), so the allowance is scipy's rounding.
    z = -np.logspace(np.log10(50.0), 3.0, 40001)
    allowed = 1e-13 + 2 * EPS * _zeta(z)
    for err in _mine_vs_scipy_negative(z):
        assert np.all(err < allowed)


def _reference_negative(zf):
    """Ai, Ai', Bi, Bi' at z = zf < -10 from the asymptotic series (A&S 10.4.60-10.4.67)
    in 50-digit decimal arithmetic, with its own sin/cos."""
    with localcontext() as ctx:
        ctx.prec = 50
        pi = Decimal(_PI_DIGITS)
        x = -Decimal(zf)
        zeta = Decimal(2) / 3 * x * x.sqrt()
        P = Q = Pv = Qv = Decimal(0)
        u = v = Decimal(1)
        k, previous = 0, None
        while True:
            tu, tv = u / zeta**k, v / zeta**k
            if previous is not None and abs(tu) > previous:
                break                                   # optimal truncation (error ~ exp(-2 zeta))
            previous = abs(tu)
            sign = -1 if (k // 2) % 2 else 1
            if k % 2 == 0:
                P, Pv = P + sign * tu, Pv + sign * tv
            else:
                Q, Qv = Q + sign * tu, Qv + sign * tv
            if abs(tu) < Decimal(10) ** -40:
                break
            k += 1
            u = u * (6 * k - 5) * (6 * k - 3) * (6 * k - 1) / ((2 * k - 1) * 216 * k)
            v = -u * (6 * k + 1) / (6 * k - 1)
        chi = zeta + pi / 4
        chi -= 2 * pi * (chi / (2 * pi)).to_integral_value()
        # Taylor series of cos and sin of the reduced phase
        s = c = Decimal(0)
        term, n = Decimal(1), 0
        while abs(term) > Decimal(10) ** -45:
            c += term if n % 4 == 0 else (-term if n % 4 == 2 else 0)
            s += term if n % 4 == 1 else (-term if n % 4 == 3 else 0)
            n += 1
            term = term * chi / n
        w, q = 1 / pi.sqrt(), x.sqrt().sqrt()
        return np.array([float(w / q * (s * P - c * Q)), float(-w * q * (c * Pv + s * Qv)),
                         float(w / q * (c * P + s * Q)), float(w * q * (s * Pv - c * Qv))])


@pytest.mark.parametrize("z", [-10.5, -30.3, -100.7, -500.123, -846.65, -1e3, -12345.678, -1e6])
def test_negative_axis_vs_50_digit_reference(z):
    # independent high-precision evaluation of the A&S asymptotic series
    ref = _reference_negative(z)
    mine = np.array(airy_scaled(z))
    mod = np.hypot(ref[0], ref[2])
    modp = np.hypot(ref[1], ref[3])
    err = np.abs(mine - ref) / np.array([mod, modp, mod, modp])
    assert err.max() < 2e-15


def test_positive_axis_scaled_vs_airye():
    # scipy.special.airye: Ai, Ai' times exp(zeta), Bi, Bi' times exp(-zeta)
    z = np.concatenate([np.linspace(0.0, 20.0, 20001), np.linspace(20.0, 1000.0, 20001)])
    mine = airy_scaled(z)
    ref = sp.airye(z)
    for m, r in zip(mine, ref):
        assert np.max(np.abs(m / r - 1)) < 1e-13


def test_huge_arguments():
    # scipy.special.airye far out on the positive axis (AMOS) where it returns
    # numbers; beyond, the leading terms of A&S 10.4.59/10.4.63:
    # e^zeta Ai ~ 1/(2 sqrt(pi) z^1/4), e^-zeta Bi ~ 1/(sqrt(pi) z^1/4) (relative error 5/(72 zeta))
    z = np.array([1e3, 1e4, 1e6, 1e8, 1e12])
    mine = airy_scaled(z)
    for m, r in zip(mine, sp.airye(z)):
        ok = np.isfinite(r)
        assert ok[:3].all()
        np.testing.assert_allclose(m[ok], r[ok], rtol=1e-13)
    lead = 1 / (np.sqrt(np.pi) * z ** 0.25)
    assert np.all(np.abs(mine[0] / (lead / 2) - 1) < 0.1 / _zeta(z))
    assert np.all(np.abs(mine[2] / lead - 1) < 0.1 / _zeta(z))
    assert np.all(np.isfinite(airy_scaled(-np.array([1e8, 1e12, 1e100]))))


def test_unscaled_against_airy():
    # scipy.special.airy where Bi does not overflow
    z = np.linspace(0.0, 100.0, 2001)
    # unscaling by exp(-+zeta) costs eps*zeta (conditioning of exp)
    allowed = 1e-13 + 2 * EPS * _zeta(z)
    for m, r in zip(airy(z), sp.airy(z)):
        assert np.all(np.abs(m / r - 1) < allowed)


def test_wronskian():
    # A&S 10.4.10: Ai Bi' - Ai' Bi = 1/pi (the scales exp(-+zeta) cancel)
    z = np.concatenate([np.linspace(-1e3, 1e3, 20001), np.linspace(-12, 12, 4801)])
    ai, aip, bi, bip = airy_scaled(z)
    w = ai * bip - aip * bi
    scale = np.where(z < 0, np.hypot(ai, bi) * np.hypot(aip, bip), np.abs(ai * bip) + np.abs(aip * bi))
    assert np.max(np.abs(w - 1 / np.pi) / scale) < 1e-14


def test_zeros_of_ai():
    # physics-data.md sec. 7: Airy zeros -2.33810741, -4.08794944, -5.52055983
    # (scipy.special.ai_zeros; A&S Table 10.13)
    a = sp.ai_zeros(3)[0]
    np.testing.assert_allclose(a, [-2.33810741, -4.08794944, -5.52055983], atol=1e-8)
    ai, aip, _, _ = airy_scaled(a)
    # Newton step from the tabulated zero: |Ai/Ai'| is the distance to our zero
    assert np.all(np.abs(ai / aip) < 1e-13)
