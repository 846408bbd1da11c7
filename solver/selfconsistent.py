"""Self-consistent Schrödinger–Poisson solution of a gate stack: `solve` and
its `Solution`.

Scheme
------
The channel next to the dielectric holds a quantum region (automatic width,
see solver.mesh; `[mesh] quantum_depth_nm` sets it) that starts
2 nm inside the adjacent dielectric, so that wavefunctions penetrate the
finite barrier with the dielectric's mass. In it, for every valley set of the
channel orientation (Si(100): 2-fold with m_z = 0.916, 4-fold with 0.19; the
hole bands heavy, light and split-off) the effective-mass equation is solved
with psi = 0 at the box ends, and each subband holds the 2-D Fermi–Dirac
sheet density

    N_j = g m_d m0 kT / (pi hbar^2) ln(1 + exp((E_F - E_j)/kT))

(Ando, Fowler, Stern, Rev. Mod. Phys. 54, 437 (1982), Sec. III). Beyond the
box the carriers are classical; between 50 % and 80 % of the box depth the
quantum density is handed over smoothly to the classical one (weights cos^2),
classical alone over the last 20 %, which keeps the Dirichlet box end from
carving an artificial dip into carriers that are plentiful there (majority
carriers).

Bulk-limit normalisation of the 2-D densities of states: a wide flat box
holds sum_j g m_d sqrt(m_z) exp(-offset/kT) * 2.5094e19 cm^-3 (300 K) carriers
per unit volume (the 3-D equivalent of the ladders), whereas the classical
statistics use the data's N_c, N_v. Every ladder's 2-D DOS of one carrier type
is multiplied by N_c (resp. N_v) over that equivalent, so the quantum density
joins the classical one at the hand-over. For Si(100) electrons the factor is
1.04 (the valley masses nearly reproduce N_c). For holes it is 3.76 at 300 K:
the one-band hole ladders of the materials data (heavy 0.29/0.433, light
0.20/0.169, split-off 0.23) describe the subband energies, not the strongly
non-parabolic valence-band density of states behind N_v = 3.1e19 cm^-3, so in
effect their 2-D DOS masses are raised 3.76-fold while their quantization
masses are kept. The factors of a solve are reported as
`Solution.electron_subband_dos_scale` and `hole_subband_dos_scale`. Dopants
are never quantized; carriers holding less than 1e3 per cm^2 in the box stay
classical.

Self-consistency uses the predictor–corrector iteration of A. Trellakis,
A. T. Galick, A. Pacelli, U. Ravaioli, J. Appl. Phys. 81, 7880 (1997): with the
states of the potential phi_k, the nonlinear Poisson equation is solved by
Newton for a quantum density in which every subband energy follows the local
potential change, E_j(x) = E_j - q (phi(x) - phi_k(x)); the new potential is the
next phi_k. The outer loop stops when max |phi_{k+1} - phi_k| is below
`tolerance_V` (default 1e-8 V; each inner Newton solve is converged to a tenth
of the last outer update, within 1e-3 .. 1e-9 V); an unconverged solve raises
ConvergenceError with the residual history.

Validity: the box ends 2 nm inside the adjacent dielectric with psi = 0. At
tunnel-layer fields near 20 MV/cm and above, the dielectric's band edge falls
below the occupied subbands within those 2 nm and the box wall binds carriers
that would in fact tunnel into the dielectric. A converged solution with more
than WALL_SHARE_LIMIT (1e-3) of the quantized carriers in the outer half of the
box's dielectric part (legitimate penetration puts < 1e-4 there) is refused
with ComputationError rather than returned. A planar channel must end in
neutral bulk: when more than CONTACT_SHARE_LIMIT (1e-3) of the semiconductor
charge's field reaches the bulk contact, a `[mesh] depth_nm` shorter than the
depletion region is refused with CaseError (the automatic depth holds the
widest equilibrium depletion region).

Cylindrical cells use the radial operator with l = 0 and count each subband
as a 2-D sheet wrapped around the axis at the state's mean radius
<r>_j = integral R_j^2 r^2 dr (integral R_j^2 r dr = 1): the angular states
l = 0, +-1, ... of a thin shell are as dense as the 2-D states of a strip
2 pi <r>_j wide, so a subband with the 2-D sheet density N_j holds
2 pi <r>_j N_j carriers per unit length, n(r) = <r>_j N_j R_j(r)^2. This holds
while the angular level spacing hbar^2/(2 m <r>^2) is small against kT and the
layer is thin compared with the radius (tests: 0.1 % from the exact sum over l
for a 3 nm shell at 20 nm, where the channel radius in place of <r> would
overcount by 8 %). Populations are reported per area of the channel surface,
N_j <r>_j / R_channel.

Sign conventions of the outputs
-------------------------------
surface_potential_V   phi at the dielectric/channel interface (phi = 0 in the
                      neutral channel): band bending, positive toward inversion
                      of p-type.
layer_fields_MV_cm    field component pointing from the gate toward the
                      channel (positive for a gate above flat band), at the
                      channel-side edge of each layer, gate first.
layer_voltages_V      phi(gate side) - phi(channel side) of each layer.
energies              eV on the vacuum scale of solver.electrostatics; the
                      channel Fermi level is fermi_level_eV.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numba
import numpy as np

from solver import statistics as stat
from solver.electrostatics import Poisson, QuantumCharge
from solver.errors import CaseError, ComputationError, ConvergenceError, ConvergenceRecord
from solver.mesh import Structure, automatic_depth_m, structure_from_case
from solver.schrodinger import Hamiltonian
from solver.units import (
    C_PER_M2_TO_C_PER_CM2,
    EV_TO_J,
    M_TO_NM,
    PER_M2_TO_PER_CM2,
    PER_M3_TO_PER_CM3,
    Q_C,
    V_PER_M_TO_MV_PER_CM,
)

__all__ = ["Solution", "solve", "solve_structure", "prepare"]

OUTER_TOLERANCE_V = 1e-8
INNER_TOLERANCE_V = 1e-9       # Newton tolerance of the Poisson solves near convergence
INNER_TOLERANCE_MAX_V = 1e-3
INNER_FRACTION = 0.1
MAX_OUTER_ITERATIONS = 30
ANDERSON_DEPTH = 3
SUBBANDS_REPORTED = 10      # lowest subbands per valley set listed in Solution.subbands
SCHRODINGER_MIN_SPACING_M = 0.02e-9
NEGLIGIBLE_SHEET_M2 = 1e7   # 1e3 carriers per cm^2
WALL_SHARE_LIMIT = 1e-3     # quantized carriers allowed in the outer half of the box's dielectric part
CONTACT_SHARE_LIMIT = 1e-3  # field at the planar bulk contact, relative to the semiconductor charge
TAIL_KT = 12.0              # states are added until the highest lies this far above max(E_F, E_0)


def _readonly(a):
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


@dataclass(frozen=True, eq=False)
class Solution:
    """Self-consistent electrostatics of a cell at one gate voltage (arrays read-only).

    Contract attributes (shared/api-contract.md) first, then:

    gate_V, quantum, statistics, geometry, temperature_K   the solve's inputs
    layer_names, layer_materials      dielectric layers, gate first
    interfaces_nm                     gate/dielectric, dielectric/dielectric and
                                      dielectric/channel interfaces, in x_nm order
    layer_voltages_V                  phi(gate side) - phi(channel side) per layer, gate first
    layer_conduction_band_eV, layer_valence_band_eV
                                      (gate-side edge, channel-side edge) of every layer's
                                      bands, gate first (a sheet charge inside a layer
                                      puts a kink between them, see x_nm/potential_V)
    gate_fermi_level_eV, flatband_V   E_F - q V_g; Phi_gate - Phi_channel
    inversion_charge_cm2              minority carriers per area (> 0), channel and
                                      penetration into the dielectric
    majority_excess_cm2               majority carriers per area minus the neutral bulk
                                      value (> 0 accumulation, < 0 depletion)
    electron_sheet_cm2, hole_sheet_cm2  all electrons / holes of the channel per area
    gate_charge_C_cm2                 -(all charge outside the gate) per area
    interface_trap_charge_C_cm2       charge of the interface traps
    charge_centroid_nm                mean distance of the minority carriers from the
                                      dielectric/channel interface (negative inside the dielectric)
    wavefunctions                     |psi|^2 of every listed subband, shape
                                      (len(x_nm), len(subbands)), zero outside the
                                      quantum box, trapezoid integral over x_nm = 1
    subband_valleys                   valley label per subband (column order)
    convergence                       ConvergenceRecord of the self-consistent loop
                                      (residual history: max |phi_{k+1} - phi_k| in V);
                                      for a classical solve that of the Poisson Newton
                                      iteration (last updates in V), and `iterations`
                                      counts its Newton steps
    charge_residual                   max over boxes of |electric flux out - charge in|
                                      per reference area (C/cm^2) of the final potential
    newton_iterations                 Poisson Newton steps in total
    minority_carrier                  "electrons" (p-type channel) or "holes"
    electron_subband_dos_scale, hole_subband_dos_scale
                                      factor applied to every 2-D subband DOS of that
                                      carrier so that a wide flat box reproduces the
                                      data's N_c, N_v (module docstring); NaN when classical

    Per-area quantities of cylindrical cells are per area of the channel
    surface (radius channel_radius_nm). `subbands` lists the lowest
    SUBBANDS_REPORTED subbands of every quantized valley set; carriers that hold
    less than 1e3 per cm^2 in the quantum box stay classical and have none.
    """

    x_nm: np.ndarray
    potential_V: np.ndarray
    conduction_band_eV: np.ndarray
    valence_band_eV: np.ndarray
    fermi_level_eV: float
    electron_density_cm3: np.ndarray
    hole_density_cm3: np.ndarray
    surface_potential_V: float
    semiconductor_charge_C_cm2: float
    layer_fields_MV_cm: tuple
    subbands: tuple
    iterations: int
    # beyond the contract
    gate_V: float
    quantum: bool
    statistics: str
    geometry: str
    temperature_K: float
    layer_names: tuple
    layer_materials: tuple
    interfaces_nm: tuple
    layer_voltages_V: tuple
    layer_conduction_band_eV: tuple     # per layer (gate-side, channel-side) edge, gate first
    layer_valence_band_eV: tuple
    gate_fermi_level_eV: float
    flatband_V: float
    inversion_charge_cm2: float
    majority_excess_cm2: float
    electron_sheet_cm2: float
    hole_sheet_cm2: float
    gate_charge_C_cm2: float
    interface_trap_charge_C_cm2: float
    charge_centroid_nm: float
    wavefunctions: np.ndarray
    subband_valleys: tuple
    convergence: ConvergenceRecord
    charge_residual: float
    charge_residual_unit: str = "C/cm^2"
    newton_iterations: int = 0
    minority_carrier: str = "electrons"
    electron_subband_dos_scale: float = float("nan")
    hole_subband_dos_scale: float = float("nan")
    extra: dict = field(default_factory=dict)

    @property
    def field_MV_cm(self) -> np.ndarray:
        """Field at the link midpoints toward +x (planar) / outward (cylinder)."""
        return -np.diff(self.potential_V) / np.diff(self.x_nm) * 1e9 * V_PER_M_TO_MV_PER_CM


# --------------------------------------------------------------------------- quantum channel
@numba.njit(cache=True)
def _sheet_sum(psi2, a, dos, shift, sign):
    """sum_j psi2[i, j] dos[j] ln(1 + exp(a_j + sign shift_i)) and the sum with
    the derivative exp/(1 + exp) in place of the logarithm, per node i (the
    Trellakis density of one carrier type, in units of kT and 1)."""
    n, k = psi2.shape
    out = np.zeros(n)
    dout = np.zeros(n)
    for i in range(n):
        s = 0.0
        ds = 0.0
        for j in range(k):
            x = a[j] + sign * shift[i]
            if x > 0.0:
                e = math.exp(-x)
                lg = x + math.log1p(e)
                f = 1.0 / (1.0 + e)
            else:
                e = math.exp(x)
                lg = math.log1p(e)
                f = e / (1.0 + e)
            w = psi2[i, j] * dos[j]
            s += w * lg
            ds += w * f
        out[i] = s
        dout[i] = ds
    return out, dout


class _Valleys:
    """Prepared Schrödinger operators of one carrier type in the box."""

    def __init__(self, structure: Structure, poisson: Poisson, carrier: str):
        s = structure
        self.carrier = carrier
        q = s.quantum_nodes
        self.nodes = q
        spec = s.channel.spec
        bands = spec.electron_valleys if carrier == "e" else spec.hole_bands
        regions = [s.regions[k] for k in s.node_region[q]]
        in_semi = np.array([r.kind == "channel" for r in regions])
        chi = np.array([r.affinity_eV for r in regions]) * EV_TO_J
        gap = np.array([r.gap_eV for r in regions]) * EV_TO_J
        diel_mass = np.array([r.electron_mass if carrier == "e" else r.hole_mass for r in regions])
        x = s.x_m[q]
        radial = s.geometry == "cylindrical"
        # Schrödinger grid: the box nodes thinned to a spacing of at least
        # SCHRODINGER_MIN_SPACING_M (the Poisson mesh may be far finer at the
        # interface than the wavefunctions need), keeping the box ends and the
        # channel's boundary nodes (the mass and band steps)
        boundary = [int(np.searchsorted(q, k)) for k in (s.channel.nodes[0], s.channel.nodes[-1])
                    if k in set(q.tolist())]
        sub = _thin(x, SCHRODINGER_MIN_SPACING_M, keep=boundary)
        self.sub = sub
        xs = x[sub]
        # A step sits on a channel boundary node: each link carries its own
        # material's mass, and the step node the box average of the band edge
        # (second order, see Hamiltonian.planar)
        semi = in_semi[sub]
        link_semi = semi[:-1] & semi[1:]
        diel_sub = diel_mass[sub]
        link_diel_mass = np.where(~semi[:-1], diel_sub[:-1], diel_sub[1:])
        u0 = (-chi if carrier == "e" else chi + gap)[sub]
        if radial:
            mid = 0.5 * (xs[:-1] + xs[1:])
            left = np.concatenate(([0.0], 0.5 * (xs[1:] ** 2 - mid**2)))
            right = np.concatenate((0.5 * (mid**2 - xs[:-1] ** 2), [0.0]))
        else:
            left = np.concatenate(([0.0], 0.5 * np.diff(xs)))
            right = np.concatenate((0.5 * np.diff(xs), [0.0]))
        u0_box = u0.copy()
        for k in np.nonzero(semi)[0]:
            lo = u0[k - 1] if k > 0 and not semi[k - 1] else u0[k]
            hi = u0[k + 1] if k + 1 < semi.size and not semi[k + 1] else u0[k]
            if (lo != u0[k] or hi != u0[k]) and left[k] + right[k] > 0:
                u0_box[k] = (left[k] * lo + right[k] * hi) / (left[k] + right[k])
        j = np.clip(np.searchsorted(xs, x, side="right") - 1, 0, xs.size - 2)
        self._ij = j
        self._wj = (x - xs[j]) / (xs[j + 1] - xs[j])
        self._box_volume = (s.vol_left + s.vol_right)[q]
        # Bulk-limit normalisation (module docstring): a wide flat box must give
        # back the classical density N_c F_1/2 (N_v for holes). The ladders' 3-D
        # equivalent is sum g m_d sqrt(m_z) exp(-offset/kT) times the DOS
        # prefactor 2 (2 pi m0 kT/h^2)^(3/2); every 2-D DOS is scaled by N_c (N_v)
        # over it: 1.04 for Si electrons, 3.76 for the one-band hole ladders.
        kT_J = poisson.kT
        equiv = sum(v.degeneracy * v.dos_mass * math.sqrt(v.quantization_mass)
                    * math.exp(-v.offset_eV * EV_TO_J / kT_J) for v in bands)
        bulk = spec.conduction_dos_m3 if carrier == "e" else spec.valence_dos_m3
        self.dos_factor = (bulk / (float(stat.effective_dos_m3(1.0, s.temperature_K)) * equiv)
                           if equiv > 0 else 1.0)
        self.valleys = []
        for v in bands:
            mass = np.where(in_semi, v.quantization_mass, diel_mass)[sub]
            link_mass = np.where(link_semi, v.quantization_mass, link_diel_mass)
            ham = (Hamiltonian.radial(xs, mass, 0, link_mass=link_mass) if radial
                   else Hamiltonian.planar(xs, mass, link_mass=link_mass))
            dos = float(stat.subband_dos_m2_J(v.degeneracy, v.dos_mass)) * self.dos_factor
            self.valleys.append(dict(valley=v, ham=ham, dos=dos, count=min(8, ham.unknowns.size)))
        # potential energy at phi = 0 on the Schrödinger grid: electrons E_c0,
        # holes -E_v0 (plus the valley offset in `solve`)
        self.u0 = u0_box
        self.sign = 1.0 if carrier == "e" else -1.0   # U = u0 - sign q phi
        self.radial = radial
        self.scale = s.reference_area if radial else 1.0
        self.kT = poisson.kT

    def solve(self, phi_box, fermi_J):
        """States of every valley set: list of (valley, E_J (this carrier's
        energy scale), psi2 (box nodes x k) as density per unit sheet density
        per reference area, dos per state). In a cylinder a state's 2-D DOS
        counts per area at its mean radius <r>_j, i.e. dos * <r>_j / R_channel
        per area of the channel surface (module docstring)."""
        u_base = self.u0 - self.sign * Q_C * phi_box[self.sub]
        ef = fermi_J if self.carrier == "e" else -fermi_J  # hole-energy scale
        out = []
        for d in self.valleys:
            v, ham = d["valley"], d["ham"]
            u = u_base + v.offset_eV * EV_TO_J
            k = d["count"]
            kmax = ham.unknowns.size
            while True:
                E, psi = ham.solve(u, k)
                cutoff = max(ef, E[0]) + TAIL_KT * self.kT
                if E[-1] >= cutoff or k >= kmax:
                    break
                k = min(k + max(4, k // 2), kmax)
            # next time: the states below the cutoff and two more
            d["count"] = min(max(4, int(np.count_nonzero(E < cutoff)) + 2), kmax)
            psi2 = psi * psi
            if self.radial:  # <r>_j = sum w r R^2 with sum w R^2 = 1
                dos = d["dos"] * ((ham.weights_m * ham.x_m) @ psi2) / self.scale
            else:
                dos = np.full(E.size, d["dos"])
            out.append((v, E, self._on_box(psi2), dos))
        return out

    def _on_box(self, psi2_sub):
        """|psi|^2 interpolated linearly onto the box nodes, normalised with the
        Poisson boxes (sum V |psi|^2 = 1 planar, = R_channel radial) so that the
        subband populations are exactly the carriers Poisson sees."""
        j, w = self._ij, self._wj[:, None]
        psi2 = psi2_sub[j] * (1.0 - w) + psi2_sub[j + 1] * w
        norm = self._box_volume @ psi2
        return psi2 * (self.scale / np.where(norm > 0, norm, 1.0))


def _thin(x, h_min, keep=()):
    """Indices of a subset of the increasing nodes x with spacing >= h_min
    (approximately), always containing the ends and the indices in `keep`."""
    keep = set(int(k) for k in keep) | {0, x.size - 1}
    out = [0]
    for i in range(1, x.size - 1):
        if i in keep or (x[i] - x[out[-1]] >= h_min and x[-1] - x[i] >= 0.5 * h_min):
            out.append(i)
        elif i + 1 in keep and out[-1] != i and x[i + 1] - x[out[-1]] > 2 * h_min:
            out.append(i)
    out.append(x.size - 1)
    idx = np.array(sorted(set(out)))
    return idx


class _QuantumChannel:
    def __init__(self, structure: Structure, poisson: Poisson):
        self.s = structure
        self.p = poisson
        q = structure.quantum_nodes
        self.nodes = q
        self.blend = structure.quantum_blend
        self.weight = self.blend * (structure.vol_left + structure.vol_right)[q]
        self.electrons = _Valleys(structure, poisson, "e")
        self.holes = _Valleys(structure, poisson, "h")
        self.kT = poisson.kT
        ch = structure.channel
        self._box_in_channel = np.isin(ch.nodes, q)
        self._box_volume = ch.volume * self._box_in_channel
        self._weights = {}
        # box nodes in the outer half of its dielectric part (farther from the
        # channel than half the penetration depth): legitimate penetration puts
        # < 1e-4 of the carriers there, carriers bound against the box wall far more
        x = structure.x_m[q]
        edges = structure.x_m[[ch.nodes[0], ch.nodes[-1]]]
        in_dielectric = np.array([structure.regions[k].kind != "channel" for k in structure.node_region[q]])
        depth = np.min(np.abs(x[:, None] - edges[None, :]), axis=1)
        reach = float(depth[in_dielectric].max()) if in_dielectric.any() else 0.0
        self._outer_dielectric = in_dielectric & (depth > 0.5 * reach)

    def wall_share(self, states):
        """(share, carrier): the largest fraction, over the quantized carrier
        types, of the quantized carriers in the outer half of the box's
        dielectric part ("electrons" or "holes")."""
        total = {"e": 0.0, "h": 0.0}
        outer = {"e": 0.0, "h": 0.0}
        for carrier, _v, _E, N, psi2 in self.populations(states):
            amount = self.weight * (psi2 @ N)
            total[carrier] += float(amount.sum())
            outer[carrier] += float(amount[self._outer_dielectric].sum())
        shares = [(outer[c] / total[c], "electrons" if c == "e" else "holes") for c in total if total[c] > 0]
        return max(shares, default=(0.0, "electrons"))

    def active_carriers(self, phi, gate_V, previous=(False, False)):
        """Which carriers are quantized: those whose classical sheet density
        in the box exceeds NEGLIGIBLE_SHEET_M2 (once on, they stay on for the
        rest of the solve) and whose material has band data for quantization
        (valley sets, hole bands). The others stay classical everywhere."""
        dens = next(d for d in self.p.semiconductor_densities(phi, gate_V) if d["role"] == "channel")
        ref = self.s.reference_area
        e = float(np.sum(dens["n"] * self._box_volume)) / ref
        h = float(np.sum(dens["p"] * self._box_volume)) / ref
        return (previous[0] or (bool(self.electrons.valleys) and e > NEGLIGIBLE_SHEET_M2),
                previous[1] or (bool(self.holes.valleys) and h > NEGLIGIBLE_SHEET_M2))

    def classical_weights(self, active):
        """Per-node weights of the classical electrons and holes."""
        hit = self._weights.get(active)
        if hit is None:
            n = self.s.size
            box = np.ones(n)
            box[self.nodes] = 1.0 - self.blend
            ones = np.ones(n)
            hit = (box if active[0] else ones, box if active[1] else ones)
            for a in hit:
                a.flags.writeable = False
            self._weights[active] = hit
        return hit

    def states(self, phi, active=(True, True)):
        ef = self.p.channel_fermi_J
        pb = phi[self.nodes]
        return (self.electrons.solve(pb, ef) if active[0] else [],
                self.holes.solve(pb, ef) if active[1] else [], tuple(active))

    def _stack(self, states):
        if not states:
            return np.zeros(0), np.zeros((self.nodes.size, 0)), np.zeros(0)
        E = np.concatenate([s[1] for s in states])
        psi2 = np.concatenate([s[2] for s in states], axis=1)
        dos = np.concatenate([s[3] for s in states])
        return E, psi2, dos

    def charge_model(self, states, phi_ref, frozen=False) -> QuantumCharge:
        """Trellakis density for the box: subband energies follow the local
        potential change phi - phi_ref (or stay put when `frozen`)."""
        e_states, h_states, active = states
        Ee, psi_e, dos_e = self._stack(e_states)
        Eh, psi_h, dos_h = self._stack(h_states)
        kT = self.kT
        ef = self.p.channel_fermi_J
        ref = phi_ref[self.nodes].copy()
        # constant parts of the exponents: electrons (E_F - E_j)/kT, holes (-E_F - lambda_j)/kT
        ae = (ef - Ee)[None, :] / kT
        ah = (-ef - Eh)[None, :] / kT
        qkT = Q_C / kT
        if frozen:
            n0 = (psi_e * (dos_e * kT * np.logaddexp(0.0, ae))).sum(axis=1)
            p0 = (psi_h * (dos_h * kT * np.logaddexp(0.0, ah))).sum(axis=1)
            rho0 = Q_C * (p0 - n0)
            zero = np.zeros_like(rho0)

            def density(phi_box):
                return rho0, zero
        else:
            ae1, ah1 = np.ascontiguousarray(ae[0]), np.ascontiguousarray(ah[0])
            psi_e, psi_h = np.ascontiguousarray(psi_e), np.ascontiguousarray(psi_h)
            dos_e, dos_h = np.ascontiguousarray(dos_e), np.ascontiguousarray(dos_h)

            def density(phi_box):
                shift = (phi_box - ref) * qkT
                n, dn = _sheet_sum(psi_e, ae1, dos_e, shift, 1.0)
                p, dp = _sheet_sum(psi_h, ah1, dos_h, shift, -1.0)
                return Q_C * kT * (p - n), Q_C * Q_C * (-dp - dn)
        wn, wp = self.classical_weights(active)
        return QuantumCharge(self.nodes, self.weight, wn, wp, density)

    def populations(self, states):
        """Per valley: (carrier, valley, E_J on the electron scale, N_m2 per
        subband, psi2)."""
        ef = self.p.channel_fermi_J
        kT = self.kT
        out = []
        e_states, h_states, _ = states
        for v, E, psi2, dos in e_states:
            out.append(("e", v, E, dos * kT * np.logaddexp(0.0, (ef - E) / kT), psi2))
        for v, E, psi2, dos in h_states:
            out.append(("h", v, -E, dos * kT * np.logaddexp(0.0, (-ef - E) / kT), psi2))
        return out


# --------------------------------------------------------------------------- preparation cache
@dataclass(eq=False)
class Prepared:
    """A structure with its Poisson problem and quantum operators, reusable
    across gate voltages (a sweep shares one mesh)."""

    structure: Structure
    poisson: Poisson
    quantum: _QuantumChannel | None
    statistics: str
    layer_names: tuple
    layer_materials: tuple


_CACHE: dict = {}


def prepare(case_or_structure, statistics: str = "fermi-dirac", quantum: bool = True) -> Prepared:
    """Build (or reuse) the mesh, Poisson problem and Schrödinger operators."""
    if isinstance(case_or_structure, Structure):
        s = case_or_structure
        key = (id(s), statistics, quantum)
        hit = _CACHE.get(key)
        if hit is not None and hit[0] is s:
            return hit[1]
    else:
        key = (id(case_or_structure), statistics, quantum)
        hit = _CACHE.get(key)
        if hit is not None and hit[0] is case_or_structure:
            return hit[1]
        s = structure_from_case(case_or_structure)
    P = Poisson(s, statistics)
    qc = _QuantumChannel(s, P) if quantum else None
    names = tuple(s.regions[k].name for k in s.layer_regions)
    mats = tuple(s.regions[k].material for k in s.layer_regions)
    prep = Prepared(s, P, qc, statistics, names, mats)
    if len(_CACHE) > 16:
        _CACHE.clear()
    _CACHE[key] = (case_or_structure, prep)
    return prep


class _Anderson:
    """Anderson mixing of a fixed-point iteration x <- x + r(x) (D. G. Anderson,
    J. ACM 12, 547 (1965); type II with unit mixing), restarted when the
    residual grows."""

    def __init__(self, depth: int):
        self.depth = depth
        self.x = []
        self.r = []

    def step(self, x, r):
        if self.r and np.abs(r).max() > np.abs(self.r[-1]).max():
            self.x, self.r = [], []
        self.x.append(x.copy())
        self.r.append(r.copy())
        if len(self.r) > self.depth + 1:
            self.x.pop(0)
            self.r.pop(0)
        if len(self.r) < 2:
            return x + r
        dR = np.diff(np.array(self.r), axis=0).T
        dX = np.diff(np.array(self.x), axis=0).T
        gamma, *_ = np.linalg.lstsq(dR, r, rcond=None)
        return x + r - (dX + dR) @ gamma


# --------------------------------------------------------------------------- solve
def solve(case, gate_V=None, quantum=True, statistics="fermi-dirac") -> Solution:
    """Self-consistent electrostatics of `case` at `gate_V` (default: the
    case's bias.gate_V). `quantum=False`: classical carriers everywhere;
    `statistics="boltzmann"` for Boltzmann carriers. Raises ConvergenceError
    when the solve does not converge, ComputationError when the quantized
    carriers collect at the quantum box's dielectric wall, CaseError when the
    case's mesh.depth_nm cuts off the depletion region (module docstring)."""
    if gate_V is None:
        gate_V = case.bias.gate_V
    try:
        gate_V = float(gate_V)
    except (TypeError, ValueError):
        raise ValueError(f"gate_V must be a number of volts, got {gate_V!r}") from None
    if not math.isfinite(gate_V):
        raise ValueError(f"gate_V must be finite, got {gate_V}")
    prep = prepare(case, statistics, bool(quantum))
    return solve_structure(prep, gate_V, quantum=bool(quantum))


def solve_structure(prep: Prepared, gate_V: float, quantum: bool = True, phi0=None,
                    tolerance_V: float = OUTER_TOLERANCE_V,
                    max_iterations: int = MAX_OUTER_ITERATIONS,
                    scheme: str = "predictor-corrector", relaxation: float = 0.3,
                    acceleration: bool = True) -> Solution:
    """Solve a prepared structure. `phi0`: initial potential (continuation).
    `scheme="under-relaxed"` (plain iteration phi <- phi + a (P[n(phi)] - phi),
    a = `relaxation`) exists as the baseline of the benchmarks.
    `acceleration`: Anderson mixing (depth ANDERSON_DEPTH) of the
    predictor–corrector iterates, reset whenever the residual grows."""
    P = prep.poisson
    s = prep.structure
    newton_total = 0
    if phi0 is None or not quantum:
        phi, rec = P.solve(gate_V, phi0)
        newton_total += rec.iterations
    else:
        phi = np.array(phi0, dtype=float)
    if not quantum:
        return _check_bulk_contact(prep, _solution(prep, gate_V, phi, None, rec, rec.iterations,
                                                   newton_total, False))
    qc = prep.quantum
    if qc is None:
        raise ValueError("this structure was prepared without quantum operators")
    history = []
    converged = False
    states = None
    it = 0
    active = (False, False)
    inner_tol = INNER_TOLERANCE_MAX_V
    mixer = _Anderson(ANDERSON_DEPTH)
    for it in range(1, max_iterations + 1):
        active = qc.active_carriers(phi, gate_V, active)
        states = qc.states(phi, active)
        phi_states = phi
        if scheme == "predictor-corrector":
            model = qc.charge_model(states, phi)
            new, rec = P.solve(gate_V, phi, model, tolerance_V=inner_tol, raise_on_failure=False)
        elif scheme == "under-relaxed":
            model = qc.charge_model(states, phi, frozen=True)
            target, rec = P.solve(gate_V, phi, model, tolerance_V=inner_tol, raise_on_failure=False)
            new = phi + relaxation * (target - phi)
        else:
            raise ValueError(f"scheme must be 'predictor-corrector' or 'under-relaxed', got {scheme!r}")
        newton_total += rec.iterations
        if not rec.converged:
            history.append(float("nan"))
            break
        residual = new - phi
        delta = float(np.abs(residual).max())
        history.append(delta)
        # inexact inner solves while the outer loop is far from converged
        inner_tol = min(max(INNER_FRACTION * delta, INNER_TOLERANCE_V), INNER_TOLERANCE_MAX_V)
        if delta <= tolerance_V:
            phi = new
            converged = True
            break
        if scheme == "predictor-corrector" and acceleration:
            phi = mixer.step(phi, residual)
        else:
            phi = new
    record = ConvergenceRecord(
        converged=converged, iterations=it, residual_history=tuple(history),
        message=("converged" if converged else
                 f"Schrödinger–Poisson did not reach {tolerance_V:g} V in {it} iterations"
                 + ("" if rec.converged else " (inner Newton failed)")),
        residual_unit="V", extra={"newton_iterations": newton_total, "scheme": scheme})
    if not converged:
        raise ConvergenceError(
            f"Schrödinger–Poisson at gate_V = {gate_V:g} V did not converge: residual history "
            f"{', '.join(f'{h:.2e}' for h in history[-5:])} V", record)
    # the last states (of a potential within tolerance_V of the result) are the
    # reported ones; the charge residual is that of the last Poisson solve
    sol = _solution(prep, gate_V, phi, states, record, it, newton_total, True, phi_states)
    share, carrier = qc.wall_share(states)
    if share > WALL_SHARE_LIMIT:
        layer = sol.layer_names[-1]
        band = "conduction" if carrier == "electrons" else "valence"
        raise ComputationError(
            f"Schrödinger–Poisson at gate_V = {gate_V:g} V: {share:.1%} of the quantized {carrier} "
            f"collect against the edge of the quantum box inside layer {layer!r} (field "
            f"{sol.layer_fields_MV_cm[-1]:+.1f} MV/cm at the channel): the dielectric's {band} band "
            f"falls below their subbands there, they would tunnel into the dielectric; the bound-state "
            f"channel model does not hold at this bias (a classical channel still applies: --classical "
            f"on the command line, quantum=False in the library)")
    return _check_bulk_contact(prep, sol)


def _check_bulk_contact(prep, sol):
    """The planar channel must end in neutral bulk: the electric flux reaching
    the bulk contact (phi = 0 held there) must be a negligible part of the
    semiconductor charge, else mesh.depth_nm cut off the depletion region."""
    s = prep.structure
    if s.bulk_node < 0:
        return sol
    phi = sol.potential_V
    flux_C_cm2 = float(s.coef[-1] * (phi[-2] - phi[-1])) * C_PER_M2_TO_C_PER_CM2
    floor_C_cm2 = Q_C * 1e9   # 1e9 charges per cm^2
    share = abs(flux_C_cm2) / max(abs(sol.semiconductor_charge_C_cm2), floor_C_cm2)
    if share > CONTACT_SHARE_LIMIT:
        depth_nm = (s.x_m[-1] - s.x_m[s.interface_node]) * M_TO_NM
        auto_nm = automatic_depth_m(s.channel.spec, s.temperature_K) * M_TO_NM
        raise CaseError(
            f"mesh.depth_nm: {depth_nm:.4g} nm of channel is too shallow at gate_V = {sol.gate_V:g} V "
            f"({share:.1%} of the semiconductor charge's field reaches the bulk contact); allowed: a "
            f"depth beyond the depletion region, e.g. the automatic {auto_nm:.0f} nm (leave it unset)")
    return sol


# --------------------------------------------------------------------------- outputs
def _solution(prep, gate_V, phi, states, record, iterations, newton_total, quantum,
              phi_states=None) -> Solution:
    s, P = prep.structure, prep.poisson
    n_nodes = s.size
    kT = P.kT
    regions = [s.regions[k] for k in s.node_region]
    chi = np.array([r.affinity_eV for r in regions])
    gap = np.array([r.gap_eV for r in regions])
    ec = -chi - phi
    ev = ec - gap
    sheet = s.reference_area
    vol_full = s.vol_left + s.vol_right

    # carrier densities at the nodes (per m^3) and sheet densities
    n = np.zeros(n_nodes)
    p = np.zeros(n_nodes)
    e_count = 0.0
    h_count = 0.0
    sc_charge = 0.0
    ch = s.channel
    qc = prep.quantum if quantum else None
    wn = wp = np.ones(n_nodes)
    if qc is not None:
        wn, wp = qc.classical_weights(states[2])
    dens = P.semiconductor_densities(phi, gate_V)
    p_bulk = 0.0
    for d in dens:
        nodes = d["nodes"]
        en, hp = (wn[nodes], wp[nodes]) if d["role"] == "channel" else (1.0, 1.0)
        n[nodes] += d["n"] * en
        p[nodes] += d["p"] * hp
        if d["role"] == "channel":
            e_count += float(np.sum(d["n"] * en * d["vol"]))
            h_count += float(np.sum(d["p"] * hp * d["vol"]))
            sc_charge += Q_C * float(np.sum(d["vol"] * (d["nd"] - d["na"])))
    # neutral majority density of the channel
    spec = ch.spec
    ec0 = -spec.affinity_eV * EV_TO_J
    n_bulk = float(stat.electron_density(ec0, P.channel_fermi_J, spec.conduction_dos_m3, P.T, P.statistics)[0])
    p_bulk = float(stat.hole_density(ec0 - spec.gap_eV * EV_TO_J, P.channel_fermi_J, spec.valence_dos_m3,
                                P.T, P.statistics)[0])
    subbands, wavefunctions, valleys_out = [], [], []
    if qc is not None:
        pops = qc.populations(states)
        nq = np.zeros(qc.nodes.size)
        pq = np.zeros(qc.nodes.size)
        for carrier, v, E, N, psi2 in pops:
            dens_q = psi2 @ N
            if carrier == "e":
                nq += dens_q
            else:
                pq += dens_q
            k = min(SUBBANDS_REPORTED, E.size)
            norm = _psi2_normalisation(s, qc.nodes, psi2[:, :k])
            for j in range(k):
                subbands.append((v.label, float(E[j] / EV_TO_J), float(N[j] * PER_M2_TO_PER_CM2)))
                col = np.zeros(n_nodes)
                col[qc.nodes] = psi2[:, j] * norm[j]
                wavefunctions.append(col)
                valleys_out.append(v.label)
        n[qc.nodes] += qc.blend * nq
        p[qc.nodes] += qc.blend * pq
        e_count += float(np.sum(qc.weight * nq))
        h_count += float(np.sum(qc.weight * pq))
    sc_charge += Q_C * (h_count - e_count)
    e_sheet = e_count / sheet
    h_sheet = h_count / sheet
    if spec.acceptors_m3 >= spec.donors_m3:
        minority, inv, maj_bulk, maj_count = "electrons", e_sheet, p_bulk, h_count
    else:
        minority, inv, maj_bulk, maj_count = "holes", h_sheet, n_bulk, e_count
    ch_nodes = ch.nodes
    majority_excess = (maj_count - maj_bulk * float(np.sum(ch.volume))) / sheet

    # centroid of the minority carriers from the dielectric/channel interface
    dist = s.channel_side_sign * (s.x_m - s.x_m[s.interface_node])
    carriers = n if minority == "electrons" else p
    # classical carriers fill the semiconductor part of a box, quantized ones the whole box
    wts = np.zeros(n_nodes)
    wts[ch_nodes] = carriers[ch_nodes] * ch.volume
    if qc is not None and states[2][0 if minority == "electrons" else 1]:
        wts[qc.nodes] = carriers[qc.nodes] * vol_full[qc.nodes]
    centroid = float(np.sum(wts * dist) / np.sum(wts)) * M_TO_NM if np.sum(wts) > 0 else float("nan")

    # interface traps, gate charge, residual
    q_it, _ = P.interface_trap_charge(phi[s.interface_node], gate_V)
    model = qc.charge_model(states, phi if phi_states is None else phi_states) if qc is not None else None
    Q, _ = P.charge(phi, gate_V, model)
    G, _ = P.gradient(phi, gate_V, model)
    free = P._free
    residual = float(np.abs(G[free]).max()) / sheet * C_PER_M2_TO_C_PER_CM2
    gsr = s.gate_semi
    q_total = float(Q.sum())
    if gsr is not None:
        q_gate_semi = float(np.sum(Q[gsr.nodes] - s.fixed_charge[gsr.nodes]))
        gate_charge = -(q_total - q_gate_semi)
    else:
        gate_charge = -q_total

    # layers, gate first
    fields, volts, cb, vb = [], [], [], []
    for k in s.layer_regions:
        R = s.regions[k]
        lo, hi = R.lo, R.hi
        if s.geometry == "planar":
            g_node, c_node = lo, hi
            e = -(phi[hi] - phi[hi - 1]) / (s.x_m[hi] - s.x_m[hi - 1])
        else:
            g_node, c_node = hi, lo
            r0, r1 = s.x_m[lo], s.x_m[lo + 1]
            e = (phi[lo + 1] - phi[lo]) / (r0 * math.log(r1 / r0))
        fields.append(float(e * V_PER_M_TO_MV_PER_CM))
        volts.append(float(phi[g_node] - phi[c_node]))
        cb.append((float(-R.affinity_eV - phi[g_node]), float(-R.affinity_eV - phi[c_node])))
        vb.append((float(-R.affinity_eV - R.gap_eV - phi[g_node]),
                   float(-R.affinity_eV - R.gap_eV - phi[c_node])))

    wf = np.array(wavefunctions).T if wavefunctions else np.zeros((n_nodes, 0))
    fermi_eV = P.channel_fermi_J / EV_TO_J
    return Solution(
        x_nm=_readonly(s.x_m * M_TO_NM), potential_V=_readonly(phi),
        conduction_band_eV=_readonly(ec), valence_band_eV=_readonly(ev),
        fermi_level_eV=float(fermi_eV),
        electron_density_cm3=_readonly(n * PER_M3_TO_PER_CM3),
        hole_density_cm3=_readonly(p * PER_M3_TO_PER_CM3),
        surface_potential_V=float(phi[s.interface_node]),
        semiconductor_charge_C_cm2=sc_charge / sheet * C_PER_M2_TO_C_PER_CM2,
        layer_fields_MV_cm=tuple(fields), subbands=tuple(subbands), iterations=int(iterations),
        gate_V=float(gate_V), quantum=bool(quantum), statistics=P.statistics, geometry=s.geometry,
        temperature_K=P.T, layer_names=prep.layer_names, layer_materials=prep.layer_materials,
        interfaces_nm=tuple(float(x * M_TO_NM) for x in s.interfaces_m),
        layer_voltages_V=tuple(volts), layer_conduction_band_eV=tuple(cb),
        layer_valence_band_eV=tuple(vb),
        gate_fermi_level_eV=float(fermi_eV - gate_V), flatband_V=float(P.flatband_V),
        inversion_charge_cm2=float(inv * PER_M2_TO_PER_CM2),
        majority_excess_cm2=float(majority_excess * PER_M2_TO_PER_CM2),
        electron_sheet_cm2=float(e_sheet * PER_M2_TO_PER_CM2),
        hole_sheet_cm2=float(h_sheet * PER_M2_TO_PER_CM2),
        gate_charge_C_cm2=gate_charge / sheet * C_PER_M2_TO_C_PER_CM2,
        interface_trap_charge_C_cm2=q_it / sheet * C_PER_M2_TO_C_PER_CM2,
        charge_centroid_nm=centroid, wavefunctions=_readonly(wf), subband_valleys=tuple(valleys_out),
        convergence=record, charge_residual=residual, newton_iterations=int(newton_total),
        minority_carrier=minority,
        electron_subband_dos_scale=float(qc.electrons.dos_factor) if qc is not None else float("nan"),
        hole_subband_dos_scale=float(qc.holes.dos_factor) if qc is not None else float("nan"),
    )


def _psi2_normalisation(s, nodes, psi2):
    """Factors making the trapezoid integral of |psi|^2 over x_nm equal to 1."""
    x = s.x_m[nodes] * M_TO_NM
    integral = np.trapezoid(psi2, x, axis=0)
    with np.errstate(divide="ignore"):
        return np.where(integral > 0, 1.0 / integral, 0.0)


_WARM_UP_CASE = """
[gate]
material = "Al"
[[layers]]
material = "SiO2"
thickness_nm = 3.0
[channel]
acceptors_cm3 = 1e17
"""


def warm_up() -> None:
    """Compile (or load from numba's cache) the kernels of one quantum solve.

    Called once per worker process by parameter studies, so no study point
    pays the compilation."""
    from solver.case import parse_case

    solve(parse_case(_WARM_UP_CASE, source="<warm-up>"), 1.0, quantum=True)
