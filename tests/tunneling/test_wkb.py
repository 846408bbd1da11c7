"""WKB transmission: closed forms, the physics-data sheet's check values, and
the approach to the exact closed form for thick barriers."""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import integrate

from solver.tunneling.barrier import Barrier
from solver.tunneling.wkb import wkb_exponent, wkb_transmission
from solver.units import EV_TO_J, HBAR_J_S, M0_KG, NM_TO_M

KAPPA_PER_NM = np.sqrt(2 * M0_KG * EV_TO_J) / HBAR_J_S * NM_TO_M  # 5.12317 nm^-1 (physics-data Sec. 1)


def rectangular_exact(E, U, d_nm, mb, left, right):
    # Physics-data sheet Sec. 6 item 1 (BenDaniel & Duke matching, from memory):
    # T = 4ac b^2 / [b^2 (a+c)^2 cosh^2(kd) + (b^2 - ac)^2 sinh^2(kd)]
    kl = KAPPA_PER_NM * np.sqrt(left[1] * (E - left[0]))
    kr = KAPPA_PER_NM * np.sqrt(right[1] * (E - right[0]))
    kappa = KAPPA_PER_NM * np.sqrt(mb * (U - E))
    a, c, b = kl / left[1], kr / right[1], kappa / mb
    x = kappa * d_nm
    return 4 * a * c * b**2 / (b**2 * (a + c) ** 2 * np.cosh(x) ** 2 + (b**2 - a * c) ** 2 * np.sinh(x) ** 2)


def test_kappa_constant():
    # physics-data sheet Sec. 1: C_kappa = sqrt(2 m0 q)/hbar = 5.12317 nm^-1 eV^-1/2 (computed from scipy.constants)
    assert KAPPA_PER_NM == pytest.approx(5.12317, rel=1e-6)


@pytest.mark.parametrize(
    "barrier, energy, expected",
    [
        # physics-data sheet Sec. 7, WKB values quoted to 4 digits (computed there)
        (Barrier((2.0,), (3.1,), (3.1,), (0.5,), (0.0, 1.0), (0.0, 1.0)), 1.0, 7.592e-10),
        (Barrier((1.5,), (3.1,), (3.1,), (0.5,), (0.0, 0.916), (0.0, 0.19)), 0.1, 6.683e-9),
        (Barrier((3.0,), (2.0,), (2.0,), (0.4,), (0.0, 0.3), (0.2, 1.0)), 0.5, 4.564e-11),
        (Barrier((4.0,), (3.1,), (0.1,), (0.5,), (-0.5, 0.5), (-3.0, 0.5)), 0.0, 6.643e-16),
        (Barrier((3.0,), (3.1,), (1.1,), (0.42,), (0.0, 0.5), (-2.0, 1.0)), 0.2, 1.660e-12),
    ],
)
def test_sheet_check_values(barrier, energy, expected):
    # 4 significant digits: half a unit of the last digit is <= 5e-4 relative
    assert float(wkb_transmission(barrier, energy)) == pytest.approx(expected, rel=5e-4)


def test_triangular_closed_form():
    # Triangular barrier U = Phi - qFx, E = 0: 2 int kappa = (4/3) C sqrt(m) Phi^1.5 / (qF)
    # (the Fowler–Nordheim exponent; Lenzlinger & Snow 1969, Sze & Ng 2007 Ch. 6)
    phi, m, F_eV_nm = 3.2, 0.42, 1.0  # 10 MV/cm = 1 V/nm
    b = Barrier((5.0,), (phi,), (phi - 5.0 * F_eV_nm,), (m,), (-1.0, 0.5), (-2.0, 0.5))
    expected = 4.0 / 3.0 * KAPPA_PER_NM * np.sqrt(m) * phi**1.5 / F_eV_nm
    assert float(wkb_exponent(b, 0.0)) == pytest.approx(expected, rel=1e-12)


def test_turning_point_inside_layer_against_quadrature():
    # Layer partly allowed: compare with direct quadrature of kappa (scipy.integrate.quad)
    b = Barrier((2.0, 3.0, 1.0), (1.0, 2.5, 0.8), (2.5, 0.2, 0.8), (0.5, 0.3, 0.9), (0.0, 0.5), (-1.0, 0.4))
    x_edges = b.interfaces_nm()
    for E in (0.3, 0.9, 1.7, 2.4):
        total = 0.0
        for i in range(b.n_layers):
            u0, u1, d, m = b.u_start_eV[i], b.u_end_eV[i], b.thickness_nm[i], b.mass[i]

            def kappa(x, u0=u0, u1=u1, d=d, m=m):
                return KAPPA_PER_NM * np.sqrt(m * max(u0 + (u1 - u0) * x / d - E, 0.0))

            turning = [] if u0 == u1 else [d * (E - u0) / (u1 - u0)]
            pts = [p for p in turning if 0 < p < d]
            total += integrate.quad(kappa, 0.0, d, points=pts or None, epsabs=0, epsrel=1e-12)[0]
        assert x_edges[-1] == pytest.approx(6.0)
        assert float(wkb_exponent(b, E)) == pytest.approx(2.0 * total, rel=1e-9)


def test_flat_limit_is_continuous():
    # contract: layers whose ends differ by 1e-12 eV behave like flat ones
    flat = Barrier((3.0,), (2.0,), (2.0,), (0.5,), (0.0, 0.5), (0.0, 0.5))
    tilted = Barrier((3.0,), (2.0,), (2.0 + 1e-12,), (0.5,), (0.0, 0.5), (0.0, 0.5))
    E = np.linspace(0.05, 1.95, 11)
    assert_allclose(wkb_transmission(tilted, E), wkb_transmission(flat, E), rtol=1e-10)
    # the exact flat value: exp(-2 kappa d)
    assert_allclose(wkb_transmission(flat, E), np.exp(-2 * KAPPA_PER_NM * np.sqrt(0.5 * (2.0 - E)) * 3.0), rtol=1e-12)


def test_leads_without_propagating_states_give_zero():
    b = Barrier((2.0,), (3.0,), (3.0,), (0.5,), (0.0, 0.5), (0.5, 0.5))
    T = wkb_transmission(b, np.array([-0.1, 0.0, 0.3, 0.5, 0.6]))
    assert np.all(T[:4] == 0.0) and T[4] > 0.0
    assert wkb_transmission(b, 0.6).shape == ()
    assert float(wkb_transmission(b, 3.5)) == 1.0  # nothing forbidden above the top


def test_rejects_nan_energy():
    b = Barrier((2.0,), (3.0,), (3.0,), (0.5,), (0.0, 0.5), (0.0, 0.5))
    with pytest.raises(ValueError, match=r"wkb_transmission: energy_eV must be finite, got energy_eV\[1\] = nan$"):
        wkb_transmission(b, [1.0, np.nan])
    # a long array still gives one line naming the first bad entry
    with pytest.raises(ValueError, match=r"energy_eV\[150\] = inf$"):
        wkb_transmission(b, np.where(np.arange(300) == 150, np.inf, 1.0))
    with pytest.raises(ValueError, match="barrier must be a solver.tunneling.Barrier"):
        wkb_transmission((2.0, 3.0), 1.0)


def test_ratio_of_logs_approaches_one_for_thick_barriers():
    # WKB vs the exact rectangular closed form (physics-data Sec. 6 item 1): the
    # logarithms differ by the prefactor ln(16 k^2 kappa^2 / (k^2 + kappa^2)^2)-like
    # term, which stays O(1) while ln T grows with d, so ln T_WKB / ln T -> 1 as 1/d.
    E, U, m = 1.0, 3.1, 0.5
    ratios = []
    for d in (1.0, 2.0, 4.0, 8.0, 16.0):
        b = Barrier((d,), (U,), (U,), (m,), (0.0, m), (0.0, m))
        ln_exact = np.log(rectangular_exact(E, U, d, m, (0.0, m), (0.0, m)))
        ratios.append(float(-wkb_exponent(b, E) / ln_exact))
    deviation = np.abs(np.array(ratios) - 1.0)
    assert np.all(np.diff(deviation) < 0)
    assert deviation[-1] < 0.01
    # and the deviation halves as d doubles (1/d law), within 15 %
    assert_allclose(deviation[1:] / deviation[:-1], 0.5, rtol=0.15)


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.tuples(st.floats(0.2, 5.0), st.floats(-1.0, 4.0), st.floats(-1.0, 4.0), st.floats(0.05, 1.5)),
             min_size=1, max_size=4),
    st.floats(-0.5, 3.5),
)
def test_reversal_symmetry_and_bounds(layers, energy):
    # WKB exponent is an integral over x: invariant under x -> L - x (common practice)
    d, u0, u1, m = zip(*layers)
    b = Barrier(d, u0, u1, m, (-2.0, 0.5), (-1.5, 0.3))
    t = float(wkb_transmission(b, energy))
    assert 0.0 <= t <= 1.0
    forward = float(wkb_exponent(b, energy))
    assert float(wkb_exponent(b.reversed(), energy)) == pytest.approx(forward, rel=1e-12, abs=1e-300)


def test_log_ratio_to_exact_transmission_for_thick_trapezoids():
    # Sloped layer (no closed form): against the exact Airy transfer matrix (Gundlach 1966),
    # the logarithms agree better and better as the trapezoid thickens at a fixed field
    from solver.tunneling.exact import transmission

    field, phi, m, E = 0.4, 3.1, 0.42, 0.2  # eV/nm (4 MV/cm)
    devs = []
    for d in (1.0, 2.0, 4.0, 6.0):
        b = Barrier((d,), (phi,), (phi - field * d,), (m,), (0.0, 0.5), (-field * d, 0.5))
        ln_exact = np.log(float(transmission(b, E)))
        devs.append(abs(float(-wkb_exponent(b, E)) / ln_exact - 1))
    assert np.all(np.diff(devs) < 0) and devs[-1] < 0.03
