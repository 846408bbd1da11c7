"""Eigenstates with position-dependent mass against closed forms."""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.optimize import brentq
from scipy.special import ai_zeros, jn_zeros, jv, yv

from solver.schrodinger import (
    Hamiltonian,
    eigenstates,
    eigenstates_si,
    radial_eigenstates,
    radial_eigenstates_si,
)
from solver.units import EV_TO_J, HBAR_J_S, M0_KG, NM_TO_M

# hbar^2 / (2 m0) in eV nm^2 from scipy.constants (physics-data sheet Sec. 1: 0.0380998)
K_EV_NM2 = HBAR_J_S**2 / (2 * M0_KG) / EV_TO_J / NM_TO_M**2


def orders(errors):
    errors = np.abs(np.asarray(errors))
    return np.log2(errors[:-1] / errors[1:])


def test_kinetic_constant():
    # physics-data sheet Sec. 1 (computed from CODATA 2022): hbar^2/2m0 = 0.0380998 eV nm^2
    assert_allclose(K_EV_NM2, 0.0380998, rtol=2e-6)


# ---------------------------------------------------------------- infinite well
def infinite_well_eV(n, mass, length_nm):
    # Griffiths, Introduction to Quantum Mechanics, 2nd ed., Sec. 2.2:
    # E_n = n^2 pi^2 hbar^2 / (2 m L^2)
    return (n * np.pi) ** 2 * K_EV_NM2 / (mass * length_nm**2)


def test_infinite_well_second_order_uniform():
    mass, L = 0.067, 10.0
    exact = infinite_well_eV(np.arange(1, 4), mass, L)
    errs = []
    for n in (101, 201, 401):
        x = np.linspace(0, L, n)
        E, _ = eigenstates(x, np.zeros(n), np.full(n, mass), 3)
        errs.append(np.max(np.abs(E - exact) / exact))
    assert errs[-1] < 6e-5  # 3rd level, 400 intervals: (pi h)^2/12 relative
    assert np.all(orders(errs) > 1.95)


def test_infinite_well_second_order_graded_grid():
    # Smoothly graded grid, nodes crowded at both walls (common practice for
    # interface refinement): x = L (s - 0.3 sin(2 pi s) / (2 pi)).
    mass, L = 0.19, 8.0
    exact = infinite_well_eV(np.arange(1, 4), mass, L)
    errs = []
    for n in (121, 241, 481):
        s = np.linspace(0, 1, n)
        x = L * (s - 0.3 * np.sin(2 * np.pi * s) / (2 * np.pi))
        E, _ = eigenstates(x, np.zeros(n), np.full(n, mass), 3)
        errs.append(np.max(np.abs(E - exact) / exact))
    assert errs[-1] < 1e-4
    assert np.all(orders(errs) > 1.9)


def test_infinite_well_second_order_irregular_grid():
    # An irregular grid (random spacings up to 3:1 next to each other), refined by
    # halving every interval: with constant mass the scheme is the linear finite-element
    # stiffness with a lumped (trapezoid) mass matrix, whose eigenvalues converge at second
    # order on any mesh (Strang & Fix, An Analysis of the Finite Element Method, Ch. 6,
    # from memory). Reference: Griffiths Sec. 2.2.
    mass, L = 0.5, 6.0
    exact = infinite_well_eV(np.arange(1, 4), mass, L)
    rng = np.random.default_rng(7)
    steps = rng.uniform(1.0, 3.0, 60)
    x = np.concatenate([[0.0], np.cumsum(steps)]) * (L / steps.sum())
    errs = []
    for _ in range(3):
        E, _ = eigenstates(x, np.zeros(x.size), np.full(x.size, mass), 3)
        errs.append(np.max(np.abs(E - exact) / exact))
        x = np.sort(np.concatenate([x, 0.5 * (x[:-1] + x[1:])]))
    assert np.all(orders(errs) > 1.9)


# ---------------------------------------------------------------- harmonic oscillator
def test_harmonic_oscillator():
    # Griffiths 2nd ed., Sec. 2.3: E_n = (n + 1/2) hbar omega for U = m omega^2 x^2 / 2
    mass, hw = 0.067, 0.05  # eV
    # U = (hbar omega)^2 x^2 / (4 K / m): m omega^2/2 = (hbar omega)^2 m m0 / (2 hbar^2)
    x = np.linspace(-40, 40, 4001)
    u = hw**2 * mass * x**2 / (4 * K_EV_NM2)
    E, psi = eigenstates(x, u, np.full(x.size, mass), 5)
    assert_allclose(E, (np.arange(5) + 0.5) * hw, rtol=2e-5)
    # parity of the states alternates (Griffiths Sec. 2.3)
    for k in range(5):
        assert_allclose(psi[::-1, k], (-1) ** k * psi[:, k], atol=1e-8)


# ---------------------------------------------------------------- triangular well
def triangular_grid(depth_nm, n):
    return np.linspace(0.0, depth_nm, n)


def test_triangular_well_airy_zeros():
    # Stern, Phys. Rev. B 5, 4891 (1972); Ando, Fowler, Stern, RMP 54, 437 (1982) Sec. III.A:
    # E_n = (hbar^2/2 m_z)^(1/3) (qF)^(2/3) |a_{n+1}|, a = zeros of Ai (scipy.special.ai_zeros)
    mz, F_eV_nm = 0.916, 0.1  # 1 MV/cm = 0.1 V/nm
    x = triangular_grid(30.0, 6001)  # U(30 nm) = 3 eV, far beyond the turning points
    E, psi = eigenstates(x, F_eV_nm * x, np.full(x.size, mz), 3)
    a = ai_zeros(3)[0]
    exact = (K_EV_NM2 / mz) ** (1 / 3) * F_eV_nm ** (2 / 3) * np.abs(a)
    assert_allclose(E, exact, rtol=1e-5)
    # physics-data sheet Sec. 7 (computed there from formula 6.8): 0.17453, 0.30515, 0.41209 eV
    assert_allclose(E, [0.17453, 0.30515, 0.41209], rtol=1e-4)
    # Stern 1972 / AFS Sec. III.A: mean depth <z>_n = 2 E_n / (3 qF)
    mean_z = np.trapezoid(x[:, None] * psi**2, x, axis=0)
    assert_allclose(mean_z, 2 * exact / (3 * F_eV_nm), rtol=1e-4)


def test_triangular_well_light_mass():
    # physics-data sheet Sec. 7: m_z 0.19 at 1 MV/cm gives 0.29484, 0.51550, 0.69616 eV
    x = triangular_grid(25.0, 5001)
    E, _ = eigenstates(x, 0.1 * x, np.full(x.size, 0.19), 3)
    assert_allclose(E, [0.29484, 0.51550, 0.69616], rtol=1e-4)


# ---------------------------------------------------------------- finite well with a mass step
def finite_well_levels(width_nm, depth_eV, m_well, m_barrier, count):
    """Bound levels of a square well with BenDaniel-Duke matching (psi and
    psi'/m continuous; BenDaniel & Duke, Phys. Rev. 152, 683 (1966)):
    even  (k/m_w) tan(k a/2) = kappa/m_b,  odd  -(k/m_w) cot(k a/2) = kappa/m_b."""

    def k_of(E):
        return np.sqrt(m_well * E / K_EV_NM2)

    def kappa_of(E):
        return np.sqrt(m_barrier * (depth_eV - E) / K_EV_NM2)

    def even(E):
        k = k_of(E)
        return k / m_well * np.sin(k * width_nm / 2) - kappa_of(E) / m_barrier * np.cos(k * width_nm / 2)

    def odd(E):
        k = k_of(E)
        return k / m_well * np.cos(k * width_nm / 2) + kappa_of(E) / m_barrier * np.sin(k * width_nm / 2)

    grid = np.linspace(1e-9, depth_eV * (1 - 1e-12), 20001)
    roots = []
    for f in (even, odd):
        values = f(grid)
        for i in np.nonzero(np.sign(values[:-1]) != np.sign(values[1:]))[0]:
            roots.append(brentq(f, grid[i], grid[i + 1], xtol=1e-15, rtol=1e-14))
    roots = np.sort(roots)
    assert roots.size >= count
    return roots[:count]


def test_finite_well_mass_step_midway_second_order():
    a, V0, mw, mb = 10.0, 0.5, 0.067, 0.092
    exact = finite_well_levels(a, V0, mw, mb, 3)
    errs = []
    for half in (16, 32, 64):  # nodes per half well width
        h = (a / 2) / half
        N = int(round(25.0 / h))
        x = h * (np.arange(-N, N) + 0.5)  # the steps at +-a/2 lie midway between nodes
        inside = np.abs(x) < a / 2
        u = np.where(inside, 0.0, V0)
        m = np.where(inside, mw, mb)
        E, psi = eigenstates(x, u, m, 3)
        errs.append(np.max(np.abs(E - exact) / exact))
    assert errs[-1] < 5e-4  # h = 0.078 nm
    assert np.all(orders(errs) > 1.9)


def test_finite_well_mass_step_on_a_node_with_link_masses_second_order():
    # Steps at +-a/2 exactly on nodes: each link carries its own material's mass and the
    # step node the box average of U (half well, half barrier), against the
    # BenDaniel-Duke levels above; the nodal-mass average alone would be first order here
    a, V0, mw, mb = 10.0, 0.5, 0.067, 0.092
    exact = finite_well_levels(a, V0, mw, mb, 3)
    errs, errs_nodal = [], []
    for half in (16, 32, 64):
        h = (a / 2) / half
        N = int(round(25.0 / h))
        x = h * np.arange(-N, N + 1)
        inside = np.abs(x) < a / 2 - 1e-9 * h
        step = np.abs(np.abs(x) - a / 2) < 1e-9 * h
        u = np.where(inside, 0.0, V0)
        u[step] = 0.5 * V0
        mid = 0.5 * (x[:-1] + x[1:])
        link_mass = np.where(np.abs(mid) < a / 2, mw, mb)
        m = np.where(inside | step, mw, mb)
        ham = Hamiltonian.planar(x * NM_TO_M, m, link_mass=link_mass)
        E = ham.solve(u * EV_TO_J, 3)[0] / EV_TO_J
        errs.append(np.max(np.abs(E - exact) / exact))
        E_nodal = eigenstates(x, u, m, 3)[0]
        errs_nodal.append(np.max(np.abs(E_nodal - exact) / exact))
    assert errs[-1] < 5e-4
    assert np.all(orders(errs) > 1.9)
    assert np.all(orders(errs_nodal) < 1.5)  # first order without the link masses
    with pytest.raises(ValueError, match="link_mass must have one value per link"):
        Hamiltonian.planar(x * NM_TO_M, m, link_mass=link_mass[:-1])


def test_mass_step_flux_continuity():
    # BenDaniel & Duke 1966: (1/m) psi' continuous across the step; compare the
    # one-sided slopes next to the interface in the finest grid.
    a, V0, mw, mb = 5.0, 0.3, 0.067, 0.2
    h = 0.0125
    N = int(round(25.0 / h))
    x = h * (np.arange(-N, N) + 0.5)
    inside = np.abs(x) < a / 2
    E, psi = eigenstates(x, np.where(inside, 0.0, V0), np.where(inside, mw, mb), 1)
    i = np.nonzero(inside)[0][-1]  # last node in the well
    slope_in = (psi[i, 0] - psi[i - 1, 0]) / h / mw
    slope_out = (psi[i + 2, 0] - psi[i + 1, 0]) / h / mb
    assert_allclose(slope_in, slope_out, rtol=2e-2)
    assert abs(mw / mb - 1) > 0.5  # the test is meaningful only with a clear step


# ---------------------------------------------------------------- normalisation, signs, shapes
def test_normalisation_orthogonality_and_signs():
    rng = np.random.default_rng(1)
    x = np.sort(np.concatenate([[0.0, 12.0], rng.uniform(0, 12, 300)]))
    u = 0.2 * np.sin(x) + 0.01 * x**2
    m = np.where(x < 6, 0.2, 0.5)
    E, psi = eigenstates(x, u, m, 4)
    assert E.shape == (4,) and psi.shape == (x.size, 4)
    assert np.all(np.diff(E) > 0)
    gram = np.array([[np.trapezoid(psi[:, i] * psi[:, j], x) for j in range(4)] for i in range(4)])
    assert_allclose(gram, np.eye(4), atol=1e-12)
    assert np.all(psi[0] == 0) and np.all(psi[-1] == 0)
    for k in range(4):
        col = psi[:, k]
        first = np.argmax(np.abs(col) >= 0.01 * np.abs(col).max())
        assert col[first] > 0


def test_si_and_prepared_operator_agree():
    x_nm = np.linspace(0, 10, 201)
    u_eV = 0.05 * x_nm
    m = np.full(x_nm.size, 0.3)
    E, psi = eigenstates(x_nm, u_eV, m, 3)
    E_J, psi_si = eigenstates_si(x_nm * NM_TO_M, u_eV * EV_TO_J, m, 3)
    assert_allclose(E_J / EV_TO_J, E, rtol=1e-12)
    assert_allclose(psi_si * NM_TO_M**0.5, psi, rtol=1e-9, atol=1e-12)
    ham = Hamiltonian.planar(x_nm * NM_TO_M, m)
    for shift in (0.0, 0.1):
        E2, _ = ham.solve((u_eV + shift) * EV_TO_J, 3)
        assert_allclose(E2 / EV_TO_J, E + shift, rtol=1e-11)
    assert_allclose(np.sum(ham.weights_m[:, None] * psi_si**2, axis=0), 1.0, rtol=1e-12)


@settings(max_examples=20, deadline=None)
@given(
    shift=st.floats(-5, 5),
    mass=st.floats(0.05, 2.0),
    n=st.integers(20, 200),
)
def test_constant_shift_moves_every_level(shift, mass, n):
    # A constant added to U shifts every eigenvalue by that constant (exact).
    x = np.linspace(0, 5, n)
    u = 0.3 * (x / 5) ** 2
    E0, psi0 = eigenstates(x, u, np.full(n, mass), 2)
    E1, psi1 = eigenstates(x, u + shift, np.full(n, mass), 2)
    assert_allclose(E1, E0 + shift, atol=1e-10 * (1 + abs(shift)))
    assert_allclose(psi1, psi0, atol=1e-7)


@pytest.mark.parametrize(
    "args, match",
    [
        ((np.array([0.0, 1.0, 1.0, 2.0]), np.zeros(4), np.ones(4), 1), r"x_nm must be strictly increasing"),
        ((np.linspace(0, 1, 5), np.zeros(4), np.ones(5), 1), r"u_eV must have the grid's length 5"),
        ((np.linspace(0, 1, 5), np.zeros(5), np.ones(4), 1), r"mass must have the grid's length 5"),
        ((np.linspace(0, 1, 5), np.zeros(5), np.array([1, 1, 0, 1, 1.0]), 1), r"mass must be > 0"),
        ((np.linspace(0, 1, 5), np.zeros(5), np.ones(5), 0), r"count must be between 1 and 3"),
        ((np.linspace(0, 1, 5), np.zeros(5), np.ones(5), 4), r"count must be between 1 and 3"),
        ((np.linspace(0, 1, 5), np.array([0, np.nan, 0, 0, 0.0]), np.ones(5), 1), r"u_eV must be finite"),
        ((np.array([0, np.nan, 2, 3.0]), np.zeros(4), np.ones(4), 1), r"x_nm must be finite"),
        ((np.linspace(0, 1, 5), np.zeros(5), np.array([1, 1, np.nan, 1, 1.0]), 1), r"mass must be finite"),
    ],
)
def test_bad_input_names_the_argument(args, match):
    with pytest.raises(ValueError, match=match):
        eigenstates(*args)


# ---------------------------------------------------------------- cylindrical radial
@pytest.mark.parametrize("l", [0, 1, 2])
def test_hard_wall_disc_bessel_zeros(l):
    # Hard-wall disc of radius R: E = hbar^2 j_{l,k}^2 / (2 m R^2), j_{l,k} zeros of J_l
    # (standard separation of variables, e.g. Arfken & Weber, Mathematical Methods,
    # Bessel functions chapter; zeros from scipy.special.jn_zeros).
    mass, R = 0.2, 5.0
    exact = jn_zeros(l, 3) ** 2 * K_EV_NM2 / (mass * R**2)
    errs = []
    for n in (101, 201, 401):
        r = np.linspace(0, R, n)
        E, psi = radial_eigenstates(r, np.zeros(n), np.full(n, mass), 3, angular_momentum=l)
        errs.append(np.max(np.abs(E - exact) / exact))
    assert errs[-1] < 1e-4
    assert np.all(orders(errs) > 1.9)
    # the radial function of the ground state follows J_l(j r / R) (scipy.special.jv)
    j1 = jn_zeros(l, 1)[0]
    ref = jv(l, j1 * r / R)
    ref /= np.sqrt(np.trapezoid(ref**2 * r, r))
    assert_allclose(psi[:, 0], ref, atol=2e-3 * ref.max())


def test_annulus_cross_product_zeros():
    # Hard-wall annulus a < r < b: J_l(k a) Y_l(k b) - J_l(k b) Y_l(k a) = 0
    # (separation of variables; J, Y from scipy.special.jv / yv).
    mass, a, b, l = 0.3, 2.0, 6.0, 1

    def f(k):
        return jv(l, k * a) * yv(l, k * b) - jv(l, k * b) * yv(l, k * a)

    ks = np.linspace(0.05, 3.0, 3000)
    v = f(ks)
    roots = [brentq(f, ks[i], ks[i + 1], xtol=1e-14) for i in np.nonzero(np.sign(v[:-1]) != np.sign(v[1:]))[0]]
    exact = np.array(roots[:2]) ** 2 * K_EV_NM2 / mass
    r = np.linspace(a, b, 801)
    E, psi = radial_eigenstates(r, np.zeros(r.size), np.full(r.size, mass), 2, angular_momentum=l)
    assert_allclose(E, exact, rtol=2e-5)
    assert np.all(psi[0] == 0) and np.all(psi[-1] == 0)


def test_radial_si_and_bad_input():
    r_nm = np.linspace(0, 4, 101)
    E, psi = radial_eigenstates(r_nm, np.zeros(101), np.full(101, 0.2), 2)
    E_J, psi_si = radial_eigenstates_si(r_nm * NM_TO_M, np.zeros(101), np.full(101, 0.2), 2)
    assert_allclose(E_J / EV_TO_J, E, rtol=1e-12)
    assert_allclose(psi_si * NM_TO_M, psi, rtol=1e-9, atol=1e-12)
    assert psi[0, 0] > 0  # l = 0 on the axis is not a Dirichlet node
    with pytest.raises(ValueError, match=r"r_nm must be >= 0"):
        radial_eigenstates(np.linspace(-1, 1, 5), np.zeros(5), np.ones(5), 1)
    with pytest.raises(ValueError, match=r"angular_momentum must be >= 0"):
        radial_eigenstates(r_nm, np.zeros(101), np.ones(101), 1, angular_momentum=-1)
