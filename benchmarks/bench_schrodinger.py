"""Lowest subbands of a triangular well: prepared tridiagonal operator vs a
straightforward dense generalized eigenproblem, timed in the same run.

Accuracy check: Airy-zero energies (Stern, Phys. Rev. B 5, 4891 (1972);
scipy.special.ai_zeros).

    .venv/bin/python benchmarks/bench_schrodinger.py
"""
import timeit

import numpy as np
import scipy.linalg
from scipy.special import ai_zeros

from solver.schrodinger import Hamiltonian, _KINETIC_EV_NM2, eigenstates
from solver.units import EV_TO_J, NM_TO_M


def dense_baseline(x_nm, u_eV, mass, count):
    """Same discretisation assembled as dense matrices, solved by scipy.linalg.eigh."""
    h = np.diff(x_nm)
    c = _KINETIC_EV_NM2 / (0.5 * (mass[:-1] + mass[1:]) * h)
    A = np.diag(c[:-1] + c[1:] + u_eV[1:-1] * 0.5 * (h[:-1] + h[1:]))
    A -= np.diag(c[1:-1], 1) + np.diag(c[1:-1], -1)
    W = np.diag(0.5 * (h[:-1] + h[1:]))
    return scipy.linalg.eigh(A, W, subset_by_index=(0, count - 1))[0]


def main():
    mz, F = 0.916, 0.1  # m0; eV/nm (1 MV/cm)
    exact = (_KINETIC_EV_NM2 / mz) ** (1 / 3) * F ** (2 / 3) * np.abs(ai_zeros(4)[0])
    print("nodes  count  dense_ms  eigenstates_ms  prepared_ms  ratio(dense/prepared)  max_rel_err")
    for n in (400, 1000, 2000):
        x = np.linspace(0, 30, n)
        u, m = F * x, np.full(n, mz)
        ham = Hamiltonian.planar(x * NM_TO_M, m)
        u_J = u * EV_TO_J
        t_dense = min(timeit.repeat(lambda: dense_baseline(x, u, m, 4), number=1, repeat=3))
        t_fun = min(timeit.repeat(lambda: eigenstates(x, u, m, 4), number=5, repeat=5)) / 5
        t_prep = min(timeit.repeat(lambda: ham.solve(u_J, 4), number=5, repeat=5)) / 5
        E = ham.solve(u_J, 4)[0] / EV_TO_J
        assert np.allclose(dense_baseline(x, u, m, 4), E, rtol=1e-10)
        err = np.max(np.abs(E / exact - 1))
        print(f"{n:5d}  {4:5d}  {t_dense * 1e3:8.1f}  {t_fun * 1e3:14.2f}  {t_prep * 1e3:11.2f}"
              f"  {t_dense / t_prep:21.0f}  {err:11.1e}")


if __name__ == "__main__":
    main()
