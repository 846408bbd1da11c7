"""The cell stage: threshold shift, charge balance, ISPP, erase, retention, bake equivalences."""
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from numpy.testing import assert_allclose
from scipy.constants import e as Q, epsilon_0 as EPS0, k as KB

from solver import cell as C
from solver.case import load_case, parse_case
from solver.errors import CaseError

PLANAR = "cases/demo-cell.toml"
CYLINDER = "cases/demo-cell-cylindrical.toml"
KB_EV = KB / Q
HOUR = 3600.0
YEAR_H = 8766.0  # hours in a (Julian) year


@pytest.fixture(scope="module")
def case():
    return load_case(PLANAR)


@pytest.fixture(scope="module")
def cell(case):
    return C.prepare_cell(case)


@pytest.fixture(scope="module")
def cylinder():
    return load_case(CYLINDER)


@pytest.fixture(scope="module")
def cyl_cell(cylinder):
    return C.prepare_cell(cylinder)


@pytest.fixture(scope="module")
def programmed(cell):
    return C.program(cell, 18.0, 1e-4)


# ---------------------------------------------------------------- threshold shift


def test_planar_sheet_shift_check_value():
    # physics-data Sec. 7 (computed there from Sec. 6 item 13): 1e12 e/cm^2 behind
    # 6 nm SiO2 + 3 nm SiN (eps 3.9, 7.5) raise V_T by 0.351 V
    dv = C.threshold_shift_V(-1e12, [6.0, 6.0], [3.9, 7.5], 1, 0.5)
    assert dv == pytest.approx(0.351, rel=1e-3)
    # closed form Q X / eps0 with scipy.constants (Sze & Ng 2007, Sec. 4.3)
    assert dv == pytest.approx(1e16 * Q * (6e-9 / 3.9 + 3e-9 / 7.5) / EPS0, rel=1e-12)


@pytest.mark.parametrize("r0, expected", [(10.0, 0.277), (20.0, 0.299), (30.0, 0.310), (50.0, 0.323)])
def test_coaxial_sheet_shift_check_values(r0, expected):
    # physics-data Sec. 7: coaxial stack of Sec. 5.5 (gate side first: 6 nm SiO2 blocking,
    # 6 nm SiN, 5 nm SiO2 tunnel), centroid mid-SiN, per 1e12 e/cm^2 (quoted to 3 digits)
    dv = C.threshold_shift_V(-1e12, [6.0, 6.0, 5.0], [3.9, 7.5, 3.9], 1, 0.5, channel_radius_nm=r0)
    assert abs(dv - expected) <= 6e-4


def test_coaxial_shift_tends_to_planar():
    # physics-data Sec. 6 item 13: the coaxial form becomes the planar one as r_c -> infinity
    args = (-1e12, [6.0, 6.0, 5.0], [3.9, 7.5, 3.9], 1, 0.3)
    assert C.threshold_shift_V(*args, channel_radius_nm=1e8) == pytest.approx(C.threshold_shift_V(*args), rel=1e-6)


def test_shift_matches_flat_band_shift_of_the_stack_summary(case):
    # the flat-band shift of a sheet charge (Sze & Ng 2007, Sec. 4.3) is the threshold shift
    from solver.stack import summarize

    dv = C.cell_threshold_shift_V(case, -2e12)
    vfb = summarize(case.with_value("layers.trap.charge_cm2", -2e12)).flat_band_V - summarize(case).flat_band_V
    assert dv == pytest.approx(vfb, rel=1e-9)
    cyl = load_case(CYLINDER)
    dvc = C.cell_threshold_shift_V(cyl, -1e12)
    assert abs(dvc - 0.299) <= 6e-4  # physics-data Sec. 7, r_0 = 20 nm (the demo cylinder is that stack)


@pytest.mark.parametrize("geometry", ["planar", "cylindrical"])
def test_fields_follow_gauss_law_of_the_stack(case, cell, cylinder, cyl_cell, geometry):
    # the cell's tabulated electrostatics against a direct stack_state with the sheet
    # (Gauss's law, solver.tunneling.stack; coaxial: r D constant between sheets)
    from solver.tunneling.stack import stack_data, stack_state

    if geometry == "cylindrical":
        case, cell = cylinder, cyl_cell
    for gate_V, q in ((17.0, -5e12), (-15.0, -8e12), (0.0, -1e13), (12.0, 2e12)):
        data = stack_data(case.with_value("layers.trap.charge_cm2", q))
        st = stack_state(data, gate_V=gate_V)
        ft, fb = cell.fields_MV_cm(gate_V, q)
        assert ft == pytest.approx(st.segment_field_MV_cm[-1], rel=2e-4, abs=2e-3)
        assert fb == pytest.approx(st.segment_field_gate_side_MV_cm[0], rel=2e-4, abs=2e-3)


def test_neutral_threshold_is_the_classical_one(case, cell):
    # Sze & Ng 2007, Sec. 4.2 (physics-data Sec. 6 item 11), planar, no stored charge:
    # V_T = V_FB + 2 psi_B + sqrt(2 eps_s q N_A 2 psi_B) / C_ox
    from solver.stack import summarize
    from solver.tunneling.stack import stack_data

    d = stack_data(case)
    kT = KB_EV * d.temperature_K
    ni = math.sqrt(d.channel_conduction_dos_cm3 * d.channel_valence_dos_cm3) * math.exp(-d.channel_band_gap_eV / (2 * kT))
    psi_b = kT * math.log(d.channel_acceptors_cm3 / ni)
    summary = summarize(case)
    cox = summary.capacitance_F_cm2 * 1e4  # F/m^2
    # the stack's own flat-band voltage, with the channel work function of the same (Nc, Nv, Eg) set
    phi_s = d.channel_affinity_eV + d.channel_band_gap_eV - kT * math.log(d.channel_valence_dos_cm3 / d.channel_acceptors_cm3)
    vfb = d.gate_work_function_eV - phi_s
    vt = vfb + 2 * psi_b + math.sqrt(2 * d.channel_permittivity * EPS0 * Q * d.channel_acceptors_cm3 * 1e6 * 2 * psi_b) / cox
    assert cell.neutral_threshold_V == pytest.approx(vt, abs=2e-3)


# ---------------------------------------------------------------- program


def test_program_is_monotonic_in_time_and_voltage(cell):
    # a positive gate pulse injects electrons and raises V_T, the more the higher the
    # voltage (physics-data Sec. 5.2; common practice)
    finals = []
    for v in (16.0, 17.0, 18.0):
        tr = C.program(cell, v, 1e-4)
        assert np.all(np.diff(tr.threshold_V) >= -1e-9)
        assert tr.final_threshold_V > tr.start_threshold_V
        finals.append(tr.final_threshold_V)
    assert finals[0] < finals[1] < finals[2]


@settings(max_examples=8, deadline=None)
@given(gate_V=st.floats(14.0, 19.0), log_pulse=st.floats(-7.0, -2.0))
def test_program_never_overshoots(cell, gate_V, log_pulse):
    # self-limiting injection (Gauss's law): V_T rises monotonically and the tunnel field
    # falls but never reverses (the injection stops before it would)
    tr = C.program(cell, gate_V, 10.0 ** log_pulse)
    assert np.all(np.diff(tr.threshold_V) >= -1e-9)
    assert np.all(np.diff(tr.tunnel_field_MV_cm) <= 1e-9)
    assert tr.tunnel_field_MV_cm[-1] > 5.0


def test_output_times_short_of_the_pulse_end_still_end_there(cell):
    # the final state is that at the end of the pulse whatever output times were asked for
    full = C.program(cell, 17.0, 1e-4)
    short = C.program(cell, 17.0, 1e-4, times_s=[1e-8, 1e-6])
    assert short.time_s.tolist() == [1e-8, 1e-6, 1e-4]
    assert short.final_threshold_V == pytest.approx(full.final_threshold_V, abs=1e-5)


def test_pulses_shorter_than_the_first_output_time(cell):
    tr = C.program(cell, 18.0, 1e-12)
    assert tr.time_s.tolist() == [1e-12]
    assert tr.start_threshold_V < tr.final_threshold_V < tr.start_threshold_V + 1e-3


def test_program_self_limits(cell, programmed):
    # stored electrons lower the tunnel field (Gauss's law), so the injection falls
    f = programmed.tunnel_field_MV_cm
    assert np.all(np.diff(f) <= 1e-9) and f[-1] < f[0] - 2.0
    j = programmed.currents_A_cm2["channel_electrons"]
    assert j[-1] < 1e-2 * j[0]


def _net_current(tr):
    return sum(C.FLUX_SIGNS[k] * tr.currents_A_cm2[k] for k in C.FLUX_NAMES)


@pytest.mark.parametrize("operation", ["program", "erase"])
def test_charge_conservation(cell, programmed, operation):
    # q dQ/dt = sum of the signed fluxes: the integrated current equals the change of
    # the stored charge (continuity; trapezoid rule over ln t on a fine output grid)
    times = np.geomspace(1e-14, 1e-4 if operation == "program" else 1e-3, 1200)
    if operation == "program":
        tr = C.program(cell, 18.0, 1e-4, times_s=times)
    else:
        tr = C.erase(cell, -18.0, 1e-3, start_charge_cm2=programmed.final_charge_cm2, times_s=times)
    j = _net_current(tr)
    moved = np.trapezoid(j * tr.time_s, np.log(tr.time_s)) / Q  # q/cm^2
    change = tr.charge_cm2[-1] - tr.start_charge_cm2
    assert abs(change) > 1e12
    assert moved == pytest.approx(change, rel=2e-3)


def test_tabulated_current_matches_the_exact_one(case, programmed):
    # the log-space table against a direct exact Tsu–Esaki integral at the transient's
    # own state (solver.tunneling: stack_barrier + current_density)
    from solver.tunneling.current import current_density
    from solver.tunneling.stack import stack_barrier, stack_data, stack_state

    for i in (0, programmed.time_s.size // 2, -1):
        q = programmed.charge_cm2[i]
        data = stack_data(case.with_value("layers.trap.charge_cm2", float(q)))
        st = stack_state(data, gate_V=programmed.gate_V)
        sb = stack_barrier(data, st, carrier="electron", emitter="channel", through="injecting-layer")
        exact = current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, sb.temperature_K)
        assert programmed.currents_A_cm2["channel_electrons"][i] == pytest.approx(exact, rel=1e-2)


def test_ispp_slope_tends_to_one(cell):
    # Steady-state FN programming gives dV_T/dV_pgm = 1 (Suh et al., IEEE JSSC 30, 1149 (1995),
    # from memory; common practice). Tolerance: with injection alone the balance depends on
    # V_pgm - Delta V_T only, so each pulse ends at the same tunnel field once the staircase
    # has forgotten its start; the memory of the start field decays per step by
    # J(F_end)/J(F_start) (an autonomous dF/dt = -k J(F): d F_end / d F_start = J(F_end)/J(F_start),
    # about 0.4 here), so the last 4 of 13 steps sit within ~0.4^8 of slope 1; the other
    # fluxes (gate side, detrapping) are < 1e-3 of the injection here. 5e-3 covers both.
    r = C.ispp(cell, np.float64(14.0), 0.5, 1e-5, np.int64(13), fit_steps=4)
    assert r.slope_V_per_V == pytest.approx(1.0, abs=5e-3)
    assert np.all(np.diff(r.threshold_V) > 0)
    assert np.max(r.max_tunnel_field_MV_cm) < 15.0  # common practice: keep the tunnel field < ~15 MV/cm
    # a finer staircase reaches the same steady state
    r2 = C.ispp(cell, 15.0, 0.3, 2e-5, 16, fit_steps=4)
    assert r2.slope_V_per_V == pytest.approx(1.0, abs=5e-3)


def test_ispp_two_pulses_fit_both(cell):
    # the shortest staircase: the default fit takes every pulse (a straight line through two points)
    r = C.ispp(cell, 16.0, 0.5, 1e-5, 2)
    assert r.fit_steps == 2
    assert r.slope_V_per_V == pytest.approx((r.threshold_V[1] - r.threshold_V[0]) / 0.5, rel=1e-9)


def test_log_table_is_exact_for_an_exponential_and_ignores_back_flow():
    # ln J linear in F (an exponential, e.g. the FN exponent's leading behaviour) is
    # reproduced exactly by the cubic spline of ln J (a spline interpolates a straight line
    # exactly); a non-positive entry below it gives 0 and no ringing beyond it
    field = np.arange(0.25, 10.01, 0.25)
    value = np.exp(-120.0 + 9.0 * field)
    value[:3] = [0.0, -3e-52, 0.0]
    table = C._LogTable(field, value)
    probe = np.linspace(field[3], field[-1], 97)
    assert_allclose(table(probe), np.exp(-120.0 + 9.0 * probe), rtol=1e-9)
    assert np.all(table(np.linspace(0.25, field[2], 9)) == 0.0)


def test_trap_to_channel_rate_is_the_trapezoid_wkb_closed_form(case, cell):
    # Trap-to-band tunneling at an erase field: rate = nu exp(-2 int kappa dx) (1 - f), WKB
    # over the rest of the nitride (E_T at the sheet, falling by q F_n per length, F_n =
    # eps_ox F_t / eps_n: D continuous, Jackson Sec. 4.4) and the oxide (raised by the
    # affinity difference, falling by q F_t until the classical turning point). Each linear
    # piece phi_a -> phi_b over d has int kappa dx = c d (2/3)(phi_a^1.5 - phi_b^1.5)/(phi_a - phi_b),
    # c = sqrt(2 m m0 q)/hbar (physics-data Sec. 6 items 3 and 6); 1 - f = 1 here (the level
    # lies > 1 eV above the accumulated channel's Fermi level)
    from scipy.constants import hbar, m_e

    ft = -8.0  # MV/cm, a grid point of the table
    trap, ox = case.layers[1].material, case.layers[2].material
    fn = ox.relative_permittivity * ft / trap.relative_permittivity
    d_n = 0.5 * case.layers[1].thickness_nm
    d_ox = case.layers[2].thickness_nm

    def c(m):
        return math.sqrt(2 * m * m_e * Q) / hbar * 1e-9  # nm^-1 eV^-1/2

    phi_a = trap.trap_depth_eV
    phi_b = phi_a - abs(fn) * 0.1 * d_n  # MV/cm = 0.1 V/nm
    assert phi_b > 0
    k_n = c(trap.electron_mass) * d_n * (2 / 3) * (phi_a**1.5 - phi_b**1.5) / (phi_a - phi_b)
    phi_0 = phi_b + trap.electron_affinity_eV - ox.electron_affinity_eV
    assert abs(ft) * 0.1 * d_ox > phi_0  # the turning point lies inside the oxide
    k_ox = c(ox.electron_mass) * (2 / 3) * phi_0**1.5 / (abs(ft) * 0.1)
    expected = trap.attempt_frequency_Hz * math.exp(-2 * (k_n + k_ox))
    got = float(cell._trap_rates("channel", ft, [0])[0])
    assert got == pytest.approx(expected, rel=1e-6)


def test_cross_section_capture(case):
    # capture on a straight crossing of the empty traps: eta = 1 - exp(-sigma_c N_T t) at the
    # start (common practice; sigma_c 1e-14 cm^2, N_T 5e19 cm^-3: physics-data Sec. 3.4), the
    # rest passes to the gate; trap filling brings the ISPP slope below 1, into the 0.6-1.0
    # range of charge-trap cells (physics-data Sec. 5.2, common practice)
    c = C.prepare_cell(case, C.CellSettings(capture="cross-section"))
    times = np.geomspace(1e-14, 1e-4, 800)
    tr = C.program(c, 18.0, 1e-4, times_s=times)
    eta0 = -math.expm1(-1e-14 * 5e19 * 6e-7)
    j = tr.currents_A_cm2
    assert j["uncaptured_electrons"][0] / j["channel_electrons"][0] == pytest.approx(1 - eta0, rel=1e-6)
    moved = np.trapezoid(_net_current(tr) * tr.time_s, np.log(tr.time_s)) / Q
    assert moved == pytest.approx(tr.charge_cm2[-1] - tr.start_charge_cm2, rel=2e-3)
    r = C.ispp(c, 14.0, 0.5, 1e-5, 13, fit_steps=4)
    assert 0.6 < r.slope_V_per_V < 0.95


# ---------------------------------------------------------------- erase


def test_erase_lowers_threshold(cell, programmed):
    # a negative gate pulse removes electrons / injects holes and lowers V_T, the more the
    # larger |V| (physics-data Sec. 5.2; common practice)
    q0 = programmed.final_charge_cm2
    finals = []
    for v in (-16.0, -18.0):
        tr = C.erase(cell, v, 1e-3, start_charge_cm2=q0)
        assert np.all(np.diff(tr.threshold_V) <= 1e-9)
        assert tr.final_threshold_V < programmed.final_threshold_V - 0.3
        assert tr.currents_A_cm2["channel_holes"][0] > 0
        assert tr.currents_A_cm2["channel_electrons"][0] == 0
        finals.append(tr.final_threshold_V)
    assert finals[1] < finals[0]
    # gate injection opposes erase: without it the cell erases further
    bare = C.prepare_cell(load_case(PLANAR), C.CellSettings(gate_injection=False, field_limit_MV_cm=22.0))
    assert C.erase(bare, -18.0, 1e-3, start_charge_cm2=q0).final_threshold_V <= finals[1] + 1e-6


# ---------------------------------------------------------------- thermal emission, retention


@pytest.mark.parametrize("depth, celsius, tau", [
    (1.5, 25.0, 2.3e12), (1.5, 85.0, 1.3e8), (1.5, 150.0, 7.3e4), (1.2, 25.0, 1.9e7), (1.2, 85.0, 7.7e3)])
def test_thermal_emission_times(depth, celsius, tau):
    # physics-data Sec. 3.4: tau = exp(E_T/kT)/nu, nu = 1e13 /s (quoted to 2 digits)
    assert C.thermal_emission_time_s(depth, celsius + 273.15, 1e13) == pytest.approx(tau, rel=0.03)


def test_poole_frenkel_coefficient():
    # physics-data Sec. 6 item 14: beta_PF = sqrt(q^3/(pi eps0 eps_inf)) = 4.38e-4 eV (cm/V)^1/2
    # at eps_inf = 3 (computed there; a textbook quotes 4.40e-4)
    T, f_V_cm = 300.0, 1e6
    ratio = (C.thermal_emission_rate_Hz(1.5, T, field_MV_cm=1.0, optical_permittivity=3.0)
             / C.thermal_emission_rate_Hz(1.5, T))
    beta = KB_EV * T * math.log(ratio) / math.sqrt(f_V_cm)
    assert beta == pytest.approx(4.38e-4, rel=2e-3)
    # eV per sqrt(V/m) from scipy.constants, times sqrt(100 cm/m)
    assert beta == pytest.approx(math.sqrt(Q / (math.pi * EPS0 * 3.0)) * 10.0, rel=1e-12)


def test_poole_frenkel_lowering_stops_at_the_attempt_frequency():
    # a barrier lowered below zero leaves the escape at nu (no faster than every attempt)
    assert C.thermal_emission_rate_Hz(0.3, 300.0, 1e13, field_MV_cm=30.0, optical_permittivity=2.0) == 1e13


def test_poole_frenkel_speeds_up_retention_loss(case, cell, programmed):
    pf = C.prepare_cell(case, C.CellSettings(poole_frenkel=True))
    plain = C.retention(cell, 358.15, programmed.final_charge_cm2, duration_s=1e6)
    lowered = C.retention(pf, 358.15, programmed.final_charge_cm2, duration_s=1e6)
    assert lowered.final_threshold_V < plain.final_threshold_V


def test_retention_single_depth_is_exponential(case):
    # thermal emission alone: Q(t) = Q0 exp(-t/tau), tau from physics-data Sec. 3.4
    s = C.CellSettings(trap_tunneling=False, holes=False, gate_injection=False)
    c = C.prepare_cell(case, s)
    tr = C.retention(c, 358.15, -1e13)
    tau = C.thermal_emission_time_s(1.5, 358.15, 1e13)
    assert_allclose(tr.charge_cm2, -1e13 * np.exp(-tr.time_s / tau), rtol=1e-4)


def test_retention_with_depth_spread_matches_quadrature(case):
    # Gaussian trap depths: Q/Q0 = int g(E) exp(-t nu e^{-E/kT}) dE, against scipy.integrate.quad
    from scipy.integrate import quad

    sigma, T = 0.1, 358.15
    s = C.CellSettings(trap_spread_eV=sigma, trap_tunneling=False, holes=False, gate_injection=False)
    c = C.prepare_cell(case, s)
    tr = C.retention(c, T, -1e13)
    kT = KB_EV * T

    def ref(t):
        def f(e):
            return (math.exp(-0.5 * (e / sigma) ** 2) / (sigma * math.sqrt(2 * math.pi))
                    * math.exp(-t * 1e13 * math.exp(-(1.5 + e) / kT)))
        return quad(f, -10 * sigma, 10 * sigma, points=[0.0], limit=200)[0]

    for i in (20, 50, -1):
        assert tr.charge_cm2[i] / -1e13 == pytest.approx(ref(tr.time_s[i]), rel=1e-2)


def test_retention_loss_grows_with_temperature(cell, programmed):
    losses = []
    for T in (300.0, 328.15, 358.15):
        tr = C.retention(cell, T, programmed.final_charge_cm2)
        assert tr.time_s[-1] == pytest.approx(10 * C.SECONDS_PER_YEAR)
        assert np.all(np.diff(tr.threshold_V) <= 1e-6)  # integrator noise ~1e-11 V
        losses.append(programmed.final_threshold_V - tr.final_threshold_V)
    assert 0 < losses[0] < losses[1] < losses[2]


# ---------------------------------------------------------------- Arrhenius equivalences


def test_jesd218_client_equivalences():
    # JESD218 (physics-data Sec. 5.4): 1 year at 30 C ~ 500 h at 52 C ~ 96 h at 66 C;
    # E_a = 1.1 eV gives 508 h and 100 h (computed there)
    year_s = YEAR_H * HOUR
    h52 = C.equivalent_time_s(year_s, 1.1, 303.15, 325.15) / HOUR
    h66 = C.equivalent_time_s(year_s, 1.1, 303.15, 339.15) / HOUR
    assert h52 == pytest.approx(508.0, rel=2e-3)
    assert h66 == pytest.approx(100.0, rel=5e-3)
    assert h52 == pytest.approx(500.0, rel=0.02) and h66 == pytest.approx(96.0, rel=0.05)


def test_ten_years_at_55c_bake_equivalents():
    # physics-data Sec. 5.4 (computed there): 10 y at 55 C = 94 h at 125 C, 14 h at 150 C
    # (E_a 1.1 eV), 2100 h at 125 C (E_a 0.6 eV)
    ten_years = 10 * YEAR_H * HOUR
    assert C.equivalent_time_s(ten_years, 1.1, 328.15, 398.15) / HOUR == pytest.approx(94.0, rel=0.01)
    assert C.equivalent_time_s(ten_years, 1.1, 328.15, 423.15) / HOUR == pytest.approx(14.0, rel=0.02)
    assert C.equivalent_time_s(ten_years, 0.6, 328.15, 398.15) / HOUR == pytest.approx(2100.0, rel=0.01)
    # JESD47: 1000 h at 100 C ~ 100 h at 125 C implies E_a ~ 1.18 eV
    assert C.acceleration_factor(1.18, 373.15, 398.15) == pytest.approx(10.0, rel=0.02)


# ---------------------------------------------------------------- design summary, cylinder


def test_design_window(cell):
    s, prog, ers, keep_p, keep_e = C.design_window(cell, program_V=18.0, program_s=1e-4, erase_V=-18.0,
                                                   erase_s=1e-3, retention_K=328.15)
    assert s.programmed_threshold_V > s.neutral_threshold_V > 0
    assert s.window_V == pytest.approx(s.programmed_threshold_V - s.erased_threshold_V)
    assert 0 < s.window_after_V < s.window_V
    assert s.max_tunnel_field_MV_cm < 20.0
    assert "JESD47" in s.caution and "estimates" in s.caution


def test_cylindrical_cell_programs_with_slope_one(cyl_cell):
    cyl = cyl_cell
    assert -cyl.shift_V_per_cm2 * 1e12 == pytest.approx(0.2986, abs=6e-4)  # physics-data Sec. 7, r_0 = 20 nm
    r = C.ispp(cyl, 14.0, 0.5, 1e-5, 12, fit_steps=4)
    assert r.slope_V_per_V == pytest.approx(1.0, abs=5e-3)  # tolerance as in test_ispp_slope_tends_to_one


# ---------------------------------------------------------------- bad input


def _one_line(excinfo):
    msg = str(excinfo.value)
    assert "\n" not in msg and msg
    return msg


def test_no_trap_layer_is_a_case_error():
    with pytest.raises(CaseError) as e:
        C.prepare_cell(load_case("cases/mos-capacitor.toml"))
    assert _one_line(e).startswith("layers:")


TWO_LAYERS = """
title = "trap layer on the channel"
[gate]
material = "TaN"
[[layers]]
name = "blocking"
material = "Al2O3"
thickness_nm = 10.0
[[layers]]
name = "trap"
material = "Si3N4"
thickness_nm = 6.0
[channel]
material = "Si"
acceptors_cm3 = 5e17
"""


def test_trap_layer_without_tunnel_layer_is_a_case_error():
    with pytest.raises(CaseError) as e:
        C.prepare_cell(parse_case(TWO_LAYERS))
    assert _one_line(e).startswith("layers.trap:") and "tunnel layer" in str(e.value)


@pytest.mark.parametrize("call, key", [
    (lambda c: C.program(c, 18.0, 0.0), "program.pulse_s"),
    (lambda c: C.program(c, 18.0, -1e-3), "program.pulse_s"),
    (lambda c: C.program(c, -5.0, 1e-4), "program.gate_V"),
    (lambda c: C.erase(c, 5.0, 1e-3), "erase.gate_V"),
    (lambda c: C.erase(c, -18.0, float("nan")), "erase.pulse_s"),
    (lambda c: C.program(c, 45.0, 1e-4), "program.gate_V"),
    (lambda c: C.retention(c, -3.0, -1e12), "retention.temperature_K"),
    (lambda c: C.ispp(c, 14.0, 0.5, 1e-5, 1), "ispp.count"),
    (lambda c: C.ispp(c, 14.0, 0.0, 1e-5, 5), "ispp.step_V"),
    (lambda c: C.ispp(c, 14.0, 0.5, 0.0, 5), "ispp.pulse_s"),
    # the blocking field grows with the stored electrons until it leaves the table mid-staircase
    (lambda c: C.ispp(c, 38.0, 2.0, 1e-5, 5), "ispp.gate_V"),
])
def test_bad_operation_inputs(cell, call, key):
    with pytest.raises(CaseError) as e:
        call(cell)
    assert _one_line(e).startswith(key)


def test_bad_settings():
    with pytest.raises(CaseError) as e:
        C.CellSettings(trap_spread_eV=-0.1)
    assert _one_line(e).startswith("cell.trap_spread_eV")
    with pytest.raises(CaseError) as e:
        C.CellSettings(capture="partial")
    assert _one_line(e).startswith("cell.capture")
    with pytest.raises(CaseError) as e:  # a table too short for its spline
        C.CellSettings(field_limit_MV_cm=2.0, field_step_MV_cm=2.0)
    assert _one_line(e).startswith("cell.field_step_MV_cm")
