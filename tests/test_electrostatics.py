"""Classical electrostatics of gate stacks against closed forms."""
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from solver.electrostatics import Poisson, neutral_fermi_level_J, thomas_solve
from solver.errors import ConvergenceError
from solver.mesh import DielectricSpec, MeshOptions, SemiconductorSpec, build_structure
from solver.selfconsistent import prepare, solve_structure
from solver.units import BOLTZMANN_J_K, EPSILON0_F_M, EV_TO_J, Q_C

T = 300.0
KT = BOLTZMANN_J_K * T
BETA = Q_C / KT
# Si and SiO2 parameters as in the project's materials data (values only matter
# for self-consistency of the closed forms below)
SI = dict(relative_permittivity=11.7, affinity_eV=4.05, gap_eV=1.1245,
          conduction_dos_m3=2.86e25, valence_dos_m3=3.10e25)
FINE = MeshOptions(interface_spacing_m=0.0025e-9, max_spacing_m=0.25e-9, growth=1.02,
                   quantum_spacing_m=0.25e-9)


def oxide(t_nm=5.0, name="oxide", charge_C_m2=0.0, position=0.5):
    return DielectricSpec(name, "SiO2", t_nm * 1e-9, 3.9, 0.9, 8.9, 0.5, 0.32, charge_C_m2, position)


def nitride(t_nm=6.0, charge_C_m2=0.0, position=0.5):
    return DielectricSpec("trap", "Si3N4", t_nm * 1e-9, 7.5, 2.0, 5.1, 0.5, 0.5, charge_C_m2, position)


def p_silicon(na_m3=1e23, **kw):
    return SemiconductorSpec("channel", "Si", acceptors_m3=na_m3, **SI, **kw)


def planar(layers=(None,), channel=None, wf=4.6, options=FINE, **kw):
    layers = tuple(oxide() if L is None else L for L in layers)
    return build_structure(geometry="planar", temperature_K=T, layers=layers,
                           channel=channel or p_silicon(), metal_work_function_eV=wf,
                           options=options, **kw)


@pytest.fixture(scope="module")
def boltzmann_mos():
    return prepare(planar(), "boltzmann", quantum=False)


def bulk_densities(P):
    ec0 = -SI["affinity_eV"] * EV_TO_J
    ev0 = ec0 - SI["gap_eV"] * EV_TO_J
    ef = P.channel_fermi_J
    return (SI["conduction_dos_m3"] * math.exp((ef - ec0) / KT),
            SI["valence_dos_m3"] * math.exp((ev0 - ef) / KT))


def test_thomas_solve_matches_dense():
    # numpy.linalg.solve as the reference for the tridiagonal kernel
    rng = np.random.default_rng(1)
    n = 12
    lower, upper = rng.uniform(-1, 0, n - 1), rng.uniform(-1, 0, n - 1)
    diag = 3.0 + rng.uniform(0, 1, n)
    rhs = rng.normal(size=n)
    a = np.diag(diag) + np.diag(upper, 1) + np.diag(lower, -1)
    assert_allclose(thomas_solve(lower, diag, upper, rhs), np.linalg.solve(a, rhs), rtol=1e-12)


@pytest.mark.parametrize("gate_V", [-2.0, -0.8, 0.0, 0.5, 1.0, 3.0])
def test_surface_charge_relation_boltzmann(boltzmann_mos, gate_V):
    # Sze & Ng, Physics of Semiconductor Devices, 3rd ed. (2007), Sec. 4.2, Eq. for Q_s(psi_s):
    # Q_s = -sgn(psi_s) sqrt(2) eps_s kT/(q L_D) F(beta psi_s, n_p0/p_p0),
    # F^2 = (e^-bpsi + b psi - 1) + (n_p0/p_p0)(e^bpsi - b psi - 1), L_D = sqrt(eps kT/(q^2 p_p0))
    sol = solve_structure(boltzmann_mos, gate_V, quantum=False)
    n0, p0 = bulk_densities(boltzmann_mos.poisson)
    eps = SI["relative_permittivity"] * EPSILON0_F_M
    ld = math.sqrt(eps * KT / (Q_C**2 * p0))
    bp = BETA * sol.surface_potential_V
    f = math.sqrt(math.expm1(-bp) + bp + n0 / p0 * (math.expm1(bp) - bp))
    qs_C_cm2 = -math.copysign(1.0, bp) * math.sqrt(2) * eps * KT / (Q_C * ld) * f * 1e-4
    assert sol.semiconductor_charge_C_cm2 == pytest.approx(qs_C_cm2, rel=1e-4)
    # Gauss's law at the dielectric/channel interface: the oxide displacement
    # (toward the channel) equals minus the charge beyond it
    d_ox = 3.9 * EPSILON0_F_M * sol.layer_fields_MV_cm[0] * 1e8 * 1e-4  # C/cm^2
    assert d_ox == pytest.approx(-sol.semiconductor_charge_C_cm2, rel=1e-9)


def test_depletion_approximation_limit(boltzmann_mos):
    # Sze & Ng 2007, Sec. 4.2: in depletion (kT << q psi_s < q psi_B) the exact
    # Q_s tends to the depletion form -sqrt(2 eps q N_A (psi_s - kT/q))
    eps = SI["relative_permittivity"] * EPSILON0_F_M
    for gate_V in (0.0, 0.15, 0.25):
        sol = solve_structure(boltzmann_mos, gate_V, quantum=False)
        psi = sol.surface_potential_V
        assert 0.25 < psi < 0.6
        qd = -math.sqrt(2 * eps * Q_C * 1e23 * (psi - KT / Q_C)) * 1e-4
        assert sol.semiconductor_charge_C_cm2 == pytest.approx(qd, rel=1e-3)


def test_newton_converges_to_1e_9_volt_with_small_charge_residual(boltzmann_mos):
    sol = solve_structure(boltzmann_mos, 2.0, quantum=False)
    rec = sol.convergence
    assert rec.converged and rec.residual_history[-1] <= 1e-9
    assert sol.charge_residual < 1e-14  # C/cm^2, about 1e5 q/cm^2
    assert sol.iterations <= 30


def test_unconverged_newton_raises_with_history():
    P = Poisson(planar(options=MeshOptions()), "fermi-dirac")
    with pytest.raises(ConvergenceError) as info:
        P.solve(3.0, max_iterations=2)
    assert len(info.value.residual_history) == 2
    assert not info.value.record.converged


def test_flat_band_from_work_functions():
    # Sze & Ng 2007, Sec. 4.2: V_FB = Phi_m - Phi_s for a charge-free stack,
    # Phi_s = chi + (E_c - E_F) with E_c - E_F = E_g - kT ln(N_v/p_0) (Boltzmann, p_0 = N_A)
    st = planar(layers=(oxide(6.0), nitride(6.0), oxide(5.0)), options=MeshOptions())
    P = Poisson(st, "boltzmann")
    phi_s = SI["affinity_eV"] + SI["gap_eV"] - KT / EV_TO_J * math.log(SI["valence_dos_m3"] / 1e23)
    assert P.flatband_V == pytest.approx(4.6 - phi_s, abs=1e-6)
    phi, rec = P.solve(P.flatband_V)
    assert np.abs(phi).max() < 1e-9


def test_incomplete_ionization_neutral_level():
    # Sze & Ng 2007, Ch. 1 (neutrality with partially ionized acceptors),
    # Boltzmann holes: p = N_A / (1 + g_A exp((E_A - E_F)/kT)), p = N_v exp((E_v - E_F)/kT)
    # => g' p^2 + p - N_A = 0 with g' = g_A exp(E_ion/kT) / N_v (g_A = 4, common practice for Si)
    na = 1e24
    spec = p_silicon(na, incomplete_ionization=True, acceptor_ionization_eV=0.045)
    ef = neutral_fermi_level_J(spec, T, "boltzmann")
    gp = 4.0 * math.exp(0.045 * EV_TO_J / KT) / SI["valence_dos_m3"]
    p = (-1 + math.sqrt(1 + 4 * gp * na)) / (2 * gp)
    ev0 = -(SI["affinity_eV"] + SI["gap_eV"]) * EV_TO_J
    assert SI["valence_dos_m3"] * math.exp((ev0 - ef) / KT) == pytest.approx(p, rel=1e-9)


def test_sheet_charge_shift_and_gauss_at_every_interface():
    # physics-data sheet Sec. 7 (computed from Sec. 6 item 13): 1e12 electrons/cm^2
    # behind 6 nm SiO2 + 3 nm Si3N4 shift V_FB by +0.351 V; the charge-free
    # channel is then exactly at flat band (planar Delta V = -(Q/eps0) sum t_i/eps_i)
    sigma = -Q_C * 1e12 * 1e4
    st = planar(layers=(oxide(6.0, "blocking"), nitride(6.0, sigma, 0.5), oxide(5.0, "tunnel")),
                options=MeshOptions())
    prep = prepare(st, "fermi-dirac", quantum=False)
    shift = -sigma / EPSILON0_F_M * (6e-9 / 3.9 + 3e-9 / 7.5)
    assert shift == pytest.approx(0.351, abs=1e-3)
    sol = solve_structure(prep, prep.poisson.flatband_V + shift, quantum=False)
    assert abs(sol.surface_potential_V) < 1e-9
    # at a bias in inversion: jump of eps*E equals the sheet charge at the sheet,
    # continuity at the charge-free dielectric interfaces (Jackson, Classical
    # Electrodynamics, Sec. 1.6)
    sol = solve_structure(prep, 3.0, quantum=False)
    x = np.array(sol.x_nm) * 1e-9
    phi = np.array(sol.potential_V)
    d = -np.diff(phi) / np.diff(x) * st.eps_cell  # displacement toward the channel, per link
    j = int(np.nonzero(st.fixed_charge)[0][0])
    assert d[j] - d[j - 1] == pytest.approx(sigma, rel=1e-9)
    for k in st.layer_regions[1:]:
        i = st.regions[k].lo
        assert d[i] == pytest.approx(d[i - 1], rel=1e-12)
    assert d[st.interface_node - 1] * 1e-4 == pytest.approx(-sol.semiconductor_charge_C_cm2, rel=1e-9)
    assert sol.gate_charge_C_cm2 == pytest.approx(d[0] * 1e-4, rel=1e-9)


def test_interface_charge_shifts_flat_band():
    # Sze & Ng 2007, Sec. 4.2: a fixed interface charge Q_f shifts V_FB by -Q_f/C_ox
    qf = Q_C * 5e11 * 1e4
    st = planar(options=MeshOptions(), interface_charge_C_m2=qf)
    prep = prepare(st, "fermi-dirac", quantum=False)
    cox = 3.9 * EPSILON0_F_M / 5e-9
    sol = solve_structure(prep, prep.poisson.flatband_V - qf / cox, quantum=False)
    assert abs(sol.surface_potential_V) < 1e-9


def test_interface_traps_add_charge_linear_in_surface_potential():
    # common practice: constant D_it across the gap, neutral level at midgap,
    # Q_it = q D_it (E_mid - E_F) at the surface
    dit = 1e12 * 1e4 / Q_C  # 1e12 per cm^2 per eV
    st = planar(options=MeshOptions(), interface_trap_density_m2_J=dit)
    prep = prepare(st, "fermi-dirac", quantum=False)
    sol = solve_structure(prep, 0.5, quantum=False)
    P = prep.poisson
    mid = (-SI["affinity_eV"] - SI["gap_eV"] / 2 - sol.surface_potential_V) * EV_TO_J
    expected = Q_C * dit * (mid - P.channel_fermi_J) * 1e-4
    assert sol.interface_trap_charge_C_cm2 == pytest.approx(expected, rel=1e-9)
    d_ox = 3.9 * EPSILON0_F_M * sol.layer_fields_MV_cm[0] * 1e8 * 1e-4
    assert d_ox == pytest.approx(-(sol.semiconductor_charge_C_cm2 + sol.interface_trap_charge_C_cm2),
                                 rel=1e-8)


def test_fermi_dirac_agrees_with_boltzmann_when_nondegenerate():
    # Blakemore, Solid-State Electron. 25, 1067 (1982): F_1/2(eta) -> exp(eta) for eta << 0;
    # in depletion both statistics give the same charge
    st = planar(options=MeshOptions())
    a = solve_structure(prepare(st, "fermi-dirac", False), 0.0, quantum=False)
    b = solve_structure(prepare(st, "boltzmann", False), 0.0, quantum=False)
    assert a.semiconductor_charge_C_cm2 == pytest.approx(b.semiconductor_charge_C_cm2, rel=2e-3)
    # degenerate strong inversion: Fermi–Dirac holds less charge at the same band bending,
    # so it needs a larger surface potential at the same gate voltage
    a = solve_structure(prepare(st, "fermi-dirac", False), 4.0, quantum=False)
    b = solve_structure(prepare(st, "boltzmann", False), 4.0, quantum=False)
    assert a.surface_potential_V > b.surface_potential_V + 0.01


def test_poly_gate_depletion():
    # Sze & Ng 2007, Sec. 4.2 (depletion approximation applied to the gate):
    # the n+ poly gate depletes by about Q^2/(2 q eps N_D) + kT/q in inversion of p-Si
    nd = 1e26
    gate = SemiconductorSpec("gate", "Si", donors_m3=nd, **SI)
    st = build_structure(geometry="planar", temperature_K=T, layers=(oxide(),), channel=p_silicon(),
                         gate=gate, options=MeshOptions())
    prep = prepare(st, "boltzmann", quantum=False)
    P = prep.poisson
    # poly work function from its neutral level: chi + kT ln(N_c/N_D)
    assert P.gate_work_function_eV == pytest.approx(
        SI["affinity_eV"] + KT / EV_TO_J * math.log(SI["conduction_dos_m3"] / nd), abs=1e-6)
    sol = solve_structure(prep, 3.0, quantum=False)
    g = st.gate_semi
    drop = sol.potential_V[g.nodes[0]] - sol.potential_V[g.nodes[-1]]
    q = sol.gate_charge_C_cm2 * 1e4
    eps = SI["relative_permittivity"] * EPSILON0_F_M
    expected = q * q / (2 * Q_C * eps * nd) + KT / Q_C
    assert drop == pytest.approx(expected, rel=0.1)


# ------------------------------------------------------------------ cylindrical
def coaxial(radius_nm=10.0, core_nm=0.0, layers=None, options=MeshOptions()):
    layers = layers or (oxide(6.0, "blocking"), nitride(6.0), oxide(5.0, "tunnel"))
    kw = {}
    if core_nm:
        kw = dict(core_radius_m=core_nm * 1e-9, core=oxide(core_nm, "core"))
    return build_structure(geometry="cylindrical", temperature_K=T, layers=layers, channel=p_silicon(),
                           metal_work_function_eV=4.6, channel_radius_m=radius_nm * 1e-9,
                           options=options, **kw)


@pytest.mark.parametrize("core_nm", [0.0, 5.0])
def test_coaxial_capacitor_field_and_capacitance(core_nm):
    # Jackson, Classical Electrodynamics, Sec. 1.6 (coaxial capacitor):
    # C = 2 pi eps0 / sum_i ln(r_{i+1}/r_i)/eps_i per length, E_i(r) = V / (eps_i r sum_j ln/eps_j)
    st = coaxial(10.0, core_nm)
    prep = prepare(st, "fermi-dirac", quantum=False)
    sol = solve_structure(prep, 6.0, quantum=False)
    v_stack = sum(sol.layer_voltages_V)
    radii = [10.0, 15.0, 21.0, 27.0]  # nm: channel, tunnel/trap, trap/blocking, gate
    eps = [3.9, 7.5, 3.9]            # tunnel, trap, blocking
    s = sum(math.log(radii[i + 1] / radii[i]) / eps[i] for i in range(3))
    e_tunnel = v_stack / (3.9 * 10e-9 * s) * 1e-8
    e_block_inner = v_stack / (3.9 * 21e-9 * s) * 1e-8
    fields = sol.layer_fields_MV_cm  # gate first: blocking, trap, tunnel
    assert fields[2] == pytest.approx(e_tunnel, rel=1e-9)
    assert fields[0] == pytest.approx(e_block_inner, rel=1e-9)
    c_per_length = 2 * math.pi * EPSILON0_F_M / s  # F/m
    q_gate_per_length = sol.gate_charge_C_cm2 * 1e4 * 2 * math.pi * 10e-9
    assert q_gate_per_length == pytest.approx(c_per_length * v_stack, rel=1e-9)
    # physics-data sheet Sec. 5.5 (computed there): 24.05 MV/cm at the tunnel layer for 20 V, r0 = 10 nm
    assert fields[2] * 20.0 / v_stack == pytest.approx(24.05, abs=0.01)


def test_coaxial_trapped_sheet_threshold_shift():
    # physics-data sheet Sec. 7 (from Sec. 6 item 13): 1e12 electrons/cm^2 at mid-nitride
    # of the Sec. 5.5 stack on r0 = 20 nm shift V_FB by +0.299 V;
    # Delta V = -(sigma r_c / eps0) sum_{r_c -> r_g} ln(r_{i+1}/r_i)/eps_i
    sigma = -Q_C * 1e12 * 1e4
    layers = (oxide(6.0, "blocking"), nitride(6.0, sigma, 0.5), oxide(5.0, "tunnel"))
    st = coaxial(20.0, layers=layers)
    prep = prepare(st, "fermi-dirac", quantum=False)
    rc = 28e-9
    shift = -sigma * rc / EPSILON0_F_M * (math.log(31 / 28) / 7.5 + math.log(37 / 31) / 3.9)
    assert shift == pytest.approx(0.299, abs=1e-3)
    sol = solve_structure(prep, prep.poisson.flatband_V + shift, quantum=False)
    assert abs(sol.surface_potential_V) < 1e-9
