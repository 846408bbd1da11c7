"""Throughput and accuracy of the exact transmission kernels.

Run on one core:  NUMBA_NUM_THREADS=1 .venv/bin/python benchmarks/bench_transmission.py

Prints (energy x layer) evaluations per second (process CPU time, best of
several runs) for a flat and a sloped stack after compilation, the ratio against the straightforward numpy version
(complex 2x2 matrices, scipy.special.airy/airye; tests/tunneling/naive.py)
timed in the same run, the accuracy against that version and against a fine
staircase, and the largest deviation of the numba Airy functions from
scipy.special. Targets (one core): flat >= 5e7 /s, sloped >= 3e6 /s.
"""
from __future__ import annotations

import pathlib
import sys
import time
import timeit

import numpy as np
import scipy.special as sp

ROOT = pathlib.Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from solver.tunneling import Barrier, transmission  # noqa: E402
from solver.tunneling._airy import airy_scaled  # noqa: E402
from tests.tunneling import naive  # noqa: E402


def best_time(fn, repeat=5):
    # process CPU time: the machine is shared, and every kernel here runs on one thread
    return min(timeit.repeat(fn, number=1, repeat=repeat, timer=time.process_time))


def log_error(t, t_ref):
    ok = t_ref > 0
    return float(np.max(np.abs(np.log(t[ok] / t_ref[ok]))))


def bench(name, stack, energy_eV, naive_subset=400):
    n_layers = stack.n_layers
    transmission(stack, energy_eV[:2])                      # compile (cached), not timed
    t_fast = best_time(lambda: transmission(stack, energy_eV))
    e_sub = energy_eV[:: max(1, energy_eV.size // naive_subset)]
    t_naive = best_time(lambda: naive.transmission(stack, e_sub), repeat=3) * energy_eV.size / e_sub.size
    rate = energy_eV.size * n_layers / t_fast
    rate_naive = energy_eV.size * n_layers / t_naive
    err = log_error(transmission(stack, e_sub), naive.transmission(stack, e_sub))
    t_all = transmission(stack, energy_eV)
    print(f"{name:7s} {n_layers:3d} layers x {energy_eV.size} energies: {t_fast * 1e3:8.2f} ms, "
          f"{rate:.3e} (energy x layer)/s; numpy+scipy baseline {rate_naive:.3e}/s; "
          f"ratio {rate / rate_naive:6.1f}x; T range {t_all[t_all > 0].min():.1e}..{t_all.max():.3f}; "
          f"max |ln(T/T_naive)| {err:.1e}")
    return rate


def main():
    rng = np.random.default_rng(20261201)
    # flat: 16 alternating barrier/well layers (resonant superlattice-like), energies
    # below and above the barrier tops
    n = 16
    u = np.where(np.arange(n) % 2 == 0, rng.uniform(1.0, 3.2, n), rng.uniform(-0.5, 0.5, n))
    flat = Barrier(rng.uniform(0.5, 2.0, n), u, u, rng.uniform(0.2, 0.6, n), left=(0.0, 0.5), right=(-0.3, 0.4))
    energy = np.linspace(0.01, 4.0, 20000)
    rate_flat = bench("flat", flat, energy)

    # sloped: a biased gate stack (tunnel oxide / nitride / blocking oxide) under a field,
    # each dielectric split into two linear layers
    th = np.array([2.0, 2.0, 3.0, 3.0, 3.5, 3.5])
    start = np.array([3.1, 2.6, 1.9, 1.3, 2.2, 1.5])
    end = np.array([2.6, 2.1, 1.3, 0.7, 1.5, 0.8])
    mass = np.array([0.5, 0.5, 0.5, 0.5, 0.42, 0.42])
    sloped = Barrier(th, start, end, mass, left=(0.0, 0.19), right=(-4.0, 1.0))
    energy = np.linspace(0.01, 3.0, 5000)
    rate_sloped = bench("sloped", sloped, energy)

    # accuracy against a fine staircase in log space (second order; Richardson step)
    e_chk = np.linspace(0.05, 2.9, 12)
    l1 = naive.staircase_log_transmission(sloped, e_chk, 512)
    l2 = naive.staircase_log_transmission(sloped, e_chk, 1024)
    ref = (4 * l2 - l1) / 3
    print(f"sloped vs 1024-slice staircase (Richardson): max |ln(T/T_ref)| "
          f"{np.max(np.abs(np.log(transmission(sloped, e_chk)) - ref)):.1e}")

    # Airy functions vs scipy.special over -1e3..1e3
    z = np.linspace(-1000.0, 1000.0, 400001)
    mine = airy_scaled(z)
    ai, aip, bi, bip = sp.airy(np.minimum(z, 0.0))
    eai, eaip, ebi, ebip = sp.airye(np.maximum(z, 0.0))
    neg = z <= 0
    refs = [np.where(neg, ai, eai), np.where(neg, aip, eaip), np.where(neg, bi, ebi), np.where(neg, bip, ebip)]
    mod = [np.hypot(ai, bi), np.hypot(aip, bip)]
    worst_neg = [np.max(np.abs(m - r)[neg] / mod[k % 2][neg]) for k, (m, r) in enumerate(zip(mine, refs))]
    worst_pos = [np.max(np.abs(m / r - 1)[~neg]) for m, r in zip(mine, refs)]
    mid = neg & (z > -50)
    worst_mid = [np.max(np.abs(m - r)[mid] / mod[k % 2][mid]) for k, (m, r) in enumerate(zip(mine, refs))]
    print("Airy vs scipy.special (Ai, Ai', Bi, Bi'):")
    print("  z in [-50, 0], rel. to modulus:   " + "  ".join(f"{w:.1e}" for w in worst_mid))
    print("  z in [-1e3, 0], rel. to modulus:  " + "  ".join(f"{w:.1e}" for w in worst_neg)
          + "   (limit eps*zeta = %.1e at z=-1e3)" % (np.finfo(float).eps * 2 / 3 * 1000**1.5))
    print("  z in (0, 1e3], scaled, relative:  " + "  ".join(f"{w:.1e}" for w in worst_pos))
    zt = np.linspace(-1000, 1000, 200000)
    airy_scaled(zt[:4])
    t_airy = best_time(lambda: airy_scaled(zt))
    t_sp = best_time(lambda: (sp.airy(np.minimum(zt, 0)), sp.airye(np.maximum(zt, 0))), repeat=2)
    print(f"  speed: {zt.size / t_airy:.2e} evaluations/s (all four), scipy {zt.size / t_sp:.2e}/s")
    print(f"targets: flat {rate_flat / 5e7:.2f} x 5e7/s, sloped {rate_sloped / 3e6:.2f} x 3e6/s")


if __name__ == "__main__":
    main()
