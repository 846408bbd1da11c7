"""Subband-resolved channel emission (solver.tunneling.subband)."""
import math
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.constants import e as Q, hbar as HBAR, m_e as M0
from scipy.special import ai_zeros

from solver import load_case, solve
from solver.schrodinger import eigenstates
from solver.tunneling.barrier import Barrier
from solver.tunneling.current import current_density
from solver.tunneling.stack import stack_barrier, stack_data, state_from_solution
from solver.tunneling.subband import (
    channel_subband_current,
    interface_amplitude,
    net_emission_factor,
    solution_stack_barrier,
    subband_current_density,
    transit_impact_frequency_Hz,
    wavefunction_impact_frequency_Hz,
)

ROOT = Path(__file__).resolve().parents[2]
DEMO = load_case(ROOT / "cases" / "demo-cell.toml")
MOS = load_case(ROOT / "cases" / "mos-capacitor.toml")


def _triangular_f(field_V_m, energy_J, mass):
    # Round trip of a carrier of energy E in U = qFz against a hard wall at z = 0:
    # t(0 -> z_t) = integral dz sqrt(m / (2 (E - qFz))) = sqrt(2 m E) / (qF), so
    # f = 1 / (2 t) = qF / (2 sqrt(2 m E)) (derived in the module docstring; uniformly
    # decelerated motion, any mechanics text)
    return Q * field_V_m / (2.0 * np.sqrt(2.0 * mass * M0 * energy_J))


# ------------------------------------------------------------------ impact frequencies
@pytest.mark.parametrize("mass", [0.19, 0.916])
def test_transit_time_triangular_closed_form(mass):
    F = 2e8  # V/m (2 MV/cm)
    z = np.linspace(0.0, 30.0, 7)  # nm; U linear, so any grid integrates exactly
    u = F * z * 1e-9  # eV
    E = np.array([0.05, 0.2, 0.7, 1.3])
    f = transit_impact_frequency_Hz(z, u, E, mass)
    assert_allclose(f, _triangular_f(F, E * Q, mass), rtol=1e-12)


def test_transit_time_half_harmonic_well():
    # U = m w^2 z^2 / 2 with a hard wall at z = 0: the round trip is half a classical
    # period, f = w / pi for every energy (harmonic oscillator, period 2 pi / w;
    # Goldstein, Classical Mechanics, Sec. 3.7). Checks the turning-point integration
    # on a curved, sampled profile.
    mass, omega = 0.3, 5e13  # m0, rad/s
    z = np.linspace(0.0, 40.0, 40001)
    u = 0.5 * mass * M0 * omega**2 * (z * 1e-9) ** 2 / Q
    E = np.array([0.02, 0.1, 0.4])
    f = transit_impact_frequency_Hz(z, u, E, mass)
    assert_allclose(f, omega / math.pi, rtol=2e-3)
    # no turning point: the carrier bounces off the far end, in a flat box of width L
    # f = v / (2 L) (free flight)
    v = math.sqrt(2 * 0.5 * Q / (mass * M0))
    assert_allclose(transit_impact_frequency_Hz(z, np.zeros_like(z), 0.5, mass, end_nm=1.0),
                    v / (2 * 1e-9), rtol=1e-6)
    # no allowed region at the wall: no impacts
    assert transit_impact_frequency_Hz(z, u + 1.0, 0.5, mass) == 0.0


def test_triangular_well_both_forms_agree():
    # Hard-wall triangular well U = qFz: E_n = (hbar^2 (qF)^2 / 2m)^(1/3) |a_n| with a_n
    # the zeros of Ai (scipy.special.ai_zeros; Ando, Fowler, Stern, RMP 54, 437 (1982),
    # Sec. III.A), the transit-time f = qF / (2 sqrt(2 m E_n)), and the hard-wall sum
    # rule psi'(0)^2 = 2 m qF / hbar^2 makes the wavefunction form equal to it.
    mass, F = 0.916, 1e8
    z = np.linspace(0.0, 40.0, 8001)
    u = F * z * 1e-9
    E, psi = eigenstates(z, u, np.full(z.size, mass), 3)
    a = -ai_zeros(3)[0]
    scale_eV = (HBAR**2 * (Q * F) ** 2 / (2 * mass * M0)) ** (1 / 3) / Q
    assert_allclose(E, scale_eV * a, rtol=1e-4)
    f_closed = _triangular_f(F, E * Q, mass)
    f_transit = transit_impact_frequency_Hz(z, u, E, mass)
    assert_allclose(f_transit, f_closed, rtol=1e-9)
    for n in range(3):
        p0, dp0 = interface_amplitude(z, psi[:, n] ** 2, fit_nm=0.03)
        assert abs(p0) < 1e-3
        assert_allclose(dp0**2 * 1e27, 2 * mass * M0 * Q * F / HBAR**2, rtol=2e-3)
        fw = wavefunction_impact_frequency_Hz(p0, dp0, E[n], 0.0, mass)
        assert_allclose(fw, f_closed[n], rtol=3e-3)


def test_wavefunction_form_at_a_flat_step():
    # psi = A (e^{ikz} + r e^{-ikz}) at a barrier: the incident flux hbar k |A|^2 / m
    # per unit |A|^2 is what the form returns for any reflection phase (elementary
    # scattering, e.g. Griffiths, Introduction to QM, Sec. 2.5).
    mass, E = 0.5, 0.3
    k = math.sqrt(2 * mass * M0 * E * Q) / HBAR * 1e-9  # nm^-1
    for phase in (0.3, 1.1, 2.9):
        r = np.exp(1j * phase)
        psi0 = 1.0 + r
        dpsi0 = 1j * k * (1.0 - r)
        # a real standing wave: multiply by the phase that makes psi real
        c = np.exp(-0.5j * phase)
        p, dp = (psi0 * c).real, (dpsi0 * c).real
        assert abs((psi0 * c).imag) < 1e-12 and abs((dpsi0 * c).imag) < 1e-12
        f = wavefunction_impact_frequency_Hz(p, dp, E, 0.0, mass)
        assert_allclose(f, HBAR * (k * 1e9) / (mass * M0) * 1e9, rtol=1e-12)  # |A|^2 = 1 nm^-1


# ------------------------------------------------------------------ the current kernel
def _oxide_barrier(edge=0.0, mass=0.916):
    return Barrier((3.0,), (3.1,), (1.0,), (0.5,), left=(edge, mass), right=(-5.0, 1.0))


def test_current_is_q_n_f_t_with_the_rectangular_closed_form():
    # physics-data Sec. 7 (closed form of Sec. 6 item 1, BenDaniel-Duke matching):
    # E 1.0 eV, U 3.1 eV, d 2 nm, m_b 0.5, leads (0, 1.0): T = 1.88680e-9; the current of
    # the impact-frequency picture is J = q N f T (scipy.constants.e)
    b = Barrier((2.0,), (3.1,), (3.1,), (0.5,), left=(0.0, 1.0), right=(0.0, 1.0))
    N, f = 2e12, 3e13  # cm^-2, Hz
    j = subband_current_density(b, np.array([1.0]), np.array([N]), np.array([f]))
    assert_allclose(j, Q * N * f * 1.88680e-9, rtol=1e-5)
    jw = subband_current_density(b, np.array([1.0]), np.array([N]), np.array([f]), model="wkb")
    assert_allclose(jw, Q * N * f * 7.592e-10, rtol=1e-3)  # the WKB value of the same row


def test_current_linear_in_population_and_frequency():
    b = _oxide_barrier()
    E = np.array([0.1, 0.25])
    N = np.array([3e12, 4e11])
    f = np.array([5e13, 2e13])
    j = subband_current_density(b, E, N, f)
    assert np.all(j > 0)
    # J = q N f T (the impact-frequency picture): linear in N_i and f_i at a fixed barrier
    assert_allclose(subband_current_density(b, E, 2.5 * N, f), 2.5 * j, rtol=1e-14)
    assert_allclose(subband_current_density(b, E, N, 3.0 * f), 3.0 * j, rtol=1e-14)
    one = subband_current_density(b, E[:1], N[:1], f[:1])
    assert_allclose(one, j[:1], rtol=1e-14)
    assert subband_current_density(b, np.zeros(0), np.zeros(0), np.zeros(0)).shape == (0,)
    with pytest.raises(ValueError, match="together"):
        subband_current_density(b, E, N, f, fermi_emitter_eV=0.0)
    with pytest.raises(ValueError, match="population_cm2"):
        subband_current_density(b, E, -N, f)


def test_net_factor_detailed_balance_and_reversal():
    E = np.array([-0.1, 0.05, 0.3])
    # equal Fermi levels: emission and back-flow balance exactly (detailed balance)
    balanced = net_emission_factor(E, 0.0, 0.0, 300.0)
    assert np.all(balanced == 0.0) and not np.any(np.signbit(balanced))
    # collector far below: the whole population emits
    assert_allclose(net_emission_factor(E, 0.0, -5.0, 300.0), 1.0, rtol=1e-12)
    # collector above the emitter: the flow reverses (negative)
    assert np.all(net_emission_factor(E, 0.0, 0.2, 300.0) < 0)
    b = _oxide_barrier()
    N, f = np.full(3, 1e12), np.full(3, 1e13)
    fwd = subband_current_density(b, E + 0.2, N, f, fermi_emitter_eV=0.0, fermi_collector_eV=-0.05,
                                  temperature_K=300.0)
    rev = subband_current_density(b, E + 0.2, N, f, fermi_emitter_eV=0.0, fermi_collector_eV=0.05,
                                  temperature_K=300.0)
    assert np.all(fwd > 0) and np.all(rev < 0)
    # Boltzmann limit (E well above both Fermi levels): factor 1 - exp((E_Fc - E_Fe)/kT)
    kT = 8.617333262e-5 * 300.0  # scipy.constants k / e
    assert_allclose(net_emission_factor(1.0, 0.0, 0.03, 300.0), -math.expm1(0.03 / kT), rtol=1e-9)


# ------------------------------------------------------------------ self-consistent cases
@pytest.fixture(scope="module")
def demo_solutions():
    return {V: solve(DEMO, V) for V in (10.0, 12.0, 14.0)}


def _incident_flux_3d(sb):
    """Carriers per cm^2 and s striking the interface from the 3-D lead (Tsu–Esaki with T = 1)."""
    j = current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, sb.temperature_K,
                        model=lambda b, e: np.ones_like(e))
    return j / Q


@pytest.mark.parametrize("gate_V", [10.0, 12.0, 14.0])
def test_demo_cell_subband_vs_tsu_esaki(demo_solutions, gate_V):
    sol = demo_solutions[gate_V]
    r = channel_subband_current(DEMO, sol)
    assert r.carrier == "electron" and set(r.valley) == {"2-fold", "4-fold"}
    # the listed subbands hold the channel's electrons (quantized in strong inversion)
    assert_allclose(r.population_total_cm2, r.sheet_cm2, rtol=1e-3)
    assert r.total_A_cm2 > 0 and r.tsu_esaki_A_cm2 > 0  # emission from the channel: positive
    assert np.all(r.net_factor == 1.0)  # gate Fermi level ~gate_V below: no back-flow
    # Same barrier, two supplies: within an order of magnitude in strong inversion
    # (common practice: the subband picture refines, not replaces, the 3-D estimate)
    ratio = r.total_A_cm2 / r.tsu_esaki_A_cm2
    assert 0.1 < ratio < 10.0
    # The two effects of quantization, each of a definite sign (common practice):
    # (1) it reduces the supply: the subbands strike the interface less often than the
    #     3-D electron gas at the surface band edge with the same Fermi level
    flux_2d = float(np.sum(r.population_cm2 * r.impact_frequency_Hz))
    flux_3d = _incident_flux_3d(r.barrier)
    assert flux_2d < flux_3d
    # (2) it raises the emitting energy: every subband lies above the surface band edge,
    #     and the mean escape probability per impact exceeds the 3-D one
    assert np.all(r.energy_eV - sol.fermi_level_eV > r.emitter_edge_eV)
    t_2d = r.total_A_cm2 / (Q * flux_2d)
    t_3d = r.tsu_esaki_A_cm2 / (Q * flux_3d)
    assert t_2d > t_3d
    # the two impact-frequency forms (transit time, wavefunction flux) within a factor 2
    # for the subbands that hold carriers (> 1 % of the total)
    held = r.population_cm2 > 0.01 * r.population_total_cm2
    q = r.impact_frequency_wavefunction_Hz[held] / r.impact_frequency_transit_Hz[held]
    assert np.all((q > 0.5) & (q < 2.0))
    # WKB against exact on the same subbands: the same order (thick barrier, no resonance)
    assert 0.2 < r.total_wkb_A_cm2 / r.total_A_cm2 < 5.0


def test_barrier_is_the_solution_stack(demo_solutions):
    sol = demo_solutions[12.0]
    sb = solution_stack_barrier(DEMO, sol)
    b = sb.barrier
    ef = sol.fermi_level_eV
    # channel first: the layers of the solution reversed, their own band edges
    want_start = [p[1] - ef for p in sol.layer_conduction_band_eV][::-1]
    want_end = [p[0] - ef for p in sol.layer_conduction_band_eV][::-1]
    assert_allclose(b.u_start_eV, want_start, atol=1e-12)
    assert_allclose(b.u_end_eV, want_end, atol=1e-12)
    assert_allclose(b.thickness_nm, [4.5, 6.0, 10.0], rtol=1e-9)
    # the stack electrostatics of the same solution (displacement continuity,
    # Jackson Sec. 4.4) gives the same profile up to the carriers penetrating the oxide
    ref = stack_barrier(stack_data(DEMO), state_from_solution(stack_data(DEMO), sol)).barrier
    assert_allclose(b.u_start_eV, ref.u_start_eV, atol=2e-3)
    assert_allclose(b.u_end_eV, ref.u_end_eV, atol=2e-3)
    assert b.left == ref.left and b.right == ref.right


def test_trapped_charge_splits_the_layer():
    case = DEMO.with_value("layers.trap.charge_cm2", -4e12)
    sol = solve(case, 12.0)
    sb = solution_stack_barrier(case, sol)
    ref = stack_barrier(stack_data(case), state_from_solution(stack_data(case), sol)).barrier
    assert len(sb.barrier.thickness_nm) == 4 == len(ref.thickness_nm)
    assert_allclose(sb.barrier.thickness_nm, ref.thickness_nm, rtol=1e-9)
    # the kink at the sheet (Gauss's law, Jackson Sec. 4.4) as in the stack electrostatics
    assert_allclose(sb.barrier.u_start_eV, ref.u_start_eV, atol=2e-3)
    assert_allclose(sb.barrier.u_end_eV, ref.u_end_eV, atol=2e-3)
    # negative trapped charge lowers the tunnel-oxide field and the emission
    r0 = channel_subband_current(DEMO, solve(DEMO, 12.0), tsu_esaki=False)
    r1 = channel_subband_current(case, sol, tsu_esaki=False)
    assert math.isnan(r1.tsu_esaki_A_cm2)
    assert 0 < r1.total_A_cm2 < r0.total_A_cm2


def test_mos_capacitor_inversion_and_equilibrium():
    r = channel_subband_current(MOS, solve(MOS, 3.5))
    assert r.total_A_cm2 > 0 and 0.1 < r.total_A_cm2 / r.tsu_esaki_A_cm2 < 10.0
    # gate_V = 0: the gate Fermi level is the channel's, no net current in either picture
    # (detailed balance; Tsu & Esaki, APL 22, 562 (1973))
    r0 = channel_subband_current(MOS, solve(MOS, 0.0))
    assert len(r0.valley) > 0
    assert np.all(r0.current_A_cm2 == 0.0) and r0.total_A_cm2 == 0.0
    assert r0.tsu_esaki_A_cm2 == 0.0


def test_no_occupied_subband_gives_zero():
    # classical channel: no subbands, no subband current (the 3-D estimate remains)
    r = channel_subband_current(MOS, solve(MOS, 2.0, quantum=False))
    assert r.valley == () and r.total_A_cm2 == 0.0 and r.current_A_cm2.shape == (0,)
    assert r.tsu_esaki_A_cm2 > 0
    # accumulation of p-type: no electron subbands; the holes emit with the gate negative
    acc = solve(MOS, -2.5)
    e = channel_subband_current(MOS, acc, carrier="electron", tsu_esaki=False)
    assert e.valley == () and e.total_A_cm2 == 0.0
    h = channel_subband_current(MOS, acc, carrier="hole")
    assert set(h.valley) <= {"heavy hole", "light hole", "split-off"} and len(h.valley) > 0
    assert h.total_A_cm2 > 0 and h.tsu_esaki_A_cm2 > 0
    assert 0.1 < h.total_A_cm2 / h.tsu_esaki_A_cm2 < 10.0


def test_bad_names():
    sol = solve(MOS, 1.5)
    with pytest.raises(ValueError, match="carrier"):
        channel_subband_current(MOS, sol, carrier="proton")
    with pytest.raises(ValueError, match="impact"):
        channel_subband_current(MOS, sol, impact="guess")
    w = channel_subband_current(MOS, sol, impact="wavefunction", tsu_esaki=False)
    assert_allclose(w.impact_frequency_Hz, w.impact_frequency_wavefunction_Hz)


def test_cylindrical_cell_program_bias():
    # coaxial cell: the barrier follows the ln r profile of the stack (Jackson, Gauss's
    # law in a cylinder), the impacts run along the radius into the channel
    case = load_case(ROOT / "cases" / "demo-cell-cylindrical.toml")
    sol = solve(case, 12.0)
    r = channel_subband_current(case, sol)
    assert r.total_A_cm2 > 0 and 0.1 < r.total_A_cm2 / r.tsu_esaki_A_cm2 < 10.0
    assert len(r.barrier.barrier.thickness_nm) > len(case.layers)  # the ln r pieces
    held = r.population_cm2 > 0.01 * r.population_total_cm2
    q = r.impact_frequency_wavefunction_Hz[held] / r.impact_frequency_transit_Hz[held]
    assert np.all((q > 0.5) & (q < 2.0))
