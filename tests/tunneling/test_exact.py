"""Exact transmission against closed forms, published check values and slow twins."""
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar

from solver.tunneling import Barrier, transmission
from solver.tunneling._kernels import FLAT_LAMBDA_D
from solver.tunneling.exact import transfer_matrix
from solver.units import EV_TO_J, HBAR_J_S, M0_KG, NM_TO_M
from tests.tunneling import naive


def _k_per_nm(mass, energy_eV):
    """sqrt(2 m m0 E)/hbar in nm^-1 (scipy.constants via solver.units)."""
    return np.sqrt(2 * mass * M0_KG * energy_eV * EV_TO_J) / HBAR_J_S * NM_TO_M


def _rectangular_closed_form(E, U, d, mb, left, right):
    """physics-data.md sec. 6 item 1 (BenDaniel & Duke matching), below and above the barrier."""
    (uL, mL), (uR, mR) = left, right
    a = _k_per_nm(mL, E - uL) / mL
    c = _k_per_nm(mR, E - uR) / mR
    below = E < U
    kb = _k_per_nm(mb, np.abs(U - E))
    b = kb / mb
    x = kb * d
    t_below = 4 * a * c * b**2 / (b**2 * (a + c) ** 2 * np.cosh(x) ** 2 + (b**2 - a * c) ** 2 * np.sinh(x) ** 2)
    t_above = 4 * a * c * b**2 / (b**2 * (a + c) ** 2 * np.cos(x) ** 2 + (b**2 + a * c) ** 2 * np.sin(x) ** 2)
    return np.where(below, t_below, t_above)


def _log_rectangular_closed_form(E, U, d, mb, left, right):
    """ln T of the same closed form written in logarithms (cosh, sinh ~ e^x/2), for T far below 1e-300."""
    (uL, mL), (uR, mR) = left, right
    a = _k_per_nm(mL, E - uL) / mL
    c = _k_per_nm(mR, E - uR) / mR
    kb = _k_per_nm(mb, U - E)
    b = kb / mb
    x = kb * d
    g = np.exp(-2 * x)
    bracket = b**2 * (a + c) ** 2 * (1 + g) ** 2 + (b**2 - a * c) ** 2 * (1 - g) ** 2
    return np.log(4 * a * c * b**2) - (2 * x - np.log(4) + np.log(bracket))


# --- check values of physics-data.md sec. 7 (computed there: closed form = transfer matrix) ---

@pytest.mark.parametrize(
    "E, U, d, mb, left, right, expected",
    [
        (1.0, 3.1, 2.0, 0.5, (0.0, 1.0), (0.0, 1.0), 1.88680e-9),
        (0.1, 3.1, 1.5, 0.5, (0.0, 0.916), (0.0, 0.19), 3.85709e-9),
        (0.5, 2.0, 3.0, 0.4, (0.0, 0.3), (0.2, 1.0), 8.82581e-11),
    ],
)
def test_rectangular_check_values(E, U, d, mb, left, right, expected):
    # physics-data.md sec. 7 (6 significant digits: half a unit in the last digit)
    b = Barrier((d,), (U,), (U,), (mb,), left=left, right=right)
    T = transmission(b, E)
    assert T.shape == ()
    assert abs(T / expected - 1) < 0.5e-5 * 1.000001
    # and the closed form of sec. 6 item 1 itself, to round-off
    assert abs(T / _rectangular_closed_form(E, U, d, mb, left, right) - 1) < 1e-12


def test_rectangular_closed_form_with_mass_steps_all_energies():
    # physics-data.md sec. 6 item 1, below and above the barrier top
    left, right = (0.0, 0.19), (-0.4, 0.916)
    b = Barrier((1.7,), (2.05,), (2.05,), (0.5,), left=left, right=right)
    E = np.concatenate([np.linspace(0.01, 2.04, 300), np.linspace(2.06, 8.0, 300)])
    np.testing.assert_allclose(transmission(b, E), _rectangular_closed_form(E, 2.05, 1.7, 0.5, left, right), rtol=1e-11)


@pytest.mark.parametrize(
    "start, end, d, mb, E, left, right, expected",
    [
        (3.1, 0.1, 4.0, 0.5, 0.0, (-0.5, 0.5), (-3.0, 0.5), 9.47309e-16),
        (3.1, 1.1, 3.0, 0.42, 0.2, (0.0, 0.5), (-2.0, 1.0), 3.027721e-12),
    ],
)
def test_linear_layer_check_values(start, end, d, mb, E, left, right, expected):
    # Gundlach, Solid-State Electron. 9, 949 (1966): exact Airy solution of the
    # trapezoidal barrier; check values of physics-data.md sec. 7 (Airy matrix vs
    # 4000-slice staircase there), compared to half a unit of the last digit
    b = Barrier((d,), (start,), (end,), (mb,), left=left, right=right)
    digits = len(f"{expected:e}".split("e")[0].replace(".", "").rstrip("0"))
    assert abs(transmission(b, E) / expected - 1) < 0.5 * 10.0 ** (1 - digits) * 1.01
    assert abs(transmission(b.reversed(), E) / expected - 1) < 0.5 * 10.0 ** (1 - digits) * 1.01


def _random_stack(rng, n, sloped_fraction=0.5):
    th = rng.uniform(0.3, 3.0, n)
    u0 = rng.uniform(-1.0, 4.0, n)
    u1 = np.where(rng.random(n) < sloped_fraction, rng.uniform(-1.0, 4.0, n), u0)
    return Barrier(th, u0, u1, rng.uniform(0.1, 1.0, n),
                   left=(rng.uniform(-1.0, 0.5), rng.uniform(0.1, 1.0)),
                   right=(rng.uniform(-3.0, 0.5), rng.uniform(0.1, 1.0)))


def test_against_naive_twin_random_stacks():
    # tests/tunneling/naive.py: complex matrices with scipy.special.airy/airye
    rng = np.random.default_rng(7)
    E = np.linspace(0.55, 5.0, 200)
    for _ in range(12):
        b = _random_stack(rng, int(rng.integers(1, 6)))
        T, ref = transmission(b, E), naive.transmission(b, E)
        ok = ref > 1e-280
        np.testing.assert_allclose(T[ok], ref[ok], rtol=1e-9)
        assert np.all(T[~ok] < 1e-270)


# --- resonant tunnelling through a double barrier ---

def _finite_well_levels(V0, w, m_well, m_barrier):
    """Bound states of a finite square well, BenDaniel-Duke matching:
    (k/m_w) tan(k w/2) = kappa/m_b (even), -(k/m_w) cot(k w/2) = kappa/m_b (odd).
    Griffiths, Introduction to Quantum Mechanics, 2nd ed., Sec. 2.6 (equal masses);
    G. Bastard, Phys. Rev. B 24, 5693 (1981) for the mass ratio (from memory)."""
    def even(E):
        k, kap = _k_per_nm(m_well, E), _k_per_nm(m_barrier, V0 - E)
        return k / m_well * np.sin(k * w / 2) - kap / m_barrier * np.cos(k * w / 2)

    def odd(E):
        k, kap = _k_per_nm(m_well, E), _k_per_nm(m_barrier, V0 - E)
        return -k / m_well * np.cos(k * w / 2) - kap / m_barrier * np.sin(k * w / 2)

    grid = np.linspace(1e-9, V0 - 1e-9, 20001)
    levels = []
    for f in (even, odd):
        v = f(grid)
        for i in np.flatnonzero(np.sign(v[:-1]) != np.sign(v[1:])):
            levels.append(brentq(f, grid[i], grid[i + 1], xtol=1e-15))
    return sorted(levels)


@pytest.mark.parametrize("m_well, m_barrier", [(0.067, 0.067), (0.067, 0.092)])
def test_double_barrier_resonances_at_finite_well_levels(m_well, m_barrier):
    V0, w, db = 0.3, 6.0, 5.0
    b = Barrier((db, w, db), (V0, 0.0, V0), (V0, 0.0, V0), (m_barrier, m_well, m_barrier),
                left=(0.0, m_well), right=(0.0, m_well))
    levels = _finite_well_levels(V0, w, m_well, m_barrier)
    assert len(levels) >= 2
    E1 = levels[0]
    res = minimize_scalar(lambda e: -float(transmission(b, e)), bounds=(0.9 * E1, 1.1 * E1),
                          method="bounded", options=dict(xatol=1e-13))
    E_peak, T_peak = res.x, -res.fun
    # symmetric structure: T -> 1 at resonance (common practice: a symmetric double barrier is transparent there)
    assert T_peak > 1 - 1e-8
    assert T_peak <= 1.0
    # width of the peak (half maximum on each side)
    lo = brentq(lambda e: float(transmission(b, e)) - T_peak / 2, 0.9 * E1, E_peak)
    hi = brentq(lambda e: float(transmission(b, e)) - T_peak / 2, E_peak, 1.1 * E1)
    # the level of the well with infinitely thick barriers lies within the
    # resonance width (the 5 nm barriers shift it by less than the width)
    assert abs(E_peak - E1) < (hi - lo)
    assert (hi - lo) < 1e-2 * E1


def test_sharp_resonance_never_exceeds_one():
    # thick barriers: a resonance of relative width ~1e-9; scan across it
    b = Barrier((8.0, 6.0, 8.0), (0.3, 0.0, 0.3), (0.3, 0.0, 0.3), (0.067,) * 3, left=(0.0, 0.067), right=(0.0, 0.067))
    E1 = _finite_well_levels(0.3, 6.0, 0.067, 0.067)[0]
    res = minimize_scalar(lambda e: -float(transmission(b, e)), bounds=(E1 - 1e-4, E1 + 1e-4),
                          method="bounded", options=dict(xatol=1e-15))
    E = res.x + np.linspace(-1e-9, 1e-9, 20001)
    T = transmission(b, E)
    assert np.all(T <= 1.0) and np.all(T >= 0.0)
    assert T.max() > 0.9


# --- symmetry, flat limit, tiny T, shapes, edge cases ---

def test_reversal_symmetry_sloped_stack():
    # common practice: T is symmetric under x -> -x for the same absolute energy
    b = Barrier((2.0, 1.0, 3.0), (3.1, 1.9, 2.5), (2.6, 1.6, 0.7), (0.42, 0.5, 0.3), left=(0.0, 0.19), right=(-2.0, 1.0))
    E = np.linspace(0.01, 4.0, 500)
    np.testing.assert_allclose(transmission(b.reversed(), E), transmission(b, E), rtol=1e-10)


@pytest.mark.parametrize("delta_eV", [1e-12, 1e-9, 1e-6])
def test_flat_limit_continuity(delta_eV):
    # a layer whose ends differ by delta_eV is within O(delta) of the flat layer:
    # (T(delta) - T(0)) / delta must be the (finite) derivative, the same for all delta
    U, d, m = 3.1, 2.0, 0.5
    E = np.array([0.5, 1.0, 3.0, 3.1, 3.1 + 1e-7, 3.2, 4.0, 6.0])
    flat = transmission(Barrier((d,), (U,), (U,), (m,), (0.0, 1.0), (0.0, 0.3)), E)
    ref_slope = (transmission(Barrier((d,), (U,), (U + 1e-4,), (m,), (0.0, 1.0), (0.0, 0.3)), E) - flat) / 1e-4
    T = transmission(Barrier((d,), (U,), (U + delta_eV,), (m,), (0.0, 1.0), (0.0, 0.3)), E)
    # first-order change plus round-off: near the turning point the Airy form
    # loses eps/(lambda d) ~ 3e-13 (see FLAT_LAMBDA_D in _kernels)
    assert np.all(np.abs(T - flat - delta_eV * ref_slope) <= 1e-3 * delta_eV * np.abs(ref_slope) + 1e-12 * flat)


def test_flat_switch_is_continuous():
    # the Airy form and the midpoint flat form agree across FLAT_LAMBDA_D
    U, d, m = 3.1, 2.0, 0.5
    C = 2 * M0_KG * NM_TO_M**2 / HBAR_J_S**2 * EV_TO_J
    # lambda d = (m C s)^(1/3) d with s = delta/d  ->  delta at the switch
    delta = FLAT_LAMBDA_D**3 / (m * C * d**2)
    E = np.array([0.5, 3.1 - 1e-6, 3.1 + delta / 2, 3.3, 5.0])
    T = [transmission(Barrier((d,), (U,), (U + f * delta,), (m,), (0.0, 1.0), (0.0, 0.3)), E) for f in (0.999, 1.001)]
    np.testing.assert_allclose(T[0], T[1], rtol=1e-11)


@pytest.mark.parametrize("d", [20.0, 30.0, 40.0])
def test_tiny_transmission_rectangular_in_logs(d):
    # sec. 6 item 1 written in logarithms; T from ~1e-60 to ~1e-200 and below
    left, right = (0.0, 0.19), (-0.3, 0.916)
    E = np.array([0.3, 1.0, 2.0])
    b = Barrier((d,), (3.1,), (3.1,), (0.5,), left=left, right=right)
    T = transmission(b, E)
    ln_ref = _log_rectangular_closed_form(E, 3.1, d, 0.5, left, right)
    assert np.all(ln_ref > np.log(1e-300)) or d == 40.0
    ok = ln_ref > np.log(1e-300)
    np.testing.assert_allclose(np.log(T[ok]), ln_ref[ok], atol=1e-9)
    assert np.all(np.isfinite(T)) and np.all(T >= 0)


def test_tiny_transmission_sloped_vs_log_staircase():
    # a trapezoid with T ~ 1e-200: Richardson-extrapolated midpoint staircases in
    # log space (tests/tunneling/naive.py), error O(h^4)
    b = Barrier((22.0, 16.0), (4.0, 3.0), (3.0, 2.6), (0.5, 0.42), left=(0.0, 0.5), right=(-1.0, 1.0))
    E = np.array([0.2, 1.0])
    l1 = naive.staircase_log_transmission(b, E, 800)
    l2 = naive.staircase_log_transmission(b, E, 1600)
    ref = (4 * l2 - l1) / 3
    T = transmission(b, E)
    assert np.all(T < 1e-150) and np.all(T > 1e-300)
    np.testing.assert_allclose(np.log(T), ref, atol=1e-6)     # 1e-6 relative in T


def test_far_below_double_range_is_zero_not_nan():
    b = Barrier((80.0,), (3.1,), (3.1,), (0.5,), left=(0.0, 0.5), right=(0.0, 0.5))
    T = transmission(b, [0.5, 1.0])
    assert np.all(T == 0.0) or np.all(T < 1e-300)
    assert np.all(np.isfinite(T))


def test_shapes():
    b = Barrier((2.0,), (3.1,), (2.0,), (0.5,), left=(0.0, 0.5), right=(-1.0, 0.5))
    assert transmission(b, 1.0).shape == ()
    assert isinstance(transmission(b, 1.0), np.ndarray)
    E = np.linspace(0.1, 3.0, 12).reshape(3, 4)
    T = transmission(b, E)
    assert T.shape == (3, 4)
    np.testing.assert_array_equal(T.ravel(), transmission(b, E.ravel()))
    assert transmission(b, np.array([])).shape == (0,)


def test_zero_without_propagating_lead_states():
    # contract: T = 0 where either lead has no propagating state
    b = Barrier((2.0,), (3.1,), (3.1,), (0.5,), left=(0.0, 0.5), right=(1.0, 0.5))
    T = transmission(b, np.array([-1.0, 0.0, 0.5, 1.0, 1.5]))
    np.testing.assert_array_equal(T[:4], 0.0)
    assert T[4] > 0


def test_invalid_input():
    b = Barrier((2.0,), (3.1,), (3.1,), (0.5,), left=(0.0, 0.5), right=(0.0, 0.5))
    with pytest.raises(ValueError, match="energy_eV must be finite"):
        transmission(b, [1.0, math.nan])
    with pytest.raises(ValueError, match="barrier must be a solver.tunneling.Barrier"):
        transmission("oxide", 1.0)
    with pytest.raises(ValueError, match=r"transmission: energy_eV must be a real number or an array of them, got 'x'"):
        transmission(b, "x")
    with pytest.raises(ValueError, match="energy_eV must be a real number"):
        transmission(b, [1.0, [2.0]])
    with pytest.raises(ValueError, match="energy_eV must be a real number"):
        transmission(b, 1 + 1j)


def test_thin_and_extreme_layers_finite():
    b = Barrier((1e-6, 0.01, 50.0, 1e-3), (5.0, -2.0, 0.5, 100.0), (-5.0, -2.0, 0.4, 100.0), (0.1, 2.0, 0.3, 0.05),
                left=(-3.0, 0.2), right=(-3.0, 0.2))
    E = np.linspace(-2.9, 200.0, 2001)
    T = transmission(b, E)
    assert np.all(np.isfinite(T)) and np.all((T >= 0) & (T <= 1))
    np.testing.assert_allclose(transmission(b.reversed(), E), T, rtol=1e-7, atol=1e-300)


_layer = st.tuples(
    st.floats(0.05, 6.0),                 # thickness_nm
    st.floats(-2.0, 5.0),                 # u_start_eV
    st.floats(-2.0, 5.0),                 # u_end_eV
    st.floats(0.05, 1.2),                 # mass
    st.booleans(),                        # flat
)


@settings(max_examples=40, deadline=None)
@given(layers=st.lists(_layer, min_size=1, max_size=5),
       left=st.tuples(st.floats(-2.0, 1.0), st.floats(0.05, 1.2)),
       right=st.tuples(st.floats(-2.0, 1.0), st.floats(0.05, 1.2)),
       energies=st.lists(st.floats(-2.5, 8.0), min_size=1, max_size=16))
def test_property_random_stacks(layers, left, right, energies):
    th, u0, u1, m, flat = zip(*layers)
    u1 = tuple(a if f else b for a, b, f in zip(u0, u1, flat))
    b = Barrier(th, u0, u1, m, left=left, right=right)
    E = np.array(energies)
    T = transmission(b, E)
    assert np.all(np.isfinite(T)) and np.all((T >= 0) & (T <= 1))
    Tr = transmission(b.reversed(), E)
    # symmetric to round-off times the conditioning of T: with T = 1/(1 + X),
    # X is a sum of squares of differences of matrix entries; the same sum
    # without cancellation, X_abs, bounds the round-off, eps X_abs, so
    # |dT/T| <~ T eps X_abs (large only at sharp resonances of opaque stacks)
    p11, p12, p21, p22, logs = transfer_matrix(b, E)
    (uL, mL), (uR, mR) = b.left, b.right
    a = _k_per_nm(mL, np.maximum(E - uL, 1e-300)) / mL
    c = _k_per_nm(mR, np.maximum(E - uR, 1e-300)) / mR
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        x_abs = np.exp(2 * logs) * ((a * abs(p22) + c * abs(p11)) ** 2 + (abs(p21) + a * c * abs(p12)) ** 2) / (4 * a * c)
    x_abs = np.where(T > 0, x_abs, 0.0)          # closed lead: T = 0 exactly on both sides
    allowed = (1e-9 + 1e3 * np.finfo(float).eps * T * x_abs) * T
    assert np.all(np.abs(Tr - T) <= allowed + 1e-300)


def test_branch_free_flat_layer_matches_library_functions():
    # the polynomial exp/sin/cos of the vectorised kernel against libm (math.expm1, math.sin, math.cos)
    import numba

    from solver.tunneling._kernels import _flat_layer, _flat_layer_poly

    @numba.njit(error_model="numpy")
    def both(q, mu, d):
        out = np.empty((2, 5, q.size))
        for j in range(q.size):
            a = _flat_layer(q[j], mu, d)
            b = _flat_layer_poly(q[j], mu, d)
            for k in range(5):
                out[0, k, j] = a[k]
                out[1, k, j] = b[k]
        return out

    q = np.concatenate([np.linspace(-3000.0, 3000.0, 60001), np.logspace(-20, 4, 500), -np.logspace(-20, 4, 500), [0.0]])
    lib, poly = both(q, 0.4, 1.7)
    # diagonal: relative for cosh, absolute for cos; off-diagonal: relative to mu d, q d / mu
    np.testing.assert_allclose(poly[0], lib[0], rtol=1e-15, atol=1e-15)
    np.testing.assert_allclose(poly[1], lib[1], rtol=1e-14, atol=1e-15 * 0.4 * 1.7)
    np.testing.assert_allclose(poly[2], lib[2], rtol=1e-14, atol=1e-15 * np.abs(q).max() * 1.7 / 0.4)
    np.testing.assert_array_equal(poly[4], lib[4])


def test_very_large_phase_layer_uses_library_path():
    # phase k d ~ 2e5 rad: beyond the polynomial reduction (POLY_PHASE_MAX), still exact;
    # compared with the complex-matrix twin (its phase error is eps * k d ~ 4e-11)
    b = Barrier((0.5, 5000.0, 0.5), (2.0, -1.0, 2.0), (2.0, -1.0, 2.0), (0.3, 1.0, 0.3), left=(0.0, 0.5), right=(0.0, 0.5))
    E = np.linspace(45.0, 50.0, 7)
    np.testing.assert_allclose(transmission(b, E), naive.transmission(b, E), rtol=1e-8)


def test_many_layers_renormalised_product():
    # 300 flat layers (T far below 1e-300 at low energy): ln T against the log-scaled complex
    # twin, exact for flat layers with one slice (tests/tunneling/naive.py)
    rng = np.random.default_rng(11)
    n = 300
    u = np.where(np.arange(n) % 2 == 0, rng.uniform(1.0, 3.0, n), rng.uniform(-0.3, 0.3, n))
    b = Barrier(rng.uniform(0.3, 1.5, n), u, u, rng.uniform(0.2, 0.6, n), left=(0.0, 0.5), right=(0.0, 0.5))
    E = np.linspace(0.05, 3.5, 60)
    T = transmission(b, E)
    ln_ref = naive.staircase_log_transmission(b, E, 1)
    ok = ln_ref > np.log(1e-300)
    assert (~ok).any() and ok.any()
    np.testing.assert_allclose(np.log(T[ok]), ln_ref[ok], atol=1e-8)
    assert np.all(T[~ok] < 1e-290)
