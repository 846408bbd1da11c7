"""Exact vs WKB vs Fowler–Nordheim along sweeps and maps of a case's stack."""
from dataclasses import replace

import numpy as np
import pytest
from numpy.testing import assert_allclose

from solver.breakdown import (
    BreakdownSettings,
    breakdown_curve,
    breakdown_map,
    default_fields_MV_cm,
    interference_mask,
    transmission_spectra,
)
from solver.case import load_case
from solver.tunneling.stack import stack_data


@pytest.fixture(scope="module")
def mos():
    """Al / 5 nm SiO2 / p-Si(100), the shipped MOS capacitor."""
    return stack_data(load_case("cases/mos-capacitor.toml"))


def _turning_swings(y):
    """Peak-to-valley swings between successive local extrema of y."""
    d = np.diff(y)
    turns = [k for k in range(1, d.size) if d[k - 1] * d[k] < 0]
    return [abs(y[b] - y[a]) for a, b in zip(turns[:-1], turns[1:])]


def test_thick_oxide_fn_ratio_tends_to_constant(mos):
    # Lenzlinger & Snow, J. Appl. Phys. 40, 278 (1969): for thick oxides at high
    # field the current follows the FN form, so J_exact/J_FN levels off at a
    # constant of order one (the prefactor of the exact T and the supply; common
    # practice). Metal emitter (the FN derivation's), 10 nm SiO2, 9..14 MV/cm.
    thick = mos.with_thickness(0, 10.0)
    c = breakdown_curve(thick, field_MV_cm=np.linspace(9.0, 14.0, 21), emitter="gate")
    r = c.ratio("fn")
    low, high = np.exp(np.log(r[:7]).mean()), np.exp(np.log(r[-7:]).mean())
    assert 0.2 < low < 5 and 0.2 < high < 5
    assert 1 / 1.5 < high / low < 1.5
    assert set(c.regime) <= {"fowler-nordheim", "interference"}


def test_thin_oxide_direct_tunneling_exceeds_fn(mos):
    # Schuegraf & Hu, IEEE TED 41, 761 (1994): below q V_ox = Phi_B the barrier
    # is trapezoidal and direct tunneling exceeds the triangular-barrier FN
    # estimate by orders of magnitude in thin oxides. 2 nm SiO2 at 1..4 MV/cm.
    thin = mos.with_thickness(0, 2.0)
    c = breakdown_curve(thin, field_MV_cm=[1.0, 2.0, 4.0], emitter="gate")
    assert c.regime == ("direct",) * 3
    r = c.ratio("fn")
    assert np.all(r > 1e10)
    assert r[0] > r[1] > r[2]  # the gap closes toward the FN onset
    # the trapezoid hand formula tracks the exact current far better than FN there
    assert np.all(np.abs(np.log10(c.ratio("trapezoid"))) < 0.25 * np.abs(np.log10(r)))


def test_interference_above_onset_exact_only(mos):
    # Gundlach, Solid-State Electron. 9, 949 (1966) (from memory): above the
    # barrier-height voltage the electron wave reflected at the far interface
    # makes the exact current oscillate with field; WKB has no reflected wave.
    onset = 10 * (4.28 - 0.9) / 5.0  # Phi_B = W_Al - chi_SiO2 over 5 nm (MV/cm)
    c = breakdown_curve(mos, field_MV_cm=np.linspace(onset + 0.1, 14.0, 60), emitter="gate")
    assert_allclose(c.onset_field_MV_cm, onset, rtol=1e-9)
    y_exact = np.log(c.current_exact_A_cm2 / c.current_fn_A_cm2)
    y_wkb = np.log(c.current_wkb_A_cm2 / c.current_fn_A_cm2)
    assert sum(s > 0.2 for s in _turning_swings(y_exact)) >= 3
    assert _turning_swings(y_wkb) == [] or max(_turning_swings(y_wkb)) < 0.01
    assert "interference" in c.regime
    below = breakdown_curve(mos, field_MV_cm=np.linspace(2.0, onset - 0.1, 20), emitter="gate")
    assert set(below.regime) == {"direct"}


def test_swapping_polarity_exchanges_emitter(mos):
    # Electrons from the channel need the gate positive, from the gate negative;
    # the barrier's left lead (emitter) is the channel conduction band or the
    # gate metal (free electrons, 1 m0, Fermi level -V_G). Barrier heights:
    # CBO = chi_Si - chi_SiO2, or W_Al - chi_SiO2 (physics-data sheet Sec. 3.1).
    ch = breakdown_curve(mos, field_MV_cm=[8.0], emitter="channel")
    gt = breakdown_curve(mos, field_MV_cm=[8.0], emitter="gate")
    assert ch.gate_V[0] > 0 > gt.gate_V[0]
    assert_allclose(ch.barrier_height_eV, 4.05 - 0.9, rtol=1e-12)
    assert_allclose(gt.barrier_height_eV, 4.28 - 0.9, rtol=1e-12)
    assert ch.current_exact_A_cm2[0] > 0 and gt.current_exact_A_cm2[0] > 0
    # the same gate voltages seen from the other emitter drive no emission
    wrong = breakdown_curve(mos, gate_V=[3.0, 5.0], emitter="gate")
    assert wrong.regime == ("none", "none")
    assert np.all(np.isnan(wrong.current_exact_A_cm2))
    right = breakdown_curve(mos, gate_V=[3.0, 5.0], emitter="channel")
    assert np.all(right.current_exact_A_cm2 > 0)


def test_hole_tunneling_uses_valence_offset(mos):
    # hole barrier from Si into SiO2 = valence band offset (chi + Eg)_ox - (chi + Eg)_Si
    # (physics-data sheet Sec. 3.1: VBO = Eg,diel - Eg,Si - CBO with the affinity rule)
    c = breakdown_curve(mos, field_MV_cm=[6.0, 12.0], carrier="hole", emitter="channel")
    vbo = ((mos.affinity_eV[0] + mos.band_gap_eV[0])
           - (mos.channel_affinity_eV + mos.channel_band_gap_eV))
    assert_allclose(c.barrier_height_eV, vbo, rtol=1e-12)
    assert c.gate_V[0] < 0
    assert np.all(c.current_exact_A_cm2 > 0)
    assert c.current_exact_A_cm2[1] > c.current_exact_A_cm2[0]


def test_map_and_spectra_shapes(mos):
    m = breakdown_map(mos, [3.0, 6.0], [4.0, 8.0, 12.0], emitter="gate")
    assert m.current_exact_A_cm2.shape == (2, 3)
    assert m.within_factor("wkb").dtype == bool
    assert_allclose(m.onset_field_MV_cm, 10 * (4.28 - 0.9) / np.array([3.0, 6.0]), rtol=1e-9)
    assert m.regime_code[0, 0] == 0 and m.regime_code[0, 2] >= 1
    assert not m.current_exact_A_cm2.flags.writeable
    s = transmission_spectra(mos, [5.0, 10.0], energy_eV=[0.0, 1.0, 4.0])
    assert s.transmission_exact.shape == (2, 3)
    assert np.all((s.transmission_exact >= 0) & (s.transmission_exact <= 1))
    f = default_fields_MV_cm(mos, count=5)
    assert f.size == 5 and f[0] < 6.3 < f[-1]


def test_interference_mask_needs_two_swings():
    f = np.linspace(1, 10, 40)
    smooth = np.exp(-1 / f)
    wavy = smooth * np.exp(0.3 * np.sin(3 * f))
    fn = f > 2
    assert not interference_mask(f, smooth, smooth, fn).any()
    mask = interference_mask(f, wavy, smooth, fn)
    assert mask[fn].all() and not mask[~fn].any()


def test_bad_settings():
    with pytest.raises(ValueError, match="carrier must be one of"):
        BreakdownSettings(carrier="proton")
    with pytest.raises(ValueError, match="exactly one of field_MV_cm and gate_V"):
        breakdown_curve(stack_data(load_case("cases/mos-capacitor.toml")))
    with pytest.raises(ValueError, match="field_MV_cm must hold finite values > 0"):
        breakdown_curve(stack_data(load_case("cases/mos-capacitor.toml")), field_MV_cm=[-1.0])


@pytest.fixture(scope="module")
def cylinder():
    """The shipped gate-all-around demo: W / 6 nm SiO2 / 6 nm Si3N4 / 5 nm SiO2 around a
    20 nm p-Si shell on a 10 nm SiO2 core."""
    return stack_data(load_case("cases/demo-cell-cylindrical.toml"))


def test_cylinder_fields_at_the_injecting_interface(cylinder):
    # FN hand formula with the field at the channel surface (the injecting interface);
    # the FN onset q V_layer = Phi_B with the ln r potential of the tunnel layer,
    # V_layer = E(r0) r0 ln(1 + t/r0) (physics-data sheet Sec. 5.5): E_onset =
    # Phi_B / (r0 ln(1 + t/r0)), Phi_B = chi_Si - chi_SiO2 (sheet Sec. 3.1).
    from solver.tunneling.fowler_nordheim import fowler_nordheim_current

    c = breakdown_curve(cylinder, field_MV_cm=[5.0, 9.0, 13.0])
    assert_allclose(c.field_MV_cm, [5.0, 9.0, 13.0], rtol=1e-12)
    assert_allclose(c.layer_fields_MV_cm[:, -1], c.field_MV_cm, rtol=1e-12)
    height = c.barrier_height_eV
    assert_allclose(c.current_fn_A_cm2, fowler_nordheim_current(c.field_MV_cm, height, c.injecting_mass),
                    rtol=1e-12)
    onset = height / (20.0 * np.log1p(5.0 / 20.0)) * 10.0  # MV/cm
    assert_allclose(c.onset_field_MV_cm, onset, rtol=1e-9)
    assert c.regime[0] == "direct" and c.regime[-1] != "direct"
    assert np.all(c.current_exact_A_cm2 > 0) and c.current_exact_A_cm2[2] > c.current_exact_A_cm2[1]
    # the same gate voltage drives a stronger field at the channel than in a planar cell
    flat = replace(cylinder, geometry="planar", channel_radius_nm=np.inf, core_radius_nm=0.0)
    g = breakdown_curve(flat, gate_V=c.gate_V[1:2])
    assert g.field_MV_cm[0] < c.field_MV_cm[1]
    # the map varies the tunnel layer at the fixed channel radius; the onset follows
    m = breakdown_map(cylinder, [3.0, 7.0], [6.0, 12.0])
    assert_allclose(m.onset_field_MV_cm, height / (20.0 * np.log1p(np.array([3.0, 7.0]) / 20.0)) * 10.0,
                    rtol=1e-9)
    assert np.all(np.isfinite(m.current_exact_A_cm2))


def test_cylinder_planar_limit_of_the_curve(mos):
    # r0 -> infinity reproduces the planar currents (Gauss's law: the coaxial stack
    # becomes the planar one; physics-data sheet Sec. 5.5, row r0 = infinity).
    big = replace(mos, geometry="cylindrical", channel_radius_nm=1e5, core_radius_nm=0.0)
    fields = [4.0, 9.0]
    for emitter in ("channel", "gate"):
        a = breakdown_curve(mos, field_MV_cm=fields, emitter=emitter)
        b = breakdown_curve(big, field_MV_cm=fields, emitter=emitter)
        assert_allclose(b.current_exact_A_cm2, a.current_exact_A_cm2, rtol=3e-3)
        assert_allclose(b.current_wkb_A_cm2, a.current_wkb_A_cm2, rtol=3e-3)
        assert_allclose(b.gate_V, a.gate_V, atol=2e-3)
        assert b.regime == a.regime


def test_cylinder_gate_emission_and_holes(cylinder):
    # reverse polarity: electrons from the W gate, the field at the gate-side edge of
    # the blocking layer; holes from the channel need the gate negative as well
    c = breakdown_curve(cylinder, field_MV_cm=[10.0], emitter="gate")
    assert c.gate_V[0] < 0 and c.current_exact_A_cm2[0] > 0
    r_gate = 20.0 + 17.0
    # the blocking layer's channel-side field is larger by r_gate / (r_gate - 6) (1/r)
    assert_allclose(-c.layer_fields_MV_cm[0, 0], 10.0 * r_gate / (r_gate - 6.0), rtol=1e-12)
    h = breakdown_curve(cylinder, gate_V=[-14.0], carrier="hole")
    assert h.regime[0] != "none" and h.current_exact_A_cm2[0] > 0
