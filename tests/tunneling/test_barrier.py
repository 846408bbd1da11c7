"""Barrier: validation on the way in, derived quantities, SI data."""
import math

import numpy as np
import pytest

from solver.tunneling import Barrier
from solver.units import EV_TO_J, M0_KG, NM_TO_M


def _stack(**changes):
    kwargs = dict(
        thickness_nm=(1.0, 2.0),
        u_start_eV=(3.1, 2.0),
        u_end_eV=(2.5, 2.0),
        mass=(0.42, 0.5),
        left=(0.0, 0.19),
        right=(-1.0, 1.0),
    )
    kwargs.update(changes)
    return Barrier(**kwargs)


def test_fields_are_tuples_of_float():
    b = _stack(thickness_nm=np.array([1, 2]), mass=[0.42, 0.5], left=[0, 0.19])
    assert b.thickness_nm == (1.0, 2.0) and all(type(v) is float for v in b.thickness_nm)
    assert isinstance(b.mass, tuple) and b.left == (0.0, 0.19) and type(b.left[0]) is float
    assert b.n_layers == 2
    assert b.total_thickness_nm == 3.0
    assert b.max_energy_eV == 3.1 and b.min_energy_eV == -1.0
    np.testing.assert_array_equal(b.interfaces_nm(), [0.0, 1.0, 3.0])


def test_frozen_and_hashable():
    b = _stack()
    with pytest.raises(AttributeError):
        b.mass = (1.0, 1.0)
    assert hash(b) == hash(_stack()) and b == _stack()


def test_reversed_end_for_end():
    b = _stack()
    r = b.reversed()
    assert r.thickness_nm == (2.0, 1.0)
    assert r.u_start_eV == (2.0, 2.5) and r.u_end_eV == (2.0, 3.1)
    assert r.mass == (0.5, 0.42)
    assert r.left == b.right and r.right == b.left
    assert r.reversed() == b


def test_layer_data_si_cached_and_readonly():
    b = _stack()
    d = b.layer_data_si
    assert d is b.layer_data_si
    # SI factors from scipy.constants via solver.units
    np.testing.assert_allclose(d.thickness_m, np.array([1.0, 2.0]) * NM_TO_M)
    np.testing.assert_allclose(d.u_start_J, np.array([3.1, 2.0]) * EV_TO_J)
    np.testing.assert_allclose(d.mass_kg, np.array([0.42, 0.5]) * M0_KG)
    np.testing.assert_allclose(d.lead_edge_J, np.array([0.0, -1.0]) * EV_TO_J)
    np.testing.assert_allclose(d.lead_mass_kg, np.array([0.19, 1.0]) * M0_KG)
    with pytest.raises(ValueError):
        d.thickness_m[0] = 5.0


def test_pickle_round_trip_without_cache():
    import pickle

    b = _stack()
    b.layer_data_si
    b2 = pickle.loads(pickle.dumps(b))
    assert b2 == b and "layer_data_si" not in b2.__dict__
    assert not b2.layer_data_si.thickness_m.flags.writeable


@pytest.mark.parametrize(
    "changes, pattern",
    [
        (dict(thickness_nm=(1.0, 0.0)), r"layer 1: thickness_nm must be finite and > 0"),
        (dict(thickness_nm=(-1.0, 2.0)), r"layer 0: thickness_nm"),
        (dict(thickness_nm=(1.0, math.nan)), r"layer 1: thickness_nm"),
        (dict(thickness_nm=(1.0, math.inf)), r"layer 1: thickness_nm"),
        (dict(mass=(0.0, 0.5)), r"layer 0: mass must be finite and > 0"),
        (dict(mass=(0.4, math.nan)), r"layer 1: mass"),
        (dict(u_start_eV=(math.nan, 2.0)), r"layer 0: u_start_eV must be finite"),
        (dict(u_end_eV=(1.0, math.inf)), r"layer 1: u_end_eV must be finite"),
        (dict(mass=(0.4,)), r"equal lengths"),
        (dict(thickness_nm=(), u_start_eV=(), u_end_eV=(), mass=()), r"empty"),
        (dict(left=(math.nan, 0.5)), r"left: band_edge_eV must be finite"),
        (dict(right=(0.0, -0.5)), r"right: mass must be finite and > 0"),
        (dict(right=(0.0,)), r"right: lead must be a \(band_edge_eV, mass\) pair"),
        (dict(thickness_nm=1.0), r"thickness_nm must be a flat sequence"),
        (dict(mass=[[0.42, 0.5]]), r"mass must be a flat sequence"),
        (dict(mass=np.ones((2, 40))), r"mass must be a flat sequence \(one entry per layer\), got an array of shape \(2, 40\)$"),
        (dict(u_start_eV=("3.1", None)), r"u_start_eV must hold numbers"),
    ],
)
def test_invalid_input_names_field_and_layer(changes, pattern):
    with pytest.raises(ValueError, match=pattern):
        _stack(**changes)
