"""Quasi-static C–V against the classical MOS closed form."""
import math
from pathlib import Path

import numpy as np
import pytest

from solver.case import load_case, parse_case
from solver.cv import capacitance_voltage
from solver.units import BOLTZMANN_J_K, EPSILON0_F_M, EV_TO_J, Q_C

CASE = """
[gate]
material = "Al"
[[layers]]
name = "oxide"
material = "SiO2"
thickness_nm = 5.0
[channel]
acceptors_cm3 = 1e17
[mesh]
interface_spacing_nm = 0.0025
max_spacing_nm = 0.25
growth = 1.02
"""


@pytest.fixture(scope="module")
def case():
    return parse_case(CASE)


@pytest.mark.parametrize("gate_V", [-1.5, -0.3, 0.3, 2.5])
def test_classical_quasi_static_capacitance_closed_form(case, gate_V):
    # Sze & Ng 2007, Sec. 4.2: C_s = dQ_s/dpsi_s from the Q_s(psi_s) relation (Boltzmann),
    # 1/C = 1/C_ox + 1/C_s (low-frequency capacitance)
    r = capacitance_voltage(case, [gate_V - 1e-3, gate_V, gate_V + 1e-3], quantum=False,
                            statistics="boltzmann")
    kT = BOLTZMANN_J_K * 300.0
    beta = Q_C / kT
    eps = 11.7 * EPSILON0_F_M
    # neutral bulk densities of the same parameter set (materials data: Nc, Nv, Eg(300 K))
    ef_minus_ev = kT * math.log(3.10e25 / 1e23)
    p0 = 1e23
    n0 = 2.86e25 * math.exp(-(1.12452 * EV_TO_J - ef_minus_ev) / kT)
    ld = math.sqrt(eps * kT / (Q_C**2 * p0))
    psi = r.surface_potential_V[1]
    bp = beta * psi
    f = math.sqrt(math.expm1(-bp) + bp + n0 / p0 * (math.expm1(bp) - bp))
    cs = eps / (math.sqrt(2) * ld) * abs(-math.expm1(-bp) + n0 / p0 * math.expm1(bp)) / f
    cox = 3.9 * EPSILON0_F_M / 5e-9
    c = 1 / (1 / cox + 1 / cs) * 1e-4
    assert r.oxide_capacitance_F_cm2 == pytest.approx(cox * 1e-4, rel=1e-12)
    assert r.capacitance_F_cm2[1] == pytest.approx(c, rel=2e-3)


def test_quantum_cv_sweep_shape():
    # quasi-static C–V: C -> C_ox in strong accumulation and inversion, minimum in depletion
    # (Sze & Ng 2007, Sec. 4.3); the quantized charge sits away from the interface, so the
    # quantum curve lies below the classical one at both ends (dark space; Ando, Fowler,
    # Stern 1982, Sec. III)
    case = parse_case(CASE.split("[mesh]")[0])
    v = np.linspace(-2.0, 3.0, 26)
    q = capacitance_voltage(case, v, quantum=True)
    c = capacitance_voltage(case, v, quantum=False)
    cox = q.oxide_capacitance_F_cm2
    assert q.iterations.max() <= 30
    for r in (q, c):
        k = int(np.argmin(r.capacitance_F_cm2))
        assert 0 < k < v.size - 1
        assert r.capacitance_F_cm2[k] < 0.3 * cox
        assert r.capacitance_F_cm2[0] > 0.75 * cox and r.capacitance_F_cm2[-1] > 0.75 * cox
        assert np.all(r.capacitance_F_cm2 < cox)
        assert np.all(np.diff(r.surface_potential_V) > 0)
    assert q.capacitance_F_cm2[0] < c.capacitance_F_cm2[0]
    assert q.capacitance_F_cm2[-1] < c.capacitance_F_cm2[-1]
    assert q.inversion_charge_cm2[-1] > 5e12


def test_cv_rejects_bad_sweeps(case):
    with pytest.raises(ValueError, match="gate_V"):
        capacitance_voltage(case, [1.0], quantum=False)
    with pytest.raises(ValueError, match="gate_V"):
        capacitance_voltage(case, [0.0, 1.0, 0.5], quantum=False)


def test_coarse_sweep_never_exceeds_stack_capacitance():
    # quasi-static C = dQ/dV is bounded by the stack capacitance (series-capacitor argument,
    # Sze & Ng 2007, Sec. 4.3); a finite-difference estimate must respect that on any sweep
    case = load_case(Path(__file__).resolve().parent.parent / "cases" / "mos-capacitor.toml")
    res = capacitance_voltage(case, np.linspace(-1.5, 2.0, 8), quantum=True)
    assert np.all(res.capacitance_F_cm2 <= res.oxide_capacitance_F_cm2 * (1 + 1e-9))
