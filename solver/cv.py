"""Quasi-static capacitance–voltage curves over a gate sweep.

Every bias point is a converged `solve` (classical or Schrödinger–Poisson) on
one mesh, started from the previous point's potential (continuation). The
gate charge per area is Q_g = -(all charge outside the gate), so that

    C(V_g) = dQ_g/dV_g = -d(Q_semiconductor + Q_interface traps)/dV_g

(fixed charges do not move), evaluated by finite differences on the sweep
(numpy.gradient: second-order central differences inside, which on any spacing
are positive-weight averages of the two neighbouring secants, and the secant at
the two ends). Every value is therefore an average of the true C over an
interval and can never exceed the stack capacitance, however coarse the sweep
(a second-order one-sided end formula can). This is the
low-frequency (quasi-static) capacitance: minority carriers and interface
traps follow the gate.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from solver.errors import ConvergenceError
from solver.selfconsistent import prepare, solve_structure
from solver.units import EPSILON0_F_M, F_PER_M2_TO_F_PER_CM2, SIO2_PERMITTIVITY_FOR_EOT

__all__ = ["CVResult", "capacitance_voltage"]


def _readonly(a, dtype=float):
    a = np.array(a, dtype=dtype)
    a.flags.writeable = False
    return a


@dataclass(frozen=True, eq=False)
class CVResult:
    """A quasi-static C–V sweep (arrays read-only, one entry per gate voltage)."""

    gate_V: np.ndarray
    capacitance_F_cm2: np.ndarray
    gate_charge_C_cm2: np.ndarray
    semiconductor_charge_C_cm2: np.ndarray
    surface_potential_V: np.ndarray
    inversion_charge_cm2: np.ndarray
    iterations: np.ndarray
    oxide_capacitance_F_cm2: float      # series capacitance of the dielectric stack (planar: eps_ox/EOT)
    flatband_V: float
    quantum: bool
    statistics: str
    geometry: str
    solutions: tuple = ()               # the Solution of every point when keep_solutions=True


def capacitance_voltage(case, gate_V, quantum=True, statistics="fermi-dirac",
                        keep_solutions=False) -> CVResult:
    """Quasi-static C–V of `case` (a Case, or a mesh.Structure) over the gate
    voltages `gate_V` (V, at least two, strictly monotonic). Raises
    ConvergenceError naming the first bias that does not converge."""
    v = np.asarray(gate_V, dtype=float).ravel()
    if v.size < 2:
        raise ValueError(f"gate_V needs at least 2 voltages, got {v.size}")
    if not np.all(np.isfinite(v)):
        raise ValueError("gate_V must be finite")
    steps = np.diff(v)
    if not (np.all(steps > 0) or np.all(steps < 0)):
        raise ValueError("gate_V must be strictly increasing or strictly decreasing")
    prep = prepare(case, statistics, bool(quantum))
    sols, qg, qs, psi, inv, its = [], [], [], [], [], []
    phi = None
    for vg in v:
        try:
            sol = solve_structure(prep, float(vg), quantum=bool(quantum), phi0=phi)
        except ConvergenceError as err:
            if phi is None:
                raise
            # a restart from the charge-free potential before giving up
            try:
                sol = solve_structure(prep, float(vg), quantum=bool(quantum), phi0=None)
            except ConvergenceError:
                raise ConvergenceError(f"C–V point gate_V = {vg:g} V: {err}", err.record) from err
        phi = np.array(sol.potential_V)
        qg.append(sol.gate_charge_C_cm2)
        qs.append(sol.semiconductor_charge_C_cm2)
        psi.append(sol.surface_potential_V)
        inv.append(sol.inversion_charge_cm2)
        its.append(sol.iterations)
        if keep_solutions:
            sols.append(sol)
    qg = np.array(qg)
    cap = np.gradient(qg, v, edge_order=1)
    s = prep.structure
    if s.geometry == "planar":
        eot = sum((s.x_m[s.regions[k].hi] - s.x_m[s.regions[k].lo]) * SIO2_PERMITTIVITY_FOR_EOT
                  / s.regions[k].relative_permittivity for k in s.layer_regions)
        cox = SIO2_PERMITTIVITY_FOR_EOT * EPSILON0_F_M / eot * F_PER_M2_TO_F_PER_CM2
    else:
        # coaxial series capacitance per channel-surface area: eps0 / (R sum ln(r_out/r_in)/eps_i)
        total = sum(np.log(s.x_m[s.regions[k].hi] / s.x_m[s.regions[k].lo]) / s.regions[k].relative_permittivity
                    for k in s.layer_regions)
        cox = EPSILON0_F_M / (s.reference_area * total) * F_PER_M2_TO_F_PER_CM2
    return CVResult(
        gate_V=_readonly(v), capacitance_F_cm2=_readonly(cap), gate_charge_C_cm2=_readonly(qg),
        semiconductor_charge_C_cm2=_readonly(qs), surface_potential_V=_readonly(psi),
        inversion_charge_cm2=_readonly(inv), iterations=_readonly(its, int),
        oxide_capacitance_F_cm2=float(cox), flatband_V=float(prep.poisson.flatband_V),
        quantum=bool(quantum), statistics=statistics, geometry=s.geometry, solutions=tuple(sols))
