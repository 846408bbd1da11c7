"""Fowler–Nordheim closed forms, image-force barrier functions and the
trapezoid (direct-tunnelling) form, against published forms and the
physics-data sheet's check values."""
import math
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import integrate
from scipy.constants import e, epsilon_0, h, hbar, m_e
from scipy.special import ellipe, ellipk

from solver.tunneling.barrier import Barrier
from solver.tunneling.fowler_nordheim import (
    barrier_from_fowler_nordheim_slope,
    direct_tunneling_current,
    forbes_t,
    forbes_v,
    fowler_nordheim_constants,
    fowler_nordheim_current,
    fowler_nordheim_fit,
    fowler_nordheim_image_current,
    murphy_good_t,
    murphy_good_v,
    scaled_barrier_field,
    schottky_lowering_eV,
)
from solver.tunneling.wkb import wkb_exponent

F_CHECK = [0.05, 0.1, 0.2, 0.3, 0.5]


def quadrature_v_t(f):
    """v(f) and t(f) from their defining integrals by scipy.integrate.quad (Murphy & Good 1956):
    v = (3/2) int_{x1}^{x2} sqrt(1 - x - f/(4x)) dx, t = v - (4/3) f dv/df. With
    1 - x - f/(4x) = (x - x1)(x2 - x)/x and x = x1 + w sin^2(s), w = x2 - x1, the end-point
    roots drop out: v = 3 w^2 int_0^{pi/2} sin^2 s cos^2 s / sqrt(x) ds and
    dv/df = -(3/8) int_0^{pi/2} ds / sqrt(x) (the integrand of v vanishes at the turning
    points). The peak of 1/sqrt(x) at s ~ sqrt(x1/w) gets break points of its own. Good to
    ~1e-15 for f >= 1e-10 (quad's tolerance 1e-13 on each piece); below it the small-f
    structure is beyond quad's relative tolerance."""
    w = math.sqrt(1.0 - f)
    x1 = f / (2.0 * (1.0 + w))  # (1 - w)/2 without cancellation
    s0 = math.sqrt(x1 / w)
    pts = sorted({0.0, min(s0, 0.5), min(8.0 * s0, 0.7), math.pi / 2})

    def integral(g):
        return sum(integrate.quad(g, a, b, epsabs=0.0, epsrel=1e-13, limit=200)[0]
                   for a, b in zip(pts[:-1], pts[1:]) if b > a)

    v = 3.0 * w * w * integral(lambda s: math.sin(s) ** 2 * math.cos(s) ** 2 / math.sqrt(x1 + w * math.sin(s) ** 2))
    dv = -0.375 * integral(lambda s: 1.0 / math.sqrt(x1 + w * math.sin(s) ** 2))
    return v, v - (4.0 / 3.0) * f * dv


def test_contract_formula_from_scipy_constants():
    # API contract: J = q^3 F^2 m0/(8 pi h Phi m) exp(-4 sqrt(2 m) Phi^1.5/(3 q hbar F)) with m the
    # tunnelling mass in kg (mass * m0), all SI, then A/m^2 -> A/cm^2
    phi_J, m_kg, F = 3.2 * e, 0.42 * m_e, 1e9  # 10 MV/cm = 1e9 V/m
    j_si = e**3 * F**2 * m_e / (8 * math.pi * h * phi_J * m_kg) * math.exp(
        -4 * math.sqrt(2 * m_kg) * phi_J**1.5 / (3 * e * hbar * F))
    assert fowler_nordheim_current(10.0, 3.2, 0.42) == pytest.approx(j_si * 1e-4, rel=1e-12)


def test_check_value_lenzlinger_snow_parameters():
    # physics-data sheet Sec. 7: 1.132e-3 A/cm^2 at 10 MV/cm for (3.2 eV, 0.42), computed there;
    # parameters of M. Lenzlinger and E. H. Snow, J. Appl. Phys. 40, 278 (1969) (from memory)
    assert fowler_nordheim_current(10.0, 3.2, 0.42) == pytest.approx(1.132e-3, rel=1e-3)


def test_unit_constants():
    # physics-data Sec. 1: q^2/(8 pi h) = 1.54143e-6 A/V^2; B unit 6.83089e7 V/cm
    assert fowler_nordheim_constants(1.0, 1.0).a_A_V2 == pytest.approx(1.54143e-6, rel=1e-5)
    assert fowler_nordheim_constants(1.0, 1.0).b_MV_cm == pytest.approx(68.3089, rel=1e-5)


@pytest.mark.parametrize(
    "phi, m, a, b, j",
    [
        # physics-data sheet Sec. 3.3 table (computed there): A (A/V^2), B (MV/cm), J at 8/10/12 MV/cm (A/cm^2)
        (3.2, 0.42, 1.147e-6, 253.4, (1.28e-6, 1.13e-3, 1.11e-1)),   # Lenzlinger & Snow set (from memory)
        (3.15, 0.50, 9.79e-7, 270.0, (1.37e-7, 1.83e-4, 2.38e-2)),   # Weinberg-type set
        (3.1, 0.40, 1.243e-6, 235.8, (1.26e-5, 7.14e-3, 5.23e-1)),   # Lee & Hu set (from memory)
        (3.25, 0.42, 1.129e-6, 259.4, (6.0e-7, 6.14e-4, 6.67e-2)),     # 6.0e-7: two digits only
    ],
)
def test_sheet_table_of_constants_and_currents(phi, m, a, b, j):
    # 4 significant digits for A and B, 3 for J (2 for 6.0e-7): half a unit of the last digit
    c = fowler_nordheim_constants(phi, m)
    assert c.a_A_V2 == pytest.approx(a, rel=5e-4) and c.b_MV_cm == pytest.approx(b, rel=5e-4)
    rtol = np.array([1e-2 if x == 6.0e-7 else 5e-3 for x in j])
    assert np.all(np.abs(fowler_nordheim_current([8.0, 10.0, 12.0], phi, m) / np.array(j) - 1) < rtol)


def test_fn_plot_recovers_slope_and_barrier():
    # A Fowler–Nordheim plot of the closed form is a straight line of slope -B (Lenzlinger & Snow 1969)
    F = np.linspace(7.0, 13.0, 13)
    fit = fowler_nordheim_fit(F, fowler_nordheim_current(F, 3.2, 0.42))
    assert fit.b_MV_cm == pytest.approx(253.4, rel=5e-4)
    assert fit.a_A_V2 == pytest.approx(1.147e-6, rel=5e-4)
    assert fit.rms_residual < 1e-12
    assert barrier_from_fowler_nordheim_slope(fit.b_MV_cm, 0.42) == pytest.approx(3.2, rel=1e-10)
    with pytest.raises(ValueError, match="at least two distinct fields"):
        fowler_nordheim_fit([8.0, 8.0], [1e-6, 1e-6])
    with pytest.raises(ValueError, match="current_A_cm2 must be finite and > 0"):
        fowler_nordheim_fit([8.0, 9.0], [1e-6, 0.0])


def test_zero_field_and_bad_input():
    assert fowler_nordheim_current(0.0, 3.2, 0.42) == 0.0
    assert isinstance(fowler_nordheim_current(5.0, 3.2, 0.42), float)
    assert fowler_nordheim_current(np.array([[5.0, 6.0]]), 3.2, 0.42).shape == (1, 2)
    with pytest.raises(ValueError, match="field_MV_cm"):
        fowler_nordheim_current(-1.0, 3.2, 0.42)
    with pytest.raises(ValueError, match="barrier_eV"):
        fowler_nordheim_current(5.0, 0.0, 0.42)
    with pytest.raises(ValueError, match="mass"):
        fowler_nordheim_current(5.0, 3.2, float("nan"))
    with pytest.raises(ValueError, match=r"barrier_eV must be a single number, got an array of shape \(2,\)"):
        fowler_nordheim_current(5.0, [3.2, 3.1], 0.42)


def test_barrier_functions_check_values():
    # physics-data sheet Sec. 7 (quadrature, computed there), tolerance 1e-4
    assert_allclose(murphy_good_v(F_CHECK), [0.92336, 0.85944, 0.74399, 0.63769, 0.44095], rtol=1e-4)
    assert_allclose(murphy_good_t(F_CHECK), [1.01325, 1.02252, 1.03746, 1.04989, 1.07068], rtol=1e-4)
    assert murphy_good_v(0.0) == 1.0 and murphy_good_t(0.0) == 1.0
    assert murphy_good_v(1.0) == 0.0


def test_barrier_functions_against_elliptic_integrals():
    # Murphy & Good 1956 closed form in complete elliptic integrals (R. G. Forbes and
    # J. H. B. Deane, Proc. R. Soc. A 463, 2907 (2007), from memory), y = sqrt(f),
    # parameter m = (1 - y)/(1 + y) as in scipy.special.ellipk/ellipe (Legendre form; the
    # module uses Carlson's R_F, R_D, so this checks the transcription to the symmetric form)
    f = np.array([1e-6, 0.01, 0.15, 0.4, 0.7, 0.95])
    y = np.sqrt(f)
    m = (1 - y) / (1 + y)
    assert_allclose(murphy_good_v(f), np.sqrt(1 + y) * (ellipe(m) - y * ellipk(m)), rtol=1e-12)
    assert_allclose(murphy_good_t(f), ((1 + y) * ellipe(m) - y * ellipk(m)) / np.sqrt(1 + y), rtol=1e-12)


def test_barrier_functions_against_quadrature():
    # the defining integrals (Murphy & Good 1956) by scipy.integrate.quad, from f = 1e-10 to
    # 1 - 1e-9 (v relative there too, v ~ 0.83 (1 - f) near 1): agreement to 1e-12 (seen ~1e-15)
    f = np.concatenate((np.geomspace(1e-10, 0.5, 21), 1.0 - np.geomspace(0.4, 1e-9, 12)))
    ref = np.array([quadrature_v_t(x) for x in f])
    assert_allclose(murphy_good_v(f), ref[:, 0], rtol=1e-12)
    assert_allclose(murphy_good_t(f), ref[:, 1], rtol=1e-12)


def test_small_field_expansion():
    # v = 1 - (3/16) f [1 + ln(64/f)] and t = 1 - (3/16) f + (f/16) ln(64/f) + O(f^2 ln^2 f):
    # derived from the expansions of K and E about m = 1 (Abramowitz & Stegun 17.3.34,
    # 17.3.36) in the elliptic form above. Checked against the quadrature where both hold
    # (f = 1e-10 .. 1e-8, remainder < 1e-18), the remainder's size against the closed form at
    # larger f, and the function used at tiny f (where quad cannot resolve the integrand).
    def series(f):
        lg = np.log(64.0 / f)
        return 1.0 - 0.1875 * f * (1.0 + lg), 1.0 - 0.1875 * f + 0.0625 * f * lg

    f = np.geomspace(1e-10, 1e-8, 5)
    ref = np.array([quadrature_v_t(x) for x in f])
    sv, st = series(f)
    assert_allclose(sv, ref[:, 0], rtol=2e-15)
    assert_allclose(st, ref[:, 1], rtol=2e-15)
    f = np.geomspace(1e-7, 1e-3, 5)
    sv, st = series(f)
    bound = 1e-2 * f**2 * np.log(f) ** 2
    assert np.all(np.abs(murphy_good_v(f) - sv) < bound) and np.all(np.abs(murphy_good_t(f) - st) < bound)
    f = np.array([1e-300, 1e-100, 1e-30, 1e-15, 1e-12, 1e-9])
    sv, st = series(f)
    assert_allclose(murphy_good_v(f), sv, rtol=1e-15)
    assert_allclose(murphy_good_t(f), st, rtol=1e-15)
    # Forbes's fit 1 - f + (f/6) ln f is not this limit: it is off by ~f (ln f / 48 + 0.033)
    assert abs(forbes_v(1e-9) - murphy_good_v(1e-9)) > 1e-10


def test_barrier_functions_quiet_and_monotone_on_all_of_0_1():
    # no warnings anywhere in [0, 1] (pytest turns warnings into errors; checked here too),
    # v falls from 1 to 0 and t rises from 1 toward pi/(2 sqrt 2) at f = 1 (m = 0, where
    # K = E = pi/2 in the elliptic form; Abramowitz & Stegun 17.3.11)
    f = np.unique(np.concatenate(([0.0], np.geomspace(1e-300, 1.0, 3001), 1.0 - np.geomspace(1e-16, 0.5, 500),
                                  np.linspace(0.0, 1.0, 2001))))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        v = murphy_good_v(f)
        t = murphy_good_t(f)
    assert v[0] == 1.0 and v[-1] == 0.0 and np.all(np.diff(v) <= 0) and np.all((v >= 0) & (v <= 1))
    # (t is flat to rounding next to f = 1: allow an ulp of wobble there)
    assert t[0] == 1.0 and np.all(np.diff(t) >= -2 * np.spacing(1.0)) and t[-1] <= math.pi / (2 * math.sqrt(2))
    assert t[-1] == pytest.approx(math.pi / (2 * math.sqrt(2)), rel=1e-15)  # f = 1 itself


def test_forbes_approximations():
    # R. G. Forbes, APL 89, 113122 (2006): v ~ 1 - f + (f/6) ln f, t ~ 1 + f/9 - (f/18) ln f,
    # within ~0.4 % for f <= 0.5 (physics-data sheet Sec. 6 item 4, computed there)
    f = np.linspace(0.01, 0.5, 25)
    assert np.max(np.abs(forbes_v(f) / murphy_good_v(f) - 1)) < 4e-3
    assert np.max(np.abs(forbes_t(f) / murphy_good_t(f) - 1)) < 4e-3
    with pytest.raises(ValueError, match="scaled barrier field"):
        forbes_v(1.5)


def test_schottky_lowering_in_sio2():
    # physics-data sheet Sec. 7: 0.822 eV at 10 MV/cm in SiO2 (eps_inf 2.13), f = 0.066 for 3.2 eV
    assert schottky_lowering_eV(10.0, 2.13) == pytest.approx(0.822, rel=1e-3)
    assert scaled_barrier_field(10.0, 3.2, 2.13) == pytest.approx(0.066, rel=1e-2)
    # the definition f = (Schottky lowering / Phi)^2 (Forbes 2006), with q/(4 pi eps0) from scipy.constants
    dphi = math.sqrt(e * 1e9 / (4 * math.pi * epsilon_0 * 2.13))  # eV at 1 V/nm
    assert scaled_barrier_field(10.0, 3.2, 2.13) == pytest.approx((dphi / 3.2) ** 2, rel=1e-12)


def test_image_force_current():
    # Murphy–Good form (physics-data Sec. 6 item 4): J = A F^2 / t^2 exp(-v B / F)
    c = fowler_nordheim_constants(3.2, 0.42)
    f = scaled_barrier_field(10.0, 3.2, 2.13)
    expected = c.a_A_V2 * 1e14 / murphy_good_t(f) ** 2 * math.exp(-murphy_good_v(f) * c.b_MV_cm / 10.0)
    assert fowler_nordheim_image_current(10.0, 3.2, 0.42, 2.13) == pytest.approx(expected, rel=1e-12)
    # image force lowers the barrier: more current than the plain closed form
    assert fowler_nordheim_image_current(10.0, 3.2, 0.42, 2.13) > fowler_nordheim_current(10.0, 3.2, 0.42)
    forbes = fowler_nordheim_image_current(10.0, 3.2, 0.42, 2.13, approximation="forbes")
    assert forbes == pytest.approx(expected, rel=0.1)
    with pytest.raises(ValueError, match="vanishes"):
        fowler_nordheim_image_current(1000.0, 3.2, 0.42, 2.13)


def test_image_force_current_vectorised_against_quadrature():
    # J = A F^2 / t^2 exp(-v B / F) (physics-data Sec. 6 item 4) with v, t by quadrature of
    # their definitions (Murphy & Good 1956), at 60 fields in one call: the exponent v B / F
    # reaches ~40 here, so 1e-12 in v is ~4e-11 in J
    F = np.linspace(3.0, 20.0, 60)
    c = fowler_nordheim_constants(3.2, 0.42)
    f = scaled_barrier_field(F, 3.2, 2.13)
    vt = np.array([quadrature_v_t(x) for x in f])
    expected = c.a_A_V2 * (F * 1e6) ** 2 / vt[:, 1] ** 2 * np.exp(-vt[:, 0] * c.b_MV_cm / F)
    got = fowler_nordheim_image_current(F, 3.2, 0.42, 2.13)
    assert got.shape == F.shape
    assert_allclose(got, expected, rtol=1e-10)
    assert_allclose(fowler_nordheim_image_current(F.reshape(6, 10), 3.2, 0.42, 2.13), got.reshape(6, 10), rtol=0)


def test_trapezoid_form_reduces_to_fn():
    # Schuegraf & Hu, IEEE TED 41, 761 (1994): the trapezoid form is FN for q V_ox >= Phi
    # and joins it continuously at q V_ox = Phi (physics-data sheet Sec. 6 item 6)
    d = 5.0
    F_join = 10.0 * 3.2 / d  # V_ox = Phi at 6.4 MV/cm
    F = np.array([F_join, 8.0, 10.0, 14.0])
    assert_allclose(direct_tunneling_current(F, d, 3.2, 0.42), fowler_nordheim_current(F, 3.2, 0.42), rtol=1e-13)
    below = direct_tunneling_current(F_join * (1 - 1e-9), d, 3.2, 0.42)
    assert below == pytest.approx(fowler_nordheim_current(F_join, 3.2, 0.42), rel=1e-4)
    # below the join the trapezoid passes more current than the triangle would
    assert direct_tunneling_current(4.0, d, 3.2, 0.42) > fowler_nordheim_current(4.0, 3.2, 0.42)


def test_trapezoid_exponent_is_the_trapezoid_wkb_integral():
    # Schuegraf & Hu (1994): the exponent B[1 - (1 - qV/Phi)^1.5]/F is the WKB integral
    # through the trapezoid at the injecting band edge; compare with wkb_exponent
    d, phi, m = 3.0, 3.2, 0.42
    c = fowler_nordheim_constants(phi, m)
    for F in (1.0, 3.0, 6.0, 10.0):  # MV/cm; 0.1 V/nm per MV/cm
        drop = 0.1 * F * d
        b = Barrier((d,), (phi,), (phi - drop,), (m,), (-1.0, 0.5), (-1.0 - drop, 0.5))
        r = min(drop / phi, 1.0)
        shape = 1.0 - (1.0 - r) ** 1.5
        assert float(wkb_exponent(b, 0.0)) == pytest.approx(c.b_MV_cm * shape / F, rel=1e-12)
        prefactor = direct_tunneling_current(F, d, phi, m) / math.exp(-c.b_MV_cm * shape / F)
        assert prefactor == pytest.approx(c.a_A_V2 * (F * 1e6) ** 2 / (1 - math.sqrt(1 - r)) ** 2, rel=1e-12)
