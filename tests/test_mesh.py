"""Mesh placement and the finite-volume metric."""
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solver.case import parse_case
from solver.mesh import (
    DielectricSpec,
    SemiconductorSpec,
    automatic_depth_m,
    build_structure,
    graded_points,
    structure_from_case,
)
from solver.units import EPSILON0_F_M, Q_C

SI = dict(relative_permittivity=11.7, affinity_eV=4.05, gap_eV=1.1245,
          conduction_dos_m3=2.86e25, valence_dos_m3=3.10e25)


def ox(t_nm, name="ox"):
    return DielectricSpec(name, "SiO2", t_nm * 1e-9, 3.9, 0.9, 8.9, 0.5, 0.32)


def si(na=1e23):
    return SemiconductorSpec("channel", "Si", acceptors_m3=na, **SI)


@settings(max_examples=40, deadline=None)
@given(length=st.floats(0.5, 200.0), h0=st.floats(0.005, 0.2), growth=st.floats(1.01, 1.3),
       hmax=st.floats(0.2, 5.0))
def test_graded_points_refined_at_both_ends(length, h0, growth, hmax):
    # common practice: spacing h0 at the interfaces, growing about geometrically, capped
    hmax = max(hmax, h0)
    s = graded_points(length, h0, h0, growth, hmax)
    h = np.diff(s)
    assert s[0] == 0.0 and s[-1] == length and np.all(h > 0)
    assert h[0] <= 1.5 * h0 + 1e-12 and h[-1] <= 1.5 * h0 + 1e-12
    assert h.max() <= 1.05 * hmax + 1e-12
    assert np.all(h[1:] / h[:-1] <= growth * 1.05 + 0.05)


def test_planar_metric_volumes_and_nodes_at_interfaces():
    s = build_structure(geometry="planar", temperature_K=300.0, layers=(ox(6, "a"), ox(3, "b")),
                        channel=si(), metal_work_function_eV=4.6)
    x = s.x_m
    for xi in (0.0, 6e-9, 9e-9):
        assert np.min(np.abs(x - xi)) < 1e-18
    # boxes tile the whole length (planar: sum of widths)
    assert s.volume.sum() == pytest.approx(x[-1] - x[0], rel=1e-12)
    assert s.interfaces_m == pytest.approx((0.0, 6e-9, 9e-9))
    assert s.gate_node == 0 and s.bulk_node == s.size - 1
    assert s.x_m[s.interface_node] == pytest.approx(9e-9)


def test_cylindrical_metric_is_exact_for_annuli():
    # integral of r dr over [0, R] = R^2/2 (per radian); the link coefficient of a
    # charge-free shell eps/ln(r2/r1) (Jackson, Classical Electrodynamics, Sec. 1.6)
    s = build_structure(geometry="cylindrical", temperature_K=300.0, layers=(ox(5),), channel=si(),
                        metal_work_function_eV=4.6, channel_radius_m=20e-9, core_radius_m=8e-9,
                        core=ox(8, "core"))
    r = s.x_m
    assert r[0] == 0.0 and r[-1] == pytest.approx(25e-9)
    assert s.volume.sum() == pytest.approx(r[-1] ** 2 / 2, rel=1e-12)
    k = s.layer_regions[0]
    lo = s.regions[k].lo
    assert s.coef[lo] == pytest.approx(3.9 * EPSILON0_F_M / math.log(r[lo + 1] / r[lo]), rel=1e-12)
    assert s.gate_node == s.size - 1 and s.bulk_node == -1
    assert r[s.interface_node] == pytest.approx(20e-9)


def test_automatic_depth_holds_the_maximum_depletion_width():
    # Sze & Ng 2007, Sec. 4.2: W_dm = sqrt(2 eps 2 psi_B / (q N_A)), 103.8 nm at 1e17 cm^-3
    # with n_i = 1e10 (physics-data sheet Sec. 7)
    eps = 11.7 * EPSILON0_F_M
    wdm = math.sqrt(2 * eps * 2 * 0.0258520 * math.log(1e17 / 1e10) / (Q_C * 1e23))
    assert wdm == pytest.approx(103.8e-9, rel=2e-3)
    assert automatic_depth_m(si(1e23), 300.0) > 1.5 * wdm


def test_structure_from_case_orders_layers():
    case = parse_case("""
[gate]
material = "TaN"
[[layers]]
name = "blocking"
material = "Al2O3"
thickness_nm = 8.0
charge_cm2 = -1e12
[[layers]]
name = "tunnel"
material = "SiO2"
thickness_nm = 4.0
[channel]
acceptors_cm3 = 1e17
[geometry]
kind = "cylindrical"
channel_radius_nm = 25.0
""")
    s = structure_from_case(case)
    names = [s.regions[k].name for k in s.layer_regions]
    assert names == ["blocking", "tunnel"]
    # cylinder: tunnel next to the channel, blocking outside
    assert s.regions[s.layer_regions[1]].lo == s.interface_node
    assert s.x_m[-1] == pytest.approx(37e-9)
    assert s.fixed_charge.sum() / s.x_m[np.nonzero(s.fixed_charge)[0][0]] == pytest.approx(
        -1e12 * 1e4 * Q_C, rel=1e-12)
    labels = [v.label for v in s.channel.spec.electron_valleys]
    assert labels == ["2-fold", "4-fold"]
    assert_allclose([v.quantization_mass for v in s.channel.spec.electron_valleys], [0.916, 0.19])


@pytest.mark.parametrize("geometry", ["planar", "cylindrical"])
def test_sheet_charge_position_counts_from_the_gate_side(geometry):
    # DEVELOPERS.md: charge_position 0 = gate side .. 1 = channel side, in both geometries
    trap = DielectricSpec("trap", "Si3N4", 6e-9, 7.5, 2.0, 5.1, 0.5, 0.5, -1e-3, 0.25)
    kw = dict(channel_radius_m=20e-9) if geometry == "cylindrical" else {}
    s = build_structure(geometry=geometry, temperature_K=300.0, layers=(ox(6, "block"), trap, ox(5, "tun")),
                        channel=si(), metal_work_function_eV=4.6, **kw)
    j = int(np.nonzero(s.fixed_charge)[0][0])
    R = s.regions[s.layer_regions[1]]
    gate_edge = s.x_m[R.lo] if geometry == "planar" else s.x_m[R.hi]
    assert abs(s.x_m[j] - gate_edge) == pytest.approx(1.5e-9, abs=1e-15)
