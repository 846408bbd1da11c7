"""Fermi–Dirac integrals and carrier statistics against their definitions,
limits and closed forms."""
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import quad
from scipy.special import gamma, zeta

from solver.statistics import (
    effective_dos_m3,
    electron_density,
    fermi_dirac_half,
    fermi_dirac_integral,
    fermi_dirac_minus_half,
    hole_density,
    inverse_fermi_dirac_half,
    ionized_acceptors,
    ionized_donors,
    subband_density,
    subband_dos_m2_J,
)
from solver.units import BOLTZMANN_J_K, EV_TO_J, Q_C


def definition(order, eta):
    """F_j(eta) = 1/Gamma(j+1) int_0^inf t^j / (1 + exp(t - eta)) dt (Blakemore,
    Solid-State Electron. 25, 1067 (1982)) by scipy.integrate.quad, with t = u^2
    so that order -1/2 has no endpoint singularity."""

    def integrand(u):
        x = u * u - eta
        return 0.0 if x > 700 else 2.0 * u ** (2 * order + 1) / (1.0 + math.exp(x))

    top = math.sqrt(max(eta, 0.0) + 80.0)
    points = [math.sqrt(eta)] if eta > 0 else None
    value, _ = quad(integrand, 0.0, top, points=points, epsabs=0.0, epsrel=1e-13, limit=400)
    return value / gamma(order + 1)


ETAS = np.concatenate([np.linspace(-50, 50, 41), [-2.0, -1.999, 39.999, 40.0, 75.0, 200.0, -120.0]])


@pytest.mark.parametrize("order", [-0.5, 0.5, 1.5])
def test_against_quadrature_of_definition(order):
    values = fermi_dirac_integral(order, ETAS)
    reference = np.array([definition(order, e) for e in ETAS])
    assert_allclose(values, reference, rtol=1e-11)


def test_values_at_zero_closed_form():
    # F_j(0) = (1 - 2^-j) zeta(j + 1) in Blakemore's normalisation (eta(s) Dirichlet
    # eta function; zeta from scipy.special)
    assert_allclose(fermi_dirac_half(0.0), (1 - 2**-0.5) * zeta(1.5), rtol=1e-14)
    # F_{-1/2}(0) = (1 - sqrt 2) zeta(1/2)
    assert_allclose(fermi_dirac_minus_half(0.0), (1 - 2**0.5) * zeta(0.5), rtol=1e-14)


def test_boltzmann_limit():
    # Non-degenerate limit F_j -> exp(eta) (Blakemore 1982); next term -exp(2 eta)/2^(j+1)
    eta = np.array([-700.0, -200.0, -40.0])
    assert_allclose(fermi_dirac_half(eta), np.exp(eta), rtol=1e-15)
    eta = np.array([-8.0, -5.0])
    series2 = np.exp(eta) - np.exp(2 * eta) / 2**1.5 + np.exp(3 * eta) / 3**1.5
    # first neglected term exp(4 eta)/8 relative to exp(eta)
    assert_allclose(fermi_dirac_half(eta), series2, rtol=np.exp(3 * eta).max() / 4)


def test_degenerate_limit():
    # Degenerate limit (4/(3 sqrt(pi))) eta^(3/2) (Sommerfeld; Blakemore 1982),
    # corrections (1 + pi^2/(8 eta^2) + 7 pi^4/(640 eta^4))
    eta = np.array([1e3, 1e4, 1e6])
    lead = 4 / (3 * np.sqrt(np.pi)) * eta**1.5
    sommerfeld = 1 + np.pi**2 / (8 * eta**2) + 7 * np.pi**4 / (640 * eta**4)
    assert_allclose(fermi_dirac_half(eta), lead * sommerfeld, rtol=2e-13)
    assert_allclose(fermi_dirac_half(1e4) / (4 / (3 * np.sqrt(np.pi)) * 1e6), 1.0, rtol=2e-8)


@pytest.mark.parametrize("eta0", [-30.0, -2.0, 0.3, 5.0, 39.0, 40.0, 80.0])
def test_derivative_relations(eta0):
    # dF_j/deta = F_{j-1} (differentiating under the integral), checked by central differences
    h = 1e-4 * max(1.0, eta0)
    for order, lower in ((0.5, -0.5), (1.5, 0.5)):
        fd = (fermi_dirac_integral(order, eta0 + h) - fermi_dirac_integral(order, eta0 - h)) / (2 * h)
        assert_allclose(fd, fermi_dirac_integral(lower, eta0), rtol=1e-7)


def test_pieces_join_continuously():
    for edge in (-2.0, 40.0):
        below = np.nextafter(edge, -np.inf)
        for order in (-0.5, 0.5, 1.5):
            assert_allclose(fermi_dirac_integral(order, below), fermi_dirac_integral(order, edge), rtol=1e-13)


def test_shapes_and_special_values():
    assert fermi_dirac_half(1.0).shape == ()
    assert fermi_dirac_half(np.zeros((2, 3))).shape == (2, 3)
    out = fermi_dirac_half(np.array([-np.inf, np.inf, np.nan]))
    assert out[0] == 0 and out[1] == np.inf and np.isnan(out[2])
    with pytest.raises(ValueError, match="order must be one of"):
        fermi_dirac_integral(2.5, 0.0)


def test_inverse_round_trip():
    eta = np.linspace(-60, 80, 1401)
    back = inverse_fermi_dirac_half(fermi_dirac_half(eta))
    assert_allclose(back, eta, atol=1e-12, rtol=1e-14)
    assert_allclose(fermi_dirac_half(inverse_fermi_dirac_half(1e10)), 1e10, rtol=1e-13)
    with pytest.raises(ValueError, match="value must be finite and > 0"):
        inverse_fermi_dirac_half(np.array([1.0, 0.0]))


@settings(max_examples=40, deadline=None)
@given(st.floats(-300, 300), st.floats(1e-6, 5.0))
def test_monotone_and_inverse_property(eta, step):
    a, b = fermi_dirac_half(np.array([eta, eta + step]))
    assert 0 <= a < b or (a == 0 and b == 0)
    if a > 0:
        assert abs(inverse_fermi_dirac_half(a) - eta) <= 1e-11 * max(1.0, abs(eta))


# ---------------------------------------------------------------- densities of states
def test_effective_dos_and_2d_dos_constants():
    # physics-data sheet Sec. 1 (computed from CODATA): 2 (2 pi m0 kT / h^2)^1.5 at
    # 300 K = 2.5094e19 cm^-3; m0/(pi hbar^2) = 4.1773e14 cm^-2 eV^-1
    assert_allclose(effective_dos_m3(1.0, 300.0) * 1e-6, 2.5094e19, rtol=1e-4)
    assert_allclose(subband_dos_m2_J(1, 1.0) * 1e-4 * EV_TO_J, 4.1773e14, rtol=1e-4)


# ---------------------------------------------------------------- band densities
T = 300.0
KT = BOLTZMANN_J_K * T
NC, NV = 2.86e25, 3.10e25  # m^-3 (physics-data sheet Sec. 2.1 defaults)


@pytest.mark.parametrize("statistics", ["fermi-dirac", "boltzmann"])
def test_band_densities_and_potential_derivatives(statistics):
    ec = np.array([0.3, 0.05, 0.0, -0.2]) * EV_TO_J
    ev = ec - 1.12 * EV_TO_J
    ef = 0.0
    n, dn = electron_density(ec, ef, NC, T, statistics)
    p, dp = hole_density(ev, ef + 0.0 * ec - 1.0 * EV_TO_J, NV, T, statistics)
    if statistics == "boltzmann":
        assert_allclose(n, NC * np.exp((ef - ec) / KT), rtol=1e-14)
    else:
        assert_allclose(n, NC * fermi_dirac_half((ef - ec) / KT), rtol=1e-14)
    # phi raises -> bands move down by q dphi (central differences)
    d = 1e-6
    n_plus, _ = electron_density(ec - Q_C * d, ef, NC, T, statistics)
    n_minus, _ = electron_density(ec + Q_C * d, ef, NC, T, statistics)
    assert_allclose(dn, (n_plus - n_minus) / (2 * d), rtol=1e-6)
    p_plus, _ = hole_density(ev - Q_C * d, -EV_TO_J, NV, T, statistics)
    p_minus, _ = hole_density(ev + Q_C * d, -EV_TO_J, NV, T, statistics)
    assert_allclose(dp, (p_plus - p_minus) / (2 * d), rtol=1e-6)
    assert np.all(dp < 0) and np.all(dn > 0)


def test_fermi_dirac_below_boltzmann_when_degenerate():
    # F_{1/2}(eta) < exp(eta) for every eta (Pauli blocking; Blakemore 1982)
    n_fd, _ = electron_density(-0.1 * EV_TO_J, 0.0, NC, T)
    n_b, _ = electron_density(-0.1 * EV_TO_J, 0.0, NC, T, "boltzmann")
    assert n_fd < n_b
    with pytest.raises(ValueError, match="statistics must be one of"):
        electron_density(0.0, 0.0, NC, T, "classical")


# ---------------------------------------------------------------- dopants
def test_ionized_donors():
    # N_D+ = N_D / (1 + g exp((E_F - E_D)/kT)), g = 2 (Sze & Ng 2007 Ch. 1; common practice)
    nd, ion = 1e24, 0.045 * EV_TO_J
    ec = np.array([0.5, 0.045, -0.5]) * EV_TO_J  # E_F far below, at, far above E_D
    val, der = ionized_donors(nd, ec, 0.0, ion, T)
    assert_allclose(val[0], nd, rtol=1e-6)
    assert_allclose(val[1], nd / 3, rtol=1e-14)
    assert val[2] < 1e-6 * nd
    d = 1e-6
    up, _ = ionized_donors(nd, ec - Q_C * d, 0.0, ion, T)
    down, _ = ionized_donors(nd, ec + Q_C * d, 0.0, ion, T)
    assert_allclose(der, (up - down) / (2 * d), rtol=1e-6, atol=1e-15 * nd / d)  # atol: round-off of the difference
    full, zero = ionized_donors(nd, ec, 0.0, ion, T, ionization="complete")
    assert np.all(full == nd) and np.all(zero == 0)
    with pytest.raises(ValueError, match="ionization must be"):
        ionized_donors(nd, ec, 0.0, ion, T, ionization="partial")


def test_ionized_acceptors():
    # N_A- = N_A / (1 + g exp((E_A - E_F)/kT)), g = 4 for Si (common practice; Sze & Ng 2007)
    na, ion = 1e24, 0.045 * EV_TO_J
    ev = np.array([-0.5, -0.045, 0.5]) * EV_TO_J
    val, der = ionized_acceptors(na, ev, 0.0, ion, T)
    assert_allclose(val[0], na, rtol=1e-6)
    assert_allclose(val[1], na / 5, rtol=1e-14)
    assert val[2] < 1e-6 * na
    d = 1e-6
    up, _ = ionized_acceptors(na, ev - Q_C * d, 0.0, ion, T)
    down, _ = ionized_acceptors(na, ev + Q_C * d, 0.0, ion, T)
    assert_allclose(der, (up - down) / (2 * d), rtol=1e-6, atol=1e-15 * na / d)
    full, zero = ionized_acceptors(na, ev, 0.0, ion, T, ionization="complete")
    assert np.all(full == na) and np.all(zero == 0)


# ---------------------------------------------------------------- 2-D subbands
def test_subband_density_closed_form_and_limits():
    # N_i = g_v m_d m0 kT/(pi hbar^2) ln(1 + exp((E_F - E_i)/kT)) (Ando, Fowler, Stern,
    # Rev. Mod. Phys. 54, 437 (1982), Sec. III)
    D = subband_dos_m2_J(2, 0.19)
    x = np.array([-800.0, -30.0, 0.0, 2.0, 30.0, 800.0])
    ei = -x * KT
    N, dN = subband_density(ei, 0.0, 2, 0.19, T)
    assert_allclose(N[2], D * KT * math.log(2), rtol=1e-14)
    assert_allclose(N[:2], D * KT * np.exp(x[:2]), rtol=1e-13)  # Boltzmann tail, no underflow loss
    assert_allclose(N[-1], D * KT * x[-1], rtol=1e-14)  # degenerate: D (E_F - E_i), no overflow
    assert np.all(np.isfinite(N)) and np.all(np.isfinite(dN))
    d = 1e-7 * KT
    up, _ = subband_density(ei, d, 2, 0.19, T)
    down, _ = subband_density(ei, -d, 2, 0.19, T)
    assert_allclose(dN[1:-1], (up - down)[1:-1] / (2 * d), rtol=1e-6)
    Nb, dNb = subband_density(ei[:3], 0.0, 2, 0.19, T, "boltzmann")
    assert_allclose(Nb, D * KT * np.exp(x[:3]), rtol=1e-14)
    assert_allclose(dNb, D * np.exp(x[:3]), rtol=1e-14)
