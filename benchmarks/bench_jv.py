"""60-bias J–V of a 3-layer tunnel stack (oxide / nitride / oxide, 2 / 3 / 3 nm):
adaptive Tsu–Esaki with the exact and with the WKB transmission on the same
biases and integration rules, against a straightforward baseline (a uniform
energy grid with numpy's trapezoid rule, exact T), all timed in this run.

Targets: exact sweep < 0.3 s after compilation on one core; exact within 20x
of WKB. Accuracy: each sweep against the adaptive exact sweep driven to
rtol 1e-7.

Also: the Murphy–Good (image-force) Fowler–Nordheim current at 2000 fields,
closed form (elliptic integrals, one vectorised call) against per-field
quadrature of v(f) and t(f) (scipy.integrate.quad); target >= 100x.

    .venv/bin/python benchmarks/bench_jv.py
"""
import math
import timeit
from functools import partial

import numpy as np
from scipy import integrate

from solver.tunneling import Barrier, transmission
from solver.tunneling.current import (
    TSU_ESAKI_PREFACTOR_A_CM2_EV2,
    current_voltage,
    supply_function_eV,
    tsu_esaki,
    with_bias,
)
from solver.tunneling.fowler_nordheim import (
    fowler_nordheim_constants,
    fowler_nordheim_image_current,
    scaled_barrier_field,
)

# SiO2 3.15 eV / Si3N4 2.05 eV conduction-band offsets, masses 0.5, eps 3.9 / 7.5 / 3.9
# (physics-data sheet Sec. 3.1-3.2 defaults)
STACK = Barrier((2.0, 3.0, 3.0), (3.15, 2.05, 3.15), (3.15, 2.05, 3.15), (0.5, 0.5, 0.5), (0.0, 0.5), (0.0, 0.5))
EPS = (3.9, 7.5, 3.9)
BIASES = np.linspace(0.2, 12.0, 60)
FERMI_LEFT_EV, TEMPERATURE_K = 0.1, 300.0


def uniform_grid_baseline(points: int) -> np.ndarray:
    """Per bias: T on a uniform grid over the same energy range, trapezoid rule."""
    out = np.empty(BIASES.size)
    for i, v in enumerate(BIASES):
        b = with_bias(STACK, v, EPS)
        lo = max(b.left[0], b.right[0])
        hi = max(b.max_energy_eV, FERMI_LEFT_EV) + 40 * 8.617333262e-5 * TEMPERATURE_K
        e = np.linspace(lo, hi, points)
        f = transmission(b, e) * supply_function_eV(e, FERMI_LEFT_EV, FERMI_LEFT_EV - v, TEMPERATURE_K)
        out[i] = np.trapezoid(f, e) * TSU_ESAKI_PREFACTOR_A_CM2_EV2 * b.left[1]
    return out


def sweep(model: str, rtol: float = 1e-4):
    return current_voltage(partial(with_bias, STACK, relative_permittivity=EPS), BIASES, TEMPERATURE_K,
                           fermi_left_eV=FERMI_LEFT_EV, model=model, rtol=rtol)


def quadrature_v_t(f: float) -> tuple[float, float]:
    """v(f), t(f) from their defining integrals (Murphy & Good 1956) by scipy.integrate.quad,
    end-point roots removed by x = x1 + w sin^2(s)."""
    w = math.sqrt(1.0 - f)
    x1 = f / (2.0 * (1.0 + w))
    iv = integrate.quad(lambda s: math.sin(s) ** 2 * math.cos(s) ** 2 / math.sqrt(x1 + w * math.sin(s) ** 2),
                        0.0, math.pi / 2, epsabs=0.0, epsrel=1e-12, limit=200)[0]
    idv = integrate.quad(lambda s: 1.0 / math.sqrt(x1 + w * math.sin(s) ** 2), 0.0, math.pi / 2,
                         epsabs=0.0, epsrel=1e-12, limit=200)[0]
    v = 3.0 * w * w * iv
    return v, v + 0.5 * f * idv  # t = v - (4/3) f dv/df, dv/df = -(3/8) idv


def image_force_quadrature_baseline(fields, phi, mass, eps_inf):
    c = fowler_nordheim_constants(phi, mass)
    f = scaled_barrier_field(fields, phi, eps_inf)
    vt = np.array([quadrature_v_t(float(x)) for x in f])
    return c.a_A_V2 * (fields * 1e6) ** 2 / vt[:, 1] ** 2 * np.exp(-vt[:, 0] * c.b_MV_cm / fields)


def bench_image_force():
    fields = np.linspace(3.0, 20.0, 2000)  # MV/cm in SiO2: 3.2 eV, m 0.42, eps_inf 2.13
    args = (3.2, 0.42, 2.13)
    t_fast = min(timeit.repeat(lambda: fowler_nordheim_image_current(fields, *args), number=10, repeat=5)) / 10
    t_quad = min(timeit.repeat(lambda: image_force_quadrature_baseline(fields, *args), number=1, repeat=2))
    dev = np.max(np.abs(fowler_nordheim_image_current(fields, *args) / image_force_quadrature_baseline(fields, *args)
                        - 1))
    print(f"Murphy–Good FN current, {fields.size} fields: closed form {t_fast * 1e3:.2f} ms, "
          f"per-field quadrature {t_quad * 1e3:.0f} ms, ratio {t_quad / t_fast:.0f}x (target >= 100x); "
          f"max rel. difference {dev:.1e}")


def main():
    sweep("exact")  # compile and warm up, not timed
    sweep("wkb")
    reference = sweep("exact", rtol=1e-7).current_A_cm2

    t_exact = min(timeit.repeat(lambda: sweep("exact"), number=1, repeat=5))
    t_wkb = min(timeit.repeat(lambda: sweep("wkb"), number=1, repeat=5))
    exact, wkb = sweep("exact"), sweep("wkb")
    err_exact = np.max(np.abs(exact.current_A_cm2 / reference - 1))
    wkb_log_dev = np.max(np.abs(np.log10(wkb.current_A_cm2 / reference)))
    print(f"60-bias J-V, 3-layer stack, {TEMPERATURE_K:g} K, rtol 1e-4 (one core)")
    print(f"  exact  : {t_exact * 1e3:7.1f} ms  {exact.evaluations.sum():7d} energies  "
          f"max rel. error vs rtol-1e-7 sweep {err_exact:.1e}")
    print(f"  WKB    : {t_wkb * 1e3:7.1f} ms  {wkb.evaluations.sum():7d} energies  "
          f"max |log10(J_WKB/J_exact)| {wkb_log_dev:.2f}")
    print(f"  exact / WKB time: {t_exact / t_wkb:.1f}x (target <= 20x); exact sweep target < 300 ms")
    res = [tsu_esaki(with_bias(STACK, v, EPS), FERMI_LEFT_EV, FERMI_LEFT_EV - v, TEMPERATURE_K) for v in BIASES[:5]]
    print(f"  resonances given panels at the five lowest biases: {[r.resonances for r in res]}")
    for points in (2_000, 20_000):
        uniform_grid_baseline(points)
        t_base = min(timeit.repeat(lambda: uniform_grid_baseline(points), number=1, repeat=3))
        base = uniform_grid_baseline(points)
        err = np.abs(base / reference - 1)
        print(f"  uniform grid {points:6d} pts/bias (numpy trapezoid, exact T): {t_base * 1e3:7.1f} ms, "
              f"max rel. error {err.max():.1e} (median {np.median(err):.1e}); "
              f"time baseline / adaptive exact {t_base / t_exact:.1f}")


if __name__ == "__main__":
    main()
    bench_image_force()
