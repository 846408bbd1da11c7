"""Finite-volume Poisson equation of a gate stack, solved by Newton's method
with the analytic Jacobian and a line search on the convex functional.

Energy convention (one absolute scale, the vacuum level of the neutral
channel at phi = 0):

    E_c(x) = -chi(x) - q phi(x),   E_v(x) = E_c(x) - E_g(x)

with chi the electron affinity of the material at x (band offsets follow from
the affinities, vacuum-level rule). phi = 0 in the neutral channel bulk, so
the channel Fermi level E_F is the neutral level -Phi_s (Phi_s the
semiconductor work function, from charge neutrality with the chosen
statistics and ionization). A gate voltage V_g puts the gate Fermi level at
E_F - q V_g. At the gate boundary the gate is in equilibrium with its own
Fermi level:

    metal gate    vacuum level at the gate E_F - q V_g + Phi_m, i.e.
                  phi_gate = V_g - (Phi_m - Phi_s)
    poly-Si gate  the neutral poly at the contact: phi_contact =
                  V_g - (E_F - E_F0,gate)/q with E_F0,gate the neutral Fermi
                  level of the gate doping at phi = 0; the poly between the
                  contact and the dielectric is solved with its own Fermi level
                  (poly depletion or accumulation).

So a charge-free stack is at flat band (phi = 0 everywhere) exactly at
V_g = V_FB = Phi_m - Phi_s (Sze & Ng 2007, Sec. 4.2). Planar cells hold
phi = 0 at the last (bulk) node; a cylindrical cell has a symmetry axis (or an
insulating core) instead and its potential is fixed by the gate alone.

Discrete problem (see solver.mesh for the metric): for every node i

    G_i(phi) = c_{i-1}(phi_i - phi_{i-1}) + c_i(phi_i - phi_{i+1}) - Q_i(phi) = 0,

Q_i the charge in the box of node i (carriers, ionized dopants, sheet
charges, interface traps, and a quantum density supplied by the
self-consistent loop). Every Q_i decreases with phi_i and depends on phi_i
only, so G is the gradient of a strictly convex functional; Newton's
direction with a line search on that functional (the directional derivative
g(t) = d.G(phi + t d) is increasing in t; the step is cut back to where |g(t)|
is below a tenth of |g(0)|, by safeguarded regula falsi) converges from any
start. Steps below 1e-4 V are taken in full (quadratic convergence region). The
Jacobian L - diag(dQ/dphi) is a symmetric positive-definite tridiagonal
matrix, solved by the Thomas algorithm.

Convergence: the last Newton update is below `tolerance_V` (1e-9 V by default)
at every node. The charge residual reported is max_i |G_i| over the free
nodes, per unit reference area (channel surface in a cylinder), in C/cm^2:
the worst imbalance between the electric flux out of a box and the charge in
it.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numba
import numpy as np
from scipy.optimize import brentq

from solver import statistics as stat
from solver.errors import ConvergenceError, ConvergenceRecord
from solver.mesh import Structure
from solver.units import BOLTZMANN_J_K, C_PER_M2_TO_C_PER_CM2, EV_TO_J, Q_C

_NO_SEARCH_BELOW_V = 1e-4   # Newton steps smaller than this are taken in full

__all__ = ["Poisson", "QuantumCharge", "thomas_solve", "neutral_fermi_level_J"]


@numba.njit(cache=True)
def thomas_solve(lower, diag, upper, rhs):
    """Solve a tridiagonal system: lower[i] couples row i+1 to i, upper[i]
    row i to i+1 (Thomas algorithm; the Poisson Jacobian is diagonally
    dominant, no pivoting needed)."""
    n = diag.shape[0]
    c = np.empty(n)
    d = np.empty(n)
    beta = diag[0]
    c[0] = upper[0] / beta if n > 1 else 0.0
    d[0] = rhs[0] / beta
    for i in range(1, n):
        beta = diag[i] - lower[i - 1] * c[i - 1]
        if i < n - 1:
            c[i] = upper[i] / beta
        d[i] = (rhs[i] - lower[i - 1] * d[i - 1]) / beta
    x = np.empty(n)
    x[n - 1] = d[n - 1]
    for i in range(n - 2, -1, -1):
        x[i] = d[i] - c[i] * x[i + 1]
    return x


def _ionization(spec) -> str:
    return "incomplete" if spec.incomplete_ionization else "complete"


def neutral_fermi_level_J(spec, temperature_K: float, statistics: str) -> float:
    """Fermi level (J, vacuum scale, flat bands) at which the bulk semiconductor
    is neutral: p - n + N_D+ - N_A- = 0, solved by bracketing (brentq)."""
    ec = -spec.affinity_eV * EV_TO_J
    ev = ec - spec.gap_eV * EV_TO_J
    kT = BOLTZMANN_J_K * temperature_K
    ion = _ionization(spec)

    def net(ef):
        n, _ = stat.electron_density(ec, ef, spec.conduction_dos_m3, temperature_K, statistics)
        p, _ = stat.hole_density(ev, ef, spec.valence_dos_m3, temperature_K, statistics)
        nd, _ = stat.ionized_donors(spec.donors_m3, ec, ef, spec.donor_ionization_eV * EV_TO_J,
                                    temperature_K, ion)
        na, _ = stat.ionized_acceptors(spec.acceptors_m3, ev, ef, spec.acceptor_ionization_eV * EV_TO_J,
                                       temperature_K, ion)
        return float(p - n + nd - na)

    lo, hi = ev - 40 * kT, ec + 40 * kT
    while net(lo) < 0:
        lo -= 20 * kT
    while net(hi) > 0:
        hi += 20 * kT
    scale = kT
    return brentq(net, lo, hi, xtol=1e-15 * scale, rtol=4 * np.finfo(float).eps, maxiter=500)


@dataclass(frozen=True, eq=False)
class QuantumCharge:
    """A carrier density on some nodes supplied by the Schrödinger solution,
    in the Trellakis form: a callable `density(phi_nodes) -> (rho_C_m3,
    drho_dphi)` for the box nodes `nodes`, and the weight of every box node
    (blend * box volume) that multiplies it. `electron_weight` and
    `hole_weight` (one per mesh node, 0..1) scale the classical carriers of
    the channel."""

    nodes: np.ndarray
    weight: np.ndarray
    electron_weight: np.ndarray
    hole_weight: np.ndarray
    density: object


class Poisson:
    """Nonlinear Poisson problem of a `Structure` with one statistics."""

    def __init__(self, structure: Structure, statistics: str = "fermi-dirac"):
        if statistics not in stat.STATISTICS:
            raise ValueError(f"statistics must be one of {stat.STATISTICS}, got {statistics!r}")
        self.s = structure
        self.statistics = statistics
        T = structure.temperature_K
        self.T = T
        self.kT = BOLTZMANN_J_K * T
        self._semi = []
        for sr in structure.semis:
            sp = sr.spec
            ef0 = neutral_fermi_level_J(sp, T, statistics)
            self._semi.append(dict(
                sr=sr, nodes=sr.nodes, vol=sr.volume, ef0=ef0,
                ec0=-sp.affinity_eV * EV_TO_J, gap=sp.gap_eV * EV_TO_J,
                ed=sp.donor_ionization_eV * EV_TO_J, ea=sp.acceptor_ionization_eV * EV_TO_J,
                ion=_ionization(sp)))
        self.channel_fermi_J = next(d["ef0"] for d in self._semi if d["sr"].role == "channel")
        gate = next((d for d in self._semi if d["sr"].role == "gate"), None)
        if gate is None:
            self.gate_fermi0_J = -structure.metal_work_function_eV * EV_TO_J
        else:
            self.gate_fermi0_J = gate["ef0"]
        ch = next(d for d in self._semi if d["sr"].role == "channel")
        self.channel_work_function_eV = -self.channel_fermi_J / EV_TO_J
        self.gate_work_function_eV = -self.gate_fermi0_J / EV_TO_J
        self.flatband_V = self.gate_work_function_eV - self.channel_work_function_eV
        self._iface = structure.interface_node
        self._iface_mid0 = ch["ec0"] - 0.5 * ch["gap"]
        self._iface_half_gap = 0.5 * ch["gap"]
        self._dit = structure.interface_trap_density_m2_J * structure.area[self._iface]
        n = structure.size
        self._free = np.ones(n, dtype=bool)
        self._free[structure.gate_node] = False
        if structure.bulk_node >= 0:
            self._free[structure.bulk_node] = False
        self._coef = np.ascontiguousarray(structure.coef)

    # -------------------------------------------------------------- pieces
    def fermi_level_J(self, role: str, gate_V: float) -> float:
        return self.channel_fermi_J - (Q_C * gate_V if role == "gate" else 0.0)

    def gate_boundary_V(self, gate_V: float) -> float:
        return gate_V - (self.channel_fermi_J - self.gate_fermi0_J) / Q_C

    def initial_guess(self, gate_V: float) -> np.ndarray:
        """phi = 0 in the channel, the gate value in the gate, linear in D
        through the dielectrics (the charge-free stack)."""
        s = self.s
        phi = np.zeros(s.size)
        vg = self.gate_boundary_V(gate_V)
        gsr = s.gate_semi
        if gsr is not None:
            phi[gsr.nodes] = vg
        # dielectric nodes between gate and channel: series capacitors
        lo, hi = sorted((s.regions[s.layer_regions[0]].lo, s.regions[s.layer_regions[-1]].hi)) \
            if s.channel_side_sign > 0 else sorted((s.regions[s.layer_regions[-1]].lo,
                                                    s.regions[s.layer_regions[0]].hi))
        inv_c = np.concatenate(([0.0], np.cumsum(1.0 / s.coef[lo:hi])))
        frac = inv_c / inv_c[-1]
        if s.channel_side_sign > 0:
            phi[lo:hi + 1] = vg * (1.0 - frac)
        else:
            phi[lo:hi + 1] = vg * frac
        return phi

    def semiconductor_densities(self, phi: np.ndarray, gate_V: float):
        """Classical carrier and ionized dopant densities (per m^3) of every
        semiconductor region: list of dicts with nodes, n, p, nd, na."""
        out = []
        for d in self._semi:
            nodes = d["nodes"]
            ef = self.fermi_level_J(d["sr"].role, gate_V)
            sp = d["sr"].spec
            ec = d["ec0"] - Q_C * phi[nodes]
            ev = ec - d["gap"]
            n, _ = stat.electron_density(ec, ef, sp.conduction_dos_m3, self.T, self.statistics)
            p, _ = stat.hole_density(ev, ef, sp.valence_dos_m3, self.T, self.statistics)
            nd, _ = stat.ionized_donors(sp.donors_m3, ec, ef, d["ed"], self.T, d["ion"])
            na, _ = stat.ionized_acceptors(sp.acceptors_m3, ev, ef, d["ea"], self.T, d["ion"])
            out.append(dict(role=d["sr"].role, nodes=nodes, vol=d["vol"], n=n, p=p, nd=nd, na=na))
        return out

    def interface_trap_charge(self, phi_iface: float, gate_V: float):
        """Charge of interface traps (constant density across the gap, neutral
        level at midgap; common practice) at the channel interface node:
        Q_it = q D_it (E_mid - E_F), clipped to the gap; per node area."""
        if self._dit == 0.0:
            return 0.0, 0.0
        e = self._iface_mid0 - Q_C * phi_iface - self.channel_fermi_J
        if abs(e) >= self._iface_half_gap:
            return Q_C * self._dit * math.copysign(self._iface_half_gap, e), 0.0
        return Q_C * self._dit * e, -Q_C * Q_C * self._dit

    def _band_integrals(self, eta):
        """(F_1/2, F_-1/2) of all reduced energies in one call each (the
        statistics module's integrals; Boltzmann: exp for both)."""
        if self.statistics == "boltzmann":
            with np.errstate(over="ignore"):
                f = np.exp(eta)
            return f, f
        return stat.fermi_dirac_half(eta), stat.fermi_dirac_minus_half(eta)

    def charge(self, phi: np.ndarray, gate_V: float, quantum: QuantumCharge | None = None):
        """Box charges Q (C/m^2 or C/m/rad per node) and dQ/dphi.

        Carriers n = N_c F_1/2((E_F - E_c)/kT), p = N_v F_1/2((E_v - E_F)/kT)
        (Blakemore normalisation, solver.statistics) with E_c = E_c0 - q phi;
        the reduced energies of every region and both carriers are evaluated
        in one call, since the cost of the integrals is per call here."""
        # trial points of the line search may overflow exp (Boltzmann); the
        # resulting inf/NaN are rejected there
        with np.errstate(over="ignore", invalid="ignore"):
            return self._charge(phi, gate_V, quantum)

    def _charge(self, phi, gate_V, quantum):
        s = self.s
        Q = s.fixed_charge.copy()
        dQ = np.zeros(s.size)
        kT = self.kT
        etas = []
        for d in self._semi:
            ef = self.fermi_level_J(d["sr"].role, gate_V)
            ec = d["ec0"] - Q_C * phi[d["nodes"]]
            etas.append((ef - ec) / kT)
            etas.append((ec - d["gap"] - ef) / kT)
        f, fm = self._band_integrals(np.concatenate(etas))
        pos = 0
        qkT = Q_C / kT
        for k, d in enumerate(self._semi):
            nodes = d["nodes"]
            m = nodes.size
            sp = d["sr"].spec
            n = sp.conduction_dos_m3 * f[pos:pos + m]
            dn = sp.conduction_dos_m3 * qkT * fm[pos:pos + m]
            p = sp.valence_dos_m3 * f[pos + m:pos + 2 * m]
            dp = -sp.valence_dos_m3 * qkT * fm[pos + m:pos + 2 * m]
            pos += 2 * m
            if quantum is not None and d["sr"].role == "channel":
                wn = quantum.electron_weight[nodes]
                wp = quantum.hole_weight[nodes]
                n, dn, p, dp = n * wn, dn * wn, p * wp, dp * wp
            rho = p - n
            drho = dp - dn
            if d["ion"] == "complete":
                rho = rho + (sp.donors_m3 - sp.acceptors_m3)
            else:
                ef = self.fermi_level_J(d["sr"].role, gate_V)
                ec = d["ec0"] - Q_C * phi[nodes]
                if sp.donors_m3 > 0:
                    nd, dnd = stat.ionized_donors(sp.donors_m3, ec, ef, d["ed"], self.T, d["ion"])
                    rho = rho + nd
                    drho = drho + dnd
                if sp.acceptors_m3 > 0:
                    na, dna = stat.ionized_acceptors(sp.acceptors_m3, ec - d["gap"], ef, d["ea"],
                                                     self.T, d["ion"])
                    rho = rho - na
                    drho = drho - dna
            Q[nodes] += Q_C * d["vol"] * rho
            dQ[nodes] += Q_C * d["vol"] * drho
        if self._dit:
            q_it, dq_it = self.interface_trap_charge(phi[self._iface], gate_V)
            Q[self._iface] += q_it
            dQ[self._iface] += dq_it
        if quantum is not None:
            rho_q, drho_q = quantum.density(phi[quantum.nodes])
            Q[quantum.nodes] += quantum.weight * rho_q
            dQ[quantum.nodes] += quantum.weight * drho_q
        return Q, dQ

    def gradient(self, phi, gate_V, quantum=None):
        """G = L phi - Q(phi) at every node, and dQ/dphi."""
        c = self._coef
        Q, dQ = self.charge(phi, gate_V, quantum)
        dphi = np.diff(phi)
        G = -Q
        G[:-1] -= c * dphi
        G[1:] += c * dphi
        return G, dQ

    # -------------------------------------------------------------- Newton
    def solve(self, gate_V: float, phi0: np.ndarray | None = None, quantum: QuantumCharge | None = None,
              tolerance_V: float = 1e-9, max_iterations: int = 200, raise_on_failure: bool = True):
        """Newton's method; returns (phi, ConvergenceRecord). Raises
        ConvergenceError (with the record) when it does not converge within
        `max_iterations`, unless `raise_on_failure` is False."""
        s = self.s
        phi = self.initial_guess(gate_V) if phi0 is None else np.array(phi0, dtype=float)
        phi[s.gate_node] = self.gate_boundary_V(gate_V)
        if s.bulk_node >= 0:
            phi[s.bulk_node] = 0.0
        free = self._free
        c = self._coef
        history = []
        G, dQ = self.gradient(phi, gate_V, quantum)
        G[~free] = 0.0
        converged = False
        line_searches = 0
        it = 0
        for it in range(1, max_iterations + 1):
            diag = -dQ
            diag[:-1] += c
            diag[1:] += c
            off = -c.copy()
            diag[~free] = 1.0
            upper = off.copy()
            lower = off.copy()
            upper[~free[:-1]] = 0.0
            lower[~free[1:]] = 0.0
            d = thomas_solve(lower, diag, upper, -G)
            d[~free] = 0.0
            full = float(np.abs(d).max())
            if full <= _NO_SEARCH_BELOW_V:
                # quadratic convergence region: the full Newton step
                t = 1.0
                G, dQ = self.gradient(phi + d, gate_V, quantum)
                G[~free] = 0.0
            else:
                t, G, dQ, searched = self._line_search(phi, d, G, gate_V, quantum)
                line_searches += searched
            phi = phi + t * d
            history.append(float(t * full))
            if full <= tolerance_V:
                converged = True
                break
            if not np.isfinite(full):
                break
        G[~free] = 0.0
        residual = float(np.abs(G).max()) / s.reference_area * C_PER_M2_TO_C_PER_CM2
        rec = ConvergenceRecord(
            converged=converged, iterations=it, residual_history=tuple(history),
            message=("Newton converged" if converged else
                     f"Newton did not reach {tolerance_V:g} V in {it} iterations"),
            residual_unit="V",
            extra={"charge_residual_C_cm2": residual, "line_searches": line_searches})
        if not converged and raise_on_failure:
            raise ConvergenceError(
                f"Poisson Newton solve at gate_V = {gate_V:g} V did not converge: last update "
                f"{history[-1] if history else float('nan'):.3g} V after {it} iterations", rec)
        return phi, rec

    def _line_search(self, phi, d, G0, gate_V, quantum):
        """Step length t in (0, 1] along d: t = 1 when the convex functional
        still decreases there, else (approximately) its minimiser."""
        free = self._free
        g0 = float(d @ G0)
        G1, dQ1 = self.gradient(phi + d, gate_V, quantum)
        G1[~free] = 0.0
        g1 = float(d @ G1)
        if np.isfinite(g1) and g1 <= 0.0 or g0 >= 0.0:
            return 1.0, G1, dQ1, 0
        lo, glo, hi, ghi = 0.0, g0, 1.0, g1
        t, Gt, dQt = 1.0, G1, dQ1
        side = 0
        for _ in range(60):
            if not np.isfinite(ghi):
                t = 0.5 * (lo + hi)
            else:
                t = lo - glo * (hi - lo) / (ghi - glo)
                t = min(max(t, lo + 1e-3 * (hi - lo)), hi - 1e-3 * (hi - lo))
            Gt, dQt = self.gradient(phi + t * d, gate_V, quantum)
            Gt[~free] = 0.0
            gt = float(d @ Gt)
            if np.isfinite(gt) and abs(gt) <= 0.1 * abs(g0):
                break
            if np.isfinite(gt) and gt < 0:
                lo, glo = t, gt
                if side == -1 and np.isfinite(ghi):
                    ghi *= 0.5  # Illinois modification
                side = -1
            else:
                hi, ghi = t, gt
                if side == 1:
                    glo *= 0.5
                side = 1
        return t, Gt, dQt, 1
