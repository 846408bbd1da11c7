"""Closed-form stack properties behind `tunnelstack check`."""
import math
from pathlib import Path

import pytest
from scipy.constants import epsilon_0, k, e

from solver.case import load_case, parse_case
from solver.stack import summarize

CASES = Path(__file__).resolve().parent.parent / "cases"


def test_planar_capacitance_and_flat_band():
    case = load_case(CASES / "mos-capacitor.toml")
    s = summarize(case)
    # C_ox = eps0 eps_r / t (parallel plate)
    assert s.capacitance_F_cm2 == pytest.approx(epsilon_0 * 3.9 / 5e-9 * 1e-4, rel=1e-12)
    # V_FB = Phi_m - Phi_s, Phi_s = chi + Eg - kT ln(Nv/NA) for p-type, Boltzmann (Sze & Ng 2007, Sec. 4.2)
    si = case.channel.material
    kt = k * 300 / e
    phi_s = 4.05 + si.band_gap_eV(300) - kt * math.log(si.valence_dos_cm3(300) / 1e17)
    assert s.flat_band_V == pytest.approx(4.28 - phi_s, abs=1e-6)


def test_sheet_charge_shifts_flat_band():
    # Delta V_FB = -Q x / eps0 with x = electrical distance from the gate (Sze & Ng 2007, Sec. 4.3)
    text = (CASES / "demo-cell.toml").read_text().replace("charge_cm2 = 0.0", "charge_cm2 = -1e12")
    s0 = summarize(load_case(CASES / "demo-cell.toml"))
    s1 = summarize(parse_case(text))
    x = 10e-9 / 9.0 + 3e-9 / 7.5
    assert s1.flat_band_V - s0.flat_band_V == pytest.approx(1e12 * 1e4 * e * x / epsilon_0, rel=1e-9)


def test_coaxial_capacitance():
    # coaxial capacitor: C/length = 2 pi eps0 / sum ln(r_out/r_in)/eps (Jackson); per channel area divide by 2 pi r0
    case = load_case(CASES / "demo-cell-cylindrical.toml")
    s = summarize(case)
    r = [20, 25, 31, 37]
    eps = [3.9, 7.5, 3.9]
    inv = sum(math.log(r[i + 1] / r[i]) / eps[i] for i in range(3))
    assert s.capacitance_F_cm2 == pytest.approx(epsilon_0 / (20e-9 * inv) * 1e-4, rel=1e-12)
