"""Staircase (piecewise-constant) transmission: convergence, agreement, input checks."""
import numpy as np
import pytest

from solver.tunneling import Barrier, staircase_transmission, transmission
from solver.tunneling.staircase import staircase_transmission_profile
from tests.tunneling import naive

TRAPEZOID = Barrier((4.0,), (3.1,), (0.1,), (0.5,), left=(-0.5, 0.5), right=(-3.0, 0.5))
STACK = Barrier((2.0, 3.0, 3.5), (3.1, 1.9, 2.3), (2.5, 1.2, 1.4), (0.42, 0.5, 0.42), left=(0.0, 0.19), right=(-3.0, 1.0))


@pytest.mark.parametrize("barrier, E", [(TRAPEZOID, np.array([0.0, 1.0, 3.5])), (STACK, np.array([0.3, 1.5, 2.8]))])
def test_second_order_convergence_to_airy(barrier, E):
    # midpoint slicing: error ~ h^2 (common practice); reference is the exact Airy
    # form (Gundlach 1966), physics-data.md sec. 7 quotes 1.5e-7 at 4000 slices
    exact = transmission(barrier, E)
    errs = [np.abs(np.log(staircase_transmission(barrier, E, n) / exact)) for n in (32, 64, 128, 256)]
    orders = np.log2(np.array(errs[:-1]) / np.array(errs[1:]))
    assert np.all(orders > 1.9) and np.all(np.abs(orders[-1] - 2) < 0.05)
    assert np.all(errs[-1] < 1e-3)


def test_flat_layers_are_exact_with_one_slice():
    b = Barrier((1.0, 2.0, 1.5), (3.1, 0.0, 2.0), (3.1, 0.0, 2.0), (0.5, 0.3, 0.4), left=(0.0, 0.3), right=(0.2, 1.0))
    E = np.linspace(0.25, 5.0, 200)
    # reference: the complex-matrix twin of tests/tunneling/naive.py (plain numpy, flat layers exact)
    ref = naive.transmission(b, E)
    np.testing.assert_allclose(staircase_transmission(b, E, 1), ref, rtol=1e-11)
    np.testing.assert_allclose(staircase_transmission(b, E, 7), ref, rtol=1e-11)


def test_matches_naive_staircase():
    # tests/tunneling/naive.py: the same slicing with complex matrices
    E = np.linspace(0.05, 3.5, 40)
    np.testing.assert_allclose(staircase_transmission(STACK, E, 50), naive.staircase_transmission(STACK, E, 50),
                               rtol=1e-10)


def test_extra_potential():
    E = np.array([0.5, 1.5])
    zero = staircase_transmission(STACK, E, 40, extra_potential_eV=lambda x: np.zeros_like(x))
    np.testing.assert_array_equal(zero, staircase_transmission(STACK, E, 40))
    # a constant shift of the barrier by -0.2 eV is the same as shifting the layers
    shifted = Barrier(STACK.thickness_nm, np.subtract(STACK.u_start_eV, 0.2), np.subtract(STACK.u_end_eV, 0.2),
                      STACK.mass, STACK.left, STACK.right)
    np.testing.assert_allclose(staircase_transmission(STACK, E, 40, extra_potential_eV=lambda x: -0.2 + 0 * x),
                               staircase_transmission(shifted, E, 40), rtol=1e-12)
    # image-force lowering (a negative potential) raises T: common practice
    image = staircase_transmission(STACK, E, 200, extra_potential_eV=lambda x: -0.05 / (1 + x))
    assert np.all(image > staircase_transmission(STACK, E, 200))
    with pytest.raises(ValueError, match="extra_potential_eV must return finite values"):
        staircase_transmission(STACK, E, 4, extra_potential_eV=lambda x: x[:1])


def test_profile_converges_to_airy_second_order():
    # a sampled linear profile is the same staircase; node masses in a single material
    E = np.array([0.0, 1.0])
    exact = transmission(TRAPEZOID, E)
    errs = []
    for n in (40, 80, 160):
        x = np.linspace(0.0, 4.0, n + 1)
        u = 3.1 - 0.75 * x
        t = staircase_transmission_profile(x, u, np.full(x.size, 0.5), (-0.5, 0.5), (-3.0, 0.5), E)
        np.testing.assert_allclose(t, staircase_transmission(TRAPEZOID, E, n), rtol=1e-11)
        errs.append(np.abs(np.log(t / exact)))
    assert np.all(np.log2(np.array(errs[:-1]) / np.array(errs[1:])) > 1.9)


def test_profile_nonlinear_converges():
    # a parabolic barrier (no closed form here): successive halvings shrink the
    # change by 4 (second order), common practice for convergence checks
    E = np.array([0.3, 0.8])
    res = []
    for n in (50, 100, 200, 400):
        x = np.linspace(0.0, 3.0, n + 1)
        u = 2.0 * (1 - ((x - 1.5) / 1.5) ** 2) + 0.5
        res.append(np.log(staircase_transmission_profile(x, u, 0.4, (0.0, 0.4), (0.0, 0.4), E)))
    d = np.abs(np.diff(np.array(res), axis=0))
    assert np.all(np.log2(d[:-1] / d[1:]) > 1.9)


def test_profile_mass_forms():
    x = np.array([0.0, 1.0, 2.0, 3.0])
    u = np.array([2.0, 2.0, 1.0, 1.0])
    per_slice = staircase_transmission_profile(x, u, [0.4, 0.5, 0.6], (0.0, 0.3), (0.0, 0.3), 0.5)
    b = Barrier((1.0, 1.0, 1.0), (2.0, 1.5, 1.0), (2.0, 1.5, 1.0), (0.4, 0.5, 0.6), (0.0, 0.3), (0.0, 0.3))
    np.testing.assert_allclose(per_slice, transmission(b, 0.5), rtol=1e-13)
    per_node = staircase_transmission_profile(x, u, [0.4, 0.4, 0.6, 0.6], (0.0, 0.3), (0.0, 0.3), 0.5)
    np.testing.assert_allclose(per_node, per_slice, rtol=1e-13)


@pytest.mark.parametrize(
    "kwargs, pattern",
    [
        (dict(x_nm=[0.0, 1.0, 1.0]), r"x_nm must be strictly increasing, x_nm\[2\]"),
        (dict(x_nm=[0.0]), r"x_nm must be a 1-D array of at least 2 nodes"),
        (dict(u_eV=[1.0, 2.0]), r"u_eV must have the shape of x_nm"),
        (dict(u_eV=[1.0, np.nan, 2.0]), r"u_eV\[1\] must be finite"),
        (dict(mass=[0.5, -0.1, 0.5]), r"mass\[1\] must be finite and > 0"),
        (dict(mass=[0.5, 0.5, 0.5, 0.5]), r"mass must be a scalar, one value per node"),
        (dict(left=(0.0, 0.0)), r"left: mass must be finite and > 0"),
        (dict(right=(np.inf, 0.5)), r"right: band_edge_eV must be finite"),
        (dict(energy_eV=np.nan), r"energy_eV must be finite"),
    ],
)
def test_profile_invalid_input(kwargs, pattern):
    args = dict(x_nm=[0.0, 1.0, 2.0], u_eV=[1.0, 2.0, 1.0], mass=0.5, left=(0.0, 0.5), right=(0.0, 0.5), energy_eV=0.5)
    args.update(kwargs)
    with pytest.raises(ValueError, match=pattern):
        staircase_transmission_profile(**args)


@pytest.mark.parametrize("n", [0, -3, 2.5, True])
def test_invalid_slice_count(n):
    with pytest.raises(ValueError, match="n_slices must be an integer >= 1"):
        staircase_transmission(STACK, 1.0, n)
