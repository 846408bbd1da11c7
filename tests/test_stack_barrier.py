"""The stack barrier builder: fields per layer, sheet charges, band edges, leads."""
import math
from dataclasses import replace

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.constants import e as Q, epsilon_0 as EPS0, k as KB

from solver.tunneling.stack import (
    StackData,
    barrier_from_profile,
    emission_sign,
    stack_barrier,
    stack_data,
    stack_fields,
    stack_state,
    surface_charge_C_m2,
)


def make_stack(thickness_nm=(6.0, 6.0, 5.0), permittivity=(3.9, 7.5, 3.9), charge_cm2=None,
               charge_position=None, **over):
    """A stand-in stack: SiO2-like / Si3N4-like / SiO2-like on p-Si, metal gate."""
    n = len(thickness_nm)
    base = dict(
        names=tuple(f"l{i}" for i in range(n)), thickness_nm=thickness_nm, permittivity=permittivity,
        optical_permittivity=(2.13,) * n, affinity_eV=(0.9, 2.0, 0.9)[:n] if n <= 3 else (0.9,) * n,
        band_gap_eV=(8.9, 5.1, 8.9)[:n] if n <= 3 else (8.9,) * n,
        electron_mass=(0.5,) * n, hole_mass=(0.32,) * n,
        charge_cm2=charge_cm2 or (0.0,) * n, charge_position=charge_position or (0.5,) * n,
        temperature_K=300.0, gate_kind="metal", gate_work_function_eV=4.4,
        gate_affinity_eV=None, gate_band_gap_eV=None, gate_electron_mass=None, gate_hole_mass=None,
        channel_permittivity=11.7, channel_affinity_eV=4.05, channel_band_gap_eV=1.12,
        channel_conduction_dos_cm3=2.8e19, channel_valence_dos_cm3=2.65e19,
        channel_acceptors_cm3=1e17, channel_donors_cm3=0.0, channel_interface_charge_cm2=0.0,
        channel_electron_mass=0.5, channel_hole_mass=0.49,
    )
    base.update(over)
    return StackData(**base)


def test_series_fields_match_planar_formula():
    # Physics-data sheet Sec. 5.5 (standard electrostatics, Jackson): planar
    # E_i = V / (eps_i sum_j t_j/eps_j); 5 nm SiO2 / 6 nm SiN (7.5) / 6 nm SiO2 at
    # 20 V gives 14.16 MV/cm in the oxides (sheet table, row r0 = infinity).
    _, _, e, d = stack_fields((6.0, 6.0, 5.0), (3.9, 7.5, 3.9), (0, 0, 0), (0.5,) * 3, 20.0)
    assert_allclose(e[0] * 1e-8, 14.16, rtol=5e-4)
    assert_allclose(e[2] * 1e-8, 14.16, rtol=5e-4)
    x = 6 / 3.9 + 6 / 7.5 + 5 / 3.9
    assert_allclose(e * 1e-8, [20 / (3.9 * x) * 10, 20 / (7.5 * x) * 10, 20 / (3.9 * x) * 10], rtol=1e-12)
    # displacement continuity without charge (Gauss's law)
    assert_allclose(d, d[0], rtol=1e-13)
    assert_allclose(np.sum(e * np.array([6, 6, 5]) * 1e-9), 20.0, rtol=1e-13)


def test_sheet_charge_splits_layer_and_jumps_displacement():
    # Gauss's law (Jackson Sec. 4.4): D(x+) - D(x-) = sigma at a sheet; the voltage
    # is the sum of E t. Hand result for sigma = -2e12 q/cm^2 at 40 % of the nitride,
    # V = 0: D_0 = -sigma X_right / X with X = sum t/eps.
    sigma_cm2, pos = -2e12, 0.4
    layers, seg_t, e, d = stack_fields((6.0, 6.0, 5.0), (3.9, 7.5, 3.9), (0, sigma_cm2, 0),
                                       (0.5, pos, 0.5), 0.0)
    assert layers == (0, 1, 1, 2)
    assert_allclose(seg_t, [6.0, 2.4, 3.6, 5.0], rtol=1e-13)
    sigma = sigma_cm2 * 1e4 * Q
    x = (6 / 3.9 + 6 / 7.5 + 5 / 3.9) * 1e-9
    x_right = (3.6 / 7.5 + 5 / 3.9) * 1e-9
    d0 = -sigma * x_right / x
    assert_allclose(d, [d0, d0, d0 + sigma, d0 + sigma], rtol=1e-12)
    assert_allclose(e, np.array([d0 / 3.9, d0 / 7.5, (d0 + sigma) / 7.5, (d0 + sigma) / 3.9]) / EPS0,
                    rtol=1e-12)
    assert abs(np.sum(e * np.array(seg_t) * 1e-9)) < 1e-12


def test_sheet_charge_threshold_shift():
    # Physics-data sheet Sec. 7: planar Delta V_T per 1e12 e/cm^2 with the centroid
    # behind 6 nm SiO2 + 3 nm SiN is +0.351 V (Sec. 6 item 13). The same channel
    # state (same field in the tunnel layer) needs that much more gate voltage.
    clean = make_stack()
    charged = make_stack(charge_cm2=(0.0, -1e12, 0.0))
    a = stack_state(clean, field_MV_cm=8.0, field_layer=2)
    b = stack_state(charged, field_MV_cm=8.0, field_layer=2)
    assert_allclose(b.surface_potential_V, a.surface_potential_V, rtol=1e-10)
    assert_allclose(b.gate_V - a.gate_V, 0.351, atol=5e-4)


def test_charge_on_interfaces_positions_0_and_1():
    # A sheet at position 1 of layer 0 and one at position 0 of layer 1 are the same
    # interface charge (Gauss's law): identical fields.
    _, _, e1, _ = stack_fields((6.0, 6.0, 5.0), (3.9, 7.5, 3.9), (-1e12, 0, 0), (1.0, 0.5, 0.5), 5.0)
    _, _, e2, _ = stack_fields((6.0, 6.0, 5.0), (3.9, 7.5, 3.9), (0, -1e12, 0), (0.5, 0.0, 0.5), 5.0)
    assert_allclose(e1, e2, rtol=1e-12)


def test_flat_band_and_field_inputs_agree():
    data = make_stack()
    flat = stack_state(data, stack_V=0.0)
    # no charge and no stack voltage: no band bending, V_G = phi_ms
    # (Sze & Ng 2007 Sec. 4.2; Phi_s = chi + Eg - kT ln(Nv/N_A) for p-type, Boltzmann)
    kT = KB * 300.0 / Q
    phi_s = 4.05 + 1.12 - kT * math.log(2.65e19 / 1e17)
    assert abs(flat.surface_potential_V) < 1e-9
    assert_allclose(flat.gate_V, 4.4 - phi_s, atol=1e-6)
    by_field = stack_state(data, field_MV_cm=10.0, field_layer=-1)
    by_gate = stack_state(data, gate_V=by_field.gate_V)
    by_stack = stack_state(data, stack_V=by_field.stack_V)
    assert_allclose(by_gate.stack_V, by_field.stack_V, rtol=1e-9)
    assert_allclose(by_stack.layer_fields_MV_cm[-1], 10.0, rtol=1e-12)
    assert_allclose(by_field.gate_V, 4.4 - phi_s + by_field.surface_potential_V + by_field.stack_V,
                    atol=1e-6)


def test_surface_charge_depletion_at_threshold():
    # Physics-data sheet Sec. 7: W_dm = 103.8 nm for N_A = 1e17, eps 11.7, n_i = 1e10;
    # at psi_s = 2 psi_B the classical charge is q N_A W_dm to O(kT/q psi_B) (Sze & Ng
    # 2007, Sec. 4.2). Nc, Nv, Eg chosen so that the implied n_i is 1e10 cm^-3.
    kT = KB * 300.0 / Q
    eg = 2 * kT * math.log(2.8e19 / 1e10)
    data = make_stack(channel_valence_dos_cm3=2.8e19, channel_band_gap_eV=eg)
    psi_b = kT * math.log(1e17 / 1e10)
    q_s = float(surface_charge_C_m2(data, 2 * psi_b))
    assert_allclose(-q_s, Q * 1e23 * 103.8e-9, rtol=3e-3)


def test_electron_barrier_orientation_and_heights():
    data = make_stack()
    st = stack_state(data, field_MV_cm=10.0, field_layer=-1)
    ch = stack_barrier(data, st, carrier="electron", emitter="channel")
    b = ch.barrier
    # left lead = channel conduction band; barrier height = conduction band offset
    # (electron-affinity rule; physics-data sheet Sec. 3.1): 4.05 - 0.9
    assert b.left[0] == pytest.approx(st.channel_conduction_eV)
    assert_allclose(ch.barrier_height_eV, 4.05 - 0.9, rtol=1e-12)
    assert_allclose(b.u_start_eV[0] - b.left[0], 3.15, rtol=1e-12)
    # layers listed channel first; tunnel layer falls by F t = 10 MV/cm * 5 nm = 5 V
    assert b.thickness_nm == (5.0, 6.0, 6.0)
    assert_allclose(ch.injecting_drop_eV, 5.0, rtol=1e-10)
    assert ch.regime == "fowler-nordheim"
    # collector: metal gate, Fermi level -V_G
    assert ch.fermi_right_eV == pytest.approx(-st.gate_V)
    # band-edge continuity inside the barrier only jumps by the affinity steps
    steps = np.array(b.u_start_eV[1:]) - np.array(b.u_end_eV[:-1])
    assert_allclose(steps, [0.9 - 2.0, 2.0 - 0.9], atol=1e-12)


def test_gate_emission_and_holes():
    data = make_stack()
    st = stack_state(data, field_MV_cm=-10.0, field_layer=0)
    g = stack_barrier(data, st, carrier="electron", emitter="gate")
    # metal emitter: height = work function - affinity (physics-data sheet Sec. 3.1)
    assert_allclose(g.barrier_height_eV, 4.4 - 0.9, rtol=1e-12)
    assert g.fermi_left_eV == pytest.approx(-st.gate_V)
    assert g.barrier.thickness_nm == (6.0, 6.0, 5.0)
    st_h = stack_state(data, field_MV_cm=-10.0, field_layer=-1)
    h = stack_barrier(data, st_h, carrier="hole", emitter="channel")
    # hole barrier from Si = valence band offset (chi_ox + Eg_ox) - (chi_Si + Eg_Si)
    # (physics-data sheet Sec. 3.1: VBO = Eg,diel - Eg,Si - CBO; 4.63 eV for SiO2, "derived")
    assert_allclose(h.barrier_height_eV, (0.9 + 8.9) - (4.05 + 1.12), rtol=1e-12)
    assert h.barrier.left[0] == pytest.approx(-st_h.channel_valence_eV)
    assert h.injecting_drop_eV > 0


def test_emission_sign():
    assert emission_sign("electron", "channel") == 1
    assert emission_sign("hole", "gate") == 1
    assert emission_sign("electron", "gate") == -1
    assert emission_sign("hole", "channel") == -1
    with pytest.raises(ValueError, match="carrier must be one of"):
        emission_sign("positron", "gate")


def test_injecting_layer_only_collects_in_next_band():
    # the collector is the next layer's conduction band at the interface (flat lead),
    # with that layer's mass (0.5 in the stand-in stack)
    data = make_stack()
    st = stack_state(data, field_MV_cm=10.0, field_layer=-1)
    sb = stack_barrier(data, st, through="injecting-layer")
    assert sb.barrier.thickness_nm == (5.0,)
    # next layer (nitride) conduction band at the tunnel/nitride interface, its mass
    full = stack_barrier(data, st).barrier
    assert sb.barrier.right == (pytest.approx(full.u_start_eV[1]), 0.5)


def test_profile_round_trip():
    data = make_stack()
    b = stack_barrier(data, stack_state(data, field_MV_cm=8.0, field_layer=-1)).barrier
    x = np.repeat(b.interfaces_nm(), 2)[1:-1]
    u = np.ravel(np.column_stack((b.u_start_eV, b.u_end_eV)))
    m = np.repeat(b.mass, 2)
    again = barrier_from_profile(x, u, m, b.left, b.right)
    assert_allclose(again.thickness_nm, b.thickness_nm, rtol=1e-12)
    assert_allclose(again.u_start_eV, b.u_start_eV, rtol=1e-12)
    rev = barrier_from_profile(x, u, m, b.right, b.left, reverse=True)
    assert_allclose(rev.u_start_eV, b.reversed().u_start_eV, rtol=1e-12)


def test_image_force_staircase_lowers_the_barrier():
    # Schottky lowering sqrt(q F / (4 pi eps0 eps_inf)) = 0.822 eV for SiO2 (2.13) at
    # 10 MV/cm (physics-data sheet Sec. 7): the staircase maximum sits that far below
    # the unlowered emitter edge (to the slice resolution).
    data = make_stack()
    st = stack_state(data, field_MV_cm=10.0, field_layer=-1)
    plain = stack_barrier(data, st)
    img = stack_barrier(data, st, image_force=True, image_slices=400)
    top = max(img.barrier.u_start_eV)
    assert_allclose(plain.barrier.u_start_eV[0] - top, 0.822, atol=0.01)


def test_image_staircase_without_image_is_the_linear_barrier():
    # Limit check: with a negligible image term (eps_inf -> infinity) the staircase
    # of the linear profile converges to the exact Airy result (Gundlach,
    # Solid-State Electron. 9, 949 (1966)), also above the barrier where the band
    # falls below the emitter's Fermi level (FN regime, interference).
    from solver.tunneling.current import current_density

    data = make_stack(thickness_nm=(5.0,), permittivity=(3.9,), affinity_eV=(0.9,), band_gap_eV=(8.9,),
                      optical_permittivity=(2.13,), electron_mass=(0.5,), hole_mass=(0.32,),
                      charge_cm2=(0.0,), charge_position=(0.5,), names=("ox",))
    flat = replace(data, optical_permittivity=(1e9,))
    for field in (-6.0, -11.0):
        st = stack_state(data, field_MV_cm=field, field_layer=0)
        plain = stack_barrier(data, st, emitter="gate")
        stair = stack_barrier(flat, st, emitter="gate", image_force=True, image_slices=1000)
        j = [current_density(b.barrier, b.fermi_left_eV, b.fermi_right_eV, 300.0) for b in (plain, stair)]
        assert_allclose(j[1], j[0], rtol=2e-3)


def test_bad_inputs_name_the_field():
    with pytest.raises(ValueError, match="layer 1: thickness_nm"):
        make_stack(thickness_nm=(6.0, -1.0, 5.0))
    with pytest.raises(ValueError, match="exactly one"):
        stack_state(make_stack(), stack_V=1.0, gate_V=2.0)
    data = make_stack()
    with pytest.raises(ValueError, match="through must be one of"):
        stack_barrier(data, stack_state(data, stack_V=5.0), through="everything")
    with pytest.raises(ValueError, match="temperature_K must be a finite number > 0, got 0.0"):
        make_stack(temperature_K=0.0)
    with pytest.raises(ValueError, match="gate_affinity_eV must be a finite number"):
        make_stack(gate_kind="semiconductor")
    with pytest.raises(ValueError, match="metal_fermi_depth_eV must be a finite number > 0"):
        stack_barrier(data, stack_state(data, stack_V=5.0), metal_fermi_depth_eV=-1.0)
    with pytest.raises(ValueError, match="image_slices must be an integer >= 1"):
        stack_barrier(data, stack_state(data, stack_V=5.0), image_force=True, image_slices=0)


def test_from_shipped_case():
    from solver.case import load_case

    case = load_case("cases/mos-capacitor.toml")
    data = stack_data(case)
    assert data.count == 1 and data.gate_kind == "metal"
    st = stack_state(data, field_MV_cm=8.0, field_layer=0)
    # one charge-free layer: uniform field, V = F t (1 MV/cm x 1 nm = 0.1 V)
    assert_allclose(st.stack_V, 8.0 * 0.1 * data.thickness_nm[0], rtol=1e-12)
    cyl = stack_data(load_case("cases/demo-cell-cylindrical.toml"))
    assert cyl.cylindrical and cyl.channel_radius_nm == 20.0 and cyl.core_radius_nm == 10.0
    assert replace(data, temperature_K=77.0).temperature_K == 77.0


def test_gate_voltage_matches_classical_poisson_solve():
    # Cross-check of the closed-form channel (Sze & Ng 2007 Sec. 4.2, Boltzmann,
    # complete ionization) against the finite-volume Poisson solution of the same
    # classical model: the layer fields agree to the mesh error.
    from solver import solve
    from solver.case import load_case

    case = load_case("cases/demo-cell.toml")
    data = stack_data(case)
    for gate_V in (-3.0, 12.0):
        sol = solve(case, gate_V, quantum=False, statistics="boltzmann")
        mine = stack_state(data, gate_V=gate_V)
        assert_allclose(mine.layer_fields_MV_cm, sol.layer_fields_MV_cm, rtol=1e-3)
        assert_allclose(mine.surface_potential_V, sol.surface_potential_V, atol=2e-3)


def test_state_from_solution_reproduces_the_closed_form():
    # A classical Boltzmann solve of the same model gives the same barrier as the
    # closed-form state (band edges to the mesh error, ~1e-3 eV).
    from solver import solve
    from solver.case import load_case
    from solver.tunneling.stack import state_from_solution

    case = load_case("cases/mos-capacitor.toml")
    data = stack_data(case)
    sol = solve(case, 6.0, quantum=False, statistics="boltzmann")
    a = stack_barrier(data, state_from_solution(data, sol)).barrier
    b = stack_barrier(data, stack_state(data, gate_V=6.0)).barrier
    assert_allclose(a.u_start_eV, b.u_start_eV, atol=3e-3)
    assert_allclose(a.u_end_eV, b.u_end_eV, atol=3e-3)
    assert_allclose(a.left[0], b.left[0], atol=3e-3)
    assert_allclose(a.right[0], b.right[0], atol=1e-9)


# ------------------------------------------------------------ cylindrical (coaxial) stacks

def make_coax(r0, core=0.0, **over):
    """The stand-in stack around a channel of radius r0 (nm): layers gate first,
    so the last (5 nm, eps 3.9) is the tunnel layer at r0 .. r0 + 5 nm."""
    return make_stack(geometry="cylindrical", channel_radius_nm=r0, core_radius_nm=core, **over)


@pytest.mark.parametrize("r0, tunnel, block", [(10, 24.05, 8.91), (20, 19.53, 10.56),
                                               (30, 17.87, 11.41), (50, 16.46, 12.29)])
def test_coaxial_fields_match_the_sheet_table(r0, tunnel, block):
    # Physics-data sheet Sec. 5.5 (Gauss's law, Jackson): 5 nm SiO2 / 6 nm SiN (7.5) /
    # 6 nm SiO2 at 20 V, E_i(r) = V / [eps_i r sum_j ln(r_{j+1}/r_j)/eps_j]; the table's
    # tunnel field at r0 and blocking field at the gate radius r_N (4 digits).
    layers, _, e_in, d_in = stack_fields((6.0, 6.0, 5.0), (3.9, 7.5, 3.9), (0, 0, 0), (0.5,) * 3, 20.0,
                                         channel_radius_nm=r0)
    assert_allclose(e_in[2] * 1e-8, tunnel, atol=5e-3)
    data = make_coax(r0)
    st = stack_state(data, stack_V=20.0)
    assert_allclose(st.interface_field_MV_cm("channel"), tunnel, atol=5e-3)
    assert_allclose(st.interface_field_MV_cm("gate"), block, atol=5e-3)
    assert_allclose(st.segment_radius_nm, [r0 + 17, r0 + 11, r0 + 5, r0], rtol=1e-14)
    # r D is constant without sheets (Gauss's law) and the layer voltages add up to V
    r_in = np.array([r0 + 11, r0 + 5, r0])
    assert_allclose(np.asarray(d_in) * r_in, d_in[-1] * r0, rtol=1e-13)
    assert_allclose(st.vacuum_level_eV[-1] - st.vacuum_level_eV[0], 20.0, rtol=1e-13)
    # field magnitude at the gate-side edge of the tunnel layer: 1/r (Jackson)
    assert_allclose(st.segment_field_gate_side_MV_cm[2], tunnel * r0 / (r0 + 5), atol=5e-3)
    # fixing the field at the injecting interface gives the same state
    by_field = stack_state(data, field_MV_cm=st.interface_field_MV_cm("gate"), field_layer=0,
                           field_side="gate")
    assert_allclose(by_field.stack_V, 20.0, rtol=1e-12)


@pytest.mark.parametrize("r0, shift", [(10, 0.277), (20, 0.299), (30, 0.310), (50, 0.323)])
def test_coaxial_sheet_threshold_shift(r0, shift):
    # Physics-data sheet Sec. 6 item 13 and Sec. 7: Delta V_T = (sigma r_c / eps0)
    # sum_{r_c -> r_g} ln(r_{i+1}/r_i) / eps_i per 1e12 e/cm^2 at mid-SiN of the Sec. 5.5
    # stack: +0.277 / 0.299 / 0.310 / 0.323 V. Same channel state, more gate voltage.
    clean = make_coax(r0)
    charged = make_coax(r0, charge_cm2=(0.0, -1e12, 0.0))
    a = stack_state(clean, field_MV_cm=8.0, field_layer=-1)
    b = stack_state(charged, field_MV_cm=8.0, field_layer=-1)
    assert_allclose(b.surface_potential_V, a.surface_potential_V, atol=1e-12)
    assert_allclose(b.gate_V - a.gate_V, shift, atol=5e-4)
    # the jump of r D at the sheet is sigma r_c (Gauss's law, charge per length sigma 2 pi r_c)
    _, _, _, d = stack_fields((6.0, 6.0, 5.0), (3.9, 7.5, 3.9), (0, -1e12, 0), (0.5,) * 3, 0.0,
                              channel_radius_nm=r0)
    r_c = r0 + 5 + 3
    r_in = np.array([r0 + 11, r_c, r0 + 5, r0])
    rd = np.asarray(d) * r_in
    assert_allclose(rd[2] - rd[1], -1e12 * 1e4 * Q * r_c, rtol=1e-12)


def test_planar_limit_of_the_coaxial_stack():
    # r0 -> infinity: ln(1 + t/r) r -> t, the coaxial formulas become the planar ones
    # (physics-data sheet Sec. 5.5, row r0 = infinity); so do the channel-shell
    # potential (Sze & Ng 2007 Sec. 4.2 closed form), the barrier and the current.
    from solver.tunneling.current import current_density

    r0 = 1e5  # nm; t / r0 ~ 1e-4
    flat, coax = make_stack(), make_coax(r0)
    for field in (4.0, 10.0):
        a = stack_state(flat, field_MV_cm=field, field_layer=-1)
        b = stack_state(coax, field_MV_cm=field, field_layer=-1)
        assert_allclose(b.layer_fields_MV_cm, a.layer_fields_MV_cm, rtol=3e-4)
        assert_allclose(b.surface_potential_V, a.surface_potential_V, atol=2e-4)
        pa, pb = stack_barrier(flat, a), stack_barrier(coax, b)
        assert pb.barrier.thickness_nm == pytest.approx(pa.barrier.thickness_nm, rel=1e-12)
        assert_allclose(pb.barrier.u_start_eV, pa.barrier.u_start_eV, atol=2e-3)
        assert_allclose(pb.barrier.u_end_eV, pa.barrier.u_end_eV, atol=2e-3)
        j = [current_density(s.barrier, s.fermi_left_eV, s.fermi_right_eV, 300.0) for s in (pa, pb)]
        assert_allclose(j[1], j[0], rtol=3e-3)
    # the shell's classical charge against the planar closed form, depletion to strong inversion
    for psi in (-0.15, 0.3, 0.9, 1.1):
        q_s = float(surface_charge_C_m2(flat, psi))
        from solver.tunneling.stack import shell_potential

        assert_allclose(shell_potential(coax, q_s)[1][-1], psi, atol=2e-4)


def test_coaxial_pieces_converge():
    # Linear Airy pieces of the ln r profile (Gundlach 1966 per piece): the current
    # converges as the chord tolerance shrinks; the default is within ~1e-4 of a
    # 10x finer cut (reference: 2e-5 eV, ~10x the pieces). Channel emission at
    # r0 = 10 nm, direct tunneling and Fowler–Nordheim fields; gate emission too.
    from solver.tunneling.current import current_density

    data = make_coax(10.0)
    for emitter, field in (("channel", 6.0), ("channel", 14.0), ("gate", -12.0)):
        st = stack_state(data, field_MV_cm=field, field_layer=-1 if emitter == "channel" else 0,
                         field_side=emitter)
        j = {}
        for tol in (2e-5, 3e-4, 1e-1):
            sb = stack_barrier(data, st, emitter=emitter, curvature_tol_eV=tol)
            j[tol] = current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, 300.0, rtol=1e-7)
        err_default = abs(j[3e-4] / j[2e-5] - 1)
        err_coarse = abs(j[1e-1] / j[2e-5] - 1)
        assert err_default < 2.5e-4, (emitter, field, err_default)
        assert err_coarse > 10 * err_default


def test_coaxial_barrier_heights_drops_and_fields():
    # Channel emission at r0 = 10 nm: the barrier at the channel is the conduction band
    # offset (electron-affinity rule, physics-data sheet Sec. 3.1), the fall across the
    # tunnel layer is E(r0) r0 ln(1 + t/r0) (ln r potential, Sec. 5.5), the reported
    # field is the one at the injecting interface.
    data = make_coax(10.0)
    st = stack_state(data, field_MV_cm=12.0, field_layer=-1)
    sb = stack_barrier(data, st)
    assert_allclose(sb.barrier_height_eV, 4.05 - 0.9, rtol=1e-12)
    assert_allclose(sb.injecting_field_MV_cm, 12.0, rtol=1e-12)
    assert_allclose(sb.injecting_drop_eV, 12.0 * 0.1 * 10.0 * math.log(1.5), rtol=1e-12)
    b = sb.barrier
    assert_allclose(sum(b.thickness_nm), 17.0, rtol=1e-13)
    assert len(b.thickness_nm) > 3  # the ln r layers are cut into pieces
    # the band falls steepest at the channel (1/r): first piece slope ~ the field there
    slope = (b.u_start_eV[0] - b.u_end_eV[0]) / b.thickness_nm[0]
    assert_allclose(slope, 1.2, rtol=0.05)
    g = stack_barrier(data, stack_state(data, field_MV_cm=-12.0, field_layer=0, field_side="gate"),
                      emitter="gate")
    assert_allclose(g.injecting_field_MV_cm, 12.0, rtol=1e-12)
    assert_allclose(g.barrier_height_eV, 4.4 - 0.9, rtol=1e-12)
    with pytest.raises(ValueError, match="the state is planar"):
        stack_barrier(data, stack_state(make_stack(), stack_V=3.0))


def _solid_variant(case):
    from solver.case import parse_case

    text = case.text.replace("core_radius_nm = 10.0", "").replace('core_material = "SiO2"', "")
    return parse_case(text.replace("channel_radius_nm = 20.0", "channel_radius_nm = 12.0"))


def test_cylinder_channel_matches_classical_poisson_solve():
    # The classical shell (Boltzmann, complete ionization) against the finite-volume
    # Poisson solve of the whole cell with the same model: fields at the channel-side
    # edge of every layer and the band bending agree to the mesh error; hollow
    # (demo) and solid channels, accumulation to strong inversion.
    from solver import solve
    from solver.case import load_case

    hollow = load_case("cases/demo-cell-cylindrical.toml")
    for case, gates in ((hollow, (-6.0, 0.5, 12.0)), (_solid_variant(hollow), (-3.0, 9.0))):
        data = stack_data(case)
        for gate_V in gates:
            sol = solve(case, gate_V, quantum=False, statistics="boltzmann")
            mine = stack_state(data, gate_V=gate_V)
            assert_allclose(mine.layer_fields_MV_cm, sol.layer_fields_MV_cm, rtol=2e-4)
            assert_allclose(mine.surface_potential_V, sol.surface_potential_V, atol=1e-3)
    # with the solver's default (Fermi–Dirac) statistics the classical estimate stays
    # close below strong inversion, where the carriers are non-degenerate
    sol = solve(hollow, 2.0, quantum=False)
    mine = stack_state(stack_data(hollow), gate_V=2.0)
    assert_allclose(mine.layer_fields_MV_cm, sol.layer_fields_MV_cm, rtol=5e-3)


def test_state_from_cylindrical_solution():
    # A classical Boltzmann solve of the cylinder gives the same barrier as the
    # closed-form coaxial state (band edges to the mesh error).
    from solver import solve
    from solver.case import load_case
    from solver.tunneling.stack import state_from_solution

    case = load_case("cases/demo-cell-cylindrical.toml")
    data = stack_data(case)
    sol = solve(case, 14.0, quantum=False, statistics="boltzmann")
    st = state_from_solution(data, sol)
    assert st.cylindrical
    a = stack_barrier(data, st).barrier
    b = stack_barrier(data, stack_state(data, gate_V=14.0)).barrier
    assert len(a.thickness_nm) == len(b.thickness_nm)
    assert_allclose(a.u_start_eV, b.u_start_eV, atol=3e-3)
    assert_allclose(a.u_end_eV, b.u_end_eV, atol=3e-3)
    assert_allclose(a.left[0], b.left[0], atol=3e-3)
    with pytest.raises(ValueError, match="the solution is cylindrical"):
        state_from_solution(make_stack(), sol)


def test_coaxial_inputs_are_checked():
    with pytest.raises(ValueError, match="core_radius_nm must lie in"):
        make_coax(10.0, core=10.0)
    with pytest.raises(ValueError, match="channel_radius_nm must be a finite number > 0"):
        make_coax(math.inf)
    with pytest.raises(ValueError, match="curvature_tol_eV"):
        data = make_coax(10.0)
        stack_barrier(data, stack_state(data, stack_V=5.0), curvature_tol_eV=0.0)


def test_coaxial_image_force_lowering():
    # Schottky lowering sqrt(q F / (4 pi eps0 eps_inf)) = 0.822 eV for SiO2 (2.13) at
    # 10 MV/cm (physics-data sheet Sec. 7), planar image term at the channel surface
    # of a 20 nm cylinder: the field falls by ~5 % over the ~1 nm to the maximum.
    data = make_coax(20.0)
    st = stack_state(data, field_MV_cm=10.0, field_layer=-1)
    plain = stack_barrier(data, st)
    img = stack_barrier(data, st, image_force=True, image_slices=400)
    assert_allclose(plain.barrier.u_start_eV[0] - max(img.barrier.u_start_eV), 0.822, atol=0.03)
