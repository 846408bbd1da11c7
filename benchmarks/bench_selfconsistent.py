"""Schrödinger–Poisson speed and iteration counts, against baselines timed in
the same run.

    .venv/bin/python benchmarks/bench_selfconsistent.py

1. One bias point (quantum, Fermi–Dirac, cold start) on a ~2000-node mesh:
   predictor–corrector with Anderson mixing vs plain under-relaxed iteration.
2. A 101-point quantum C–V on the shipped MOS capacitor's mesh, with
   continuation, vs the same sweep started cold at every point.
3. Self-consistent iteration counts from accumulation to strong inversion:
   predictor–corrector (with / without mixing) vs under-relaxed iteration
   phi <- phi + a (P[n(phi)] - phi) for a few a.
Targets (after compilation, one core): 1. <= 50 ms, 2. <= 3 s, 3. <= 30.
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from solver.case import load_case
from solver.cv import capacitance_voltage
from solver.errors import ConvergenceError
from solver.mesh import structure_from_case
from solver.selfconsistent import prepare, solve_structure

ROOT = Path(__file__).resolve().parents[1]
CASE = ROOT / "cases" / "mos-capacitor.toml"


def best_of(fn, repeat=5):
    times = []
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def iterations(prep, gate_V, **kw):
    try:
        return solve_structure(prep, gate_V, **kw).iterations
    except ConvergenceError as err:
        return f">{err.record.iterations}"


def main() -> int:
    case = load_case(CASE)
    # ------------------------------------------------------------ 1. one bias point
    fine = structure_from_case(case, interface_spacing_nm=0.002, max_spacing_nm=0.2, growth=1.005,
                               quantum_spacing_nm=0.1)
    prep = prepare(fine, "fermi-dirac", True)
    qc = prep.quantum
    solve_structure(prep, 1.5)  # compile and warm up, not timed
    t_pc, sol = best_of(lambda: solve_structure(prep, 1.5))
    # plain iteration needs a <= 0.05 to converge at all in strong inversion (see 3.)
    t_ur, sol_ur = best_of(lambda: solve_structure(prep, 1.5, scheme="under-relaxed", relaxation=0.05,
                                                   max_iterations=1000), repeat=1)
    print(f"1. one bias point, {fine.size} nodes ({qc.nodes.size} in the quantum box, "
          f"{qc.electrons.sub.size} on the Schrödinger grid), gate 1.5 V, "
          f"N_inv {sol.inversion_charge_cm2:.3e} cm^-2")
    print(f"   predictor-corrector + mixing: {t_pc * 1e3:7.1f} ms, {sol.iterations} iterations "
          f"({sol.newton_iterations} Newton steps)   [target <= 50 ms]")
    print(f"   under-relaxed (a = 0.05):     {t_ur * 1e3:7.1f} ms, {sol_ur.iterations} iterations"
          f"   ratio {t_ur / t_pc:.1f}x")
    print(f"   agreement of the surface potential: "
          f"{abs(sol.surface_potential_V - sol_ur.surface_potential_V):.1e} V")

    # ------------------------------------------------------------ 2. 101-point C-V
    v = np.linspace(-2.0, 3.0, 101)
    cprep = prepare(case, "fermi-dirac", True)
    capacitance_voltage(case, v[:3], quantum=True)  # warm up
    t_cv, cv = best_of(lambda: capacitance_voltage(case, v, quantum=True), repeat=3)

    def cold_sweep():
        return [solve_structure(cprep, float(x)).gate_charge_C_cm2 for x in v]
    t_cold, q_cold = best_of(cold_sweep, repeat=1)
    t_cl, _ = best_of(lambda: capacitance_voltage(case, v, quantum=False), repeat=3)
    print(f"2. 101-point quantum C-V, {cprep.structure.size} nodes: {t_cv:.2f} s "
          f"(max {cv.iterations.max()} / mean {cv.iterations.mean():.1f} iterations)   [target <= 3 s]")
    print(f"   cold start at every point: {t_cold:.2f} s   ratio {t_cold / t_cv:.2f}x; "
          f"gate charge agrees to {np.abs(np.array(q_cold) - cv.gate_charge_C_cm2).max():.1e} C/cm^2")
    print(f"   classical C-V for reference: {t_cl:.2f} s")
    t_fine, cv_fine = best_of(lambda: capacitance_voltage(fine, v, quantum=True), repeat=1)
    print(f"   the same 101-point quantum C-V on the {fine.size}-node mesh: {t_fine:.2f} s "
          f"(max {cv_fine.iterations.max()} iterations)")

    # ------------------------------------------------------------ 3. iteration counts
    biases = (-3.0, -1.0, 0.0, 0.5, 1.5, 5.0)
    rows = {
        "predictor-corrector + mixing": dict(),
        "predictor-corrector": dict(acceleration=False),
        "under-relaxed a = 0.05": dict(scheme="under-relaxed", relaxation=0.05, max_iterations=600),
        "under-relaxed a = 0.2": dict(scheme="under-relaxed", relaxation=0.2, max_iterations=600),
    }
    print("3. self-consistent iterations (tolerance 1e-8 V), gate_V:",
          " ".join(f"{b:5.1f}" for b in biases))
    for name, kw in rows.items():
        counts = [iterations(cprep, b, **kw) for b in biases]
        print(f"   {name:30s}", " ".join(f"{str(c):>5s}" for c in counts))
    inv = solve_structure(cprep, 5.0).inversion_charge_cm2
    print(f"   (strong inversion at 5 V: {inv:.2e} cm^-2)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
