"""Benchmark: program transient and ISPP staircase of the demo cell on one core.

Times `solver.cell.prepare_cell` (the flux tables: exact Tsu–Esaki on the
field grid), then one program transient (18 V, 1e-9 .. 1e-4 s) and an ISPP
staircase (14..20 V in 0.5 V steps of 10 us) on the tables. Baseline in the
same run: the same program transient with the straightforward right-hand side
that solves the stack electrostatics (`stack_state` at the gate voltage with
the stored charge) and integrates the exact Tsu–Esaki current at every
evaluation, no table; its final V_T also checks the tabulated one.

    .venv/bin/python benchmarks/bench_cell.py [--case FILE] [--pulse-s 1e-4]

Target: a program transient well under 1 s after the tables are built
(design.md: tabulate J(F) once, interpolate in log space inside the time
integration).
"""
from __future__ import annotations

import os

for _var in ("NUMBA_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one core

import argparse  # noqa: E402
import math  # noqa: E402
import time  # noqa: E402
from dataclasses import replace  # noqa: E402
from pathlib import Path  # noqa: E402


ROOT = Path(__file__).resolve().parents[1]


def _baseline_program(case, cell, gate_V, pulse_s):
    """Radau over ln t, exact current and electrostatics at every right-hand side call."""
    from scipy.integrate import solve_ivp

    from solver.tunneling.current import current_density
    from solver.tunneling.stack import stack_barrier, stack_data, stack_state
    from solver.units import Q_C

    base = stack_data(case)
    trap = cell.trap_layer
    calls = [0]

    def rhs(tau, y):
        calls[0] += 1
        q = -float(y[0]) * 1e12
        charges = list(base.charge_cm2)
        charges[trap] = q
        data = replace(base, charge_cm2=tuple(charges))
        st = stack_state(data, gate_V=gate_V)
        if st.segment_field_MV_cm[-1] <= 0:
            return [0.0]
        sb = stack_barrier(data, st, carrier="electron", emitter="channel", through="injecting-layer")
        j = current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, sb.temperature_K)
        return [math.exp(tau) * j / (Q_C * 1e12)]

    sol = solve_ivp(rhs, (math.log(1e-15), math.log(pulse_s)), [0.0], method="Radau", rtol=1e-6, atol=1e-9)
    q = -sol.y[0, -1] * 1e12
    return float(cell.threshold_V(q)), calls[0]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--case", default=str(ROOT / "cases" / "demo-cell.toml"))
    ap.add_argument("--pulse-s", type=float, default=1e-4)
    args = ap.parse_args()

    from solver import cell as C
    from solver.case import load_case

    case = load_case(args.case)
    C.prepare_cell(case)  # compile and warm the kernels and caches
    t = time.perf_counter()
    settings = C.CellSettings(holes=False, gate_injection=False, trap_tunneling=False, thermal_emission=False)
    cell = C.prepare_cell(case, settings)
    t_tables = time.perf_counter() - t
    full = C.prepare_cell(case)

    reps = 5
    t = time.perf_counter()
    for _ in range(reps):
        tr = C.program(cell, 18.0, args.pulse_s)
    t_prog = (time.perf_counter() - t) / reps
    t = time.perf_counter()
    for _ in range(reps):
        tr_full = C.program(full, 18.0, args.pulse_s)
    t_full = (time.perf_counter() - t) / reps
    t = time.perf_counter()
    steps = C.ispp(full, 14.0, 0.5, 1e-5, 13)
    t_ispp = time.perf_counter() - t

    t = time.perf_counter()
    vt_base, calls = _baseline_program(case, cell, 18.0, args.pulse_s)
    t_base = time.perf_counter() - t

    print(f"case: {case.title}")
    print(f"flux tables (injection only / all fluxes): {t_tables:.2f} s / {full.build_seconds:.2f} s")
    print(f"program 18 V, {args.pulse_s:g} s, injection only: {t_prog * 1e3:.1f} ms "
          f"(V_T {tr.final_threshold_V:.4f} V, {tr.record.extra['nfev']} evaluations)")
    print(f"program 18 V, {args.pulse_s:g} s, all fluxes:     {t_full * 1e3:.1f} ms "
          f"(V_T {tr_full.final_threshold_V:.4f} V)")
    print(f"ISPP 14..20 V, 13 steps of 10 us:                {t_ispp * 1e3:.1f} ms (slope {steps.slope_V_per_V:.4f})")
    print(f"baseline (exact current at every evaluation):  {t_base:.2f} s "
          f"(V_T {vt_base:.4f} V, {calls} evaluations)")
    print(f"target: program transient < 1 s after the tables; measured {t_full:.3f} s -> "
          f"{'met' if t_full < 1.0 else 'NOT met'}")
    print(f"ratio baseline / tabulated (injection only): {t_base / t_prog:.0f}x; "
          f"V_T difference {abs(vt_base - tr.final_threshold_V) * 1e3:.2f} mV")


if __name__ == "__main__":
    main()
