"""The tunneling barrier of a case's dielectric stack at a bias.

Planar or coaxial (gate-all-around) stack, x from the gate electrode toward the
channel (as the contract's planar ``x_nm``; in a cylinder x runs inward, along
-r). Energies are in eV on one absolute scale whose zero is the channel Fermi
level; the gate Fermi level is then ``-gate_V``.

Electrostatics of the stack
---------------------------
The field in each dielectric follows from continuity of the displacement
D = eps0 eps_r E across every interface, with a jump D(x+) - D(x-) = sigma at a
sheet charge sigma (Gauss's law; e.g. Jackson, Classical Electrodynamics,
Sec. 4.4). A layer with a sheet charge inside (``charge_position`` strictly
between 0 and 1) is split there into two segments with different fields. The
voltage across the stack is the sum of E * t over the segments, so for a given
stack voltage

    D_0 = (eps0 V_stack - sum_j sigma_j X_j) / X,   X = sum_i t_i / eps_i,

with X_j the sum of t / eps from sheet j to the channel end.

Coaxial stack (geometry "cylindrical"): the channel of radius r_0 is inside,
the layers follow outward to the gate at r_N. Gauss's law gives
D(r) = lambda / (2 pi r) between sheets, so r D is constant there, jumps by
sigma r_c at a sheet of density sigma (per area at its own radius r_c; charge
per length sigma 2 pi r_c), and the potential goes as ln r inside each layer:
E_i(r) = V / [eps_i r sum_j ln(r_{j+1}/r_j) / eps_j] without sheets (physics-
data sheet Sec. 5.5; Jackson, Classical Electrodynamics). The planar formulas
hold with t/eps replaced by r_0 ln(r_out/r_in)/eps, D by the displacement
scaled to the channel surface r D / r_0, and sigma by sigma r_c / r_0; they
become the planar ones as r_0 -> infinity. A segment's field is reported at
both of its ends (``segment_field_MV_cm`` at the channel side,
``segment_field_gate_side_MV_cm`` at the gate side). Band edges come
from vacuum-level alignment through the electron affinities: E_c = E_vac - chi,
E_v = E_vac - chi - E_g (Robertson, EPJAP 28, 265 (2004) uses the same rule
where no direct offset is given).

The channel side
----------------
The band bending of the channel is the classical (Boltzmann, complete
ionization, no interface traps) surface-charge relation of Sze & Ng, Physics of
Semiconductor Devices, 3rd ed. (2007), Sec. 4.2,

    Q_s = -sgn(psi_s) sqrt(2 eps_s kT) sqrt(p0 (e^-u + u - 1) + n0 (e^u - u - 1)),

u = q psi_s / kT, with the displacement at the channel interface
D_L = -(Q_s + Q_interface). The gate voltage is then
V_G = phi_ms + psi_s + V_stack. This is an estimate of the surface state that
lets a field or gate-voltage sweep run without the self-consistent solve; the
self-consistent band profile feeds the same Barrier through
`state_from_solution` or `barrier_from_profile`.

In a cylinder the channel is a shell (r_core < r < r_0; r_core = 0 for a solid
channel; an uncharged core dielectric carries no displacement, so the field
vanishes at r_core). The same classical model (Boltzmann carriers, complete
ionization, no interface traps) is solved there without the planar closed
form: the radial Poisson equation (1/r) d/dr (r eps_s dpsi/dr) = -rho(psi) with
zero flux at r_core and the flux r_0 Q_s at the surface, finite volumes on a
mesh graded toward the surface (0.002 nm there), Newton with a numba kernel.
It is exact for the model (thin shells fully deplete, which the planar
relation cannot describe) and agrees with the classical Boltzmann solve of
`solver.solve` to its mesh error (2e-5 in the layer fields on the demo cell;
tests/test_stack_barrier.py). Q_s is per area of the channel surface. Like the
planar relation it is non-degenerate: in strong inversion the Fermi–Dirac
solve puts the surface potential higher (by ~0.1 V at 12 V on the demo
cylinder, layer fields within 1 %); where that matters, build the state from
a solution (`state_from_solution`).

Orientation of the Barrier
--------------------------
Every Barrier built here is listed in the direction of the carrier flow: the
left lead is the emitter, the right lead the collector, so the Tsu–Esaki
current of the Barrier is positive for emission. For channel injection the
layers therefore appear channel-first (reversed with respect to x).
Holes are handled in the hole picture: the hole energy is minus the electron
energy, the "band edge" of a layer for holes is -E_v, and the hole Fermi level
of a lead is minus its electron Fermi level.

Coaxial barriers: the potential is ln r inside each layer, so each segment is
cut into linear pieces, equal steps in ln r (the chord error of ln r is then
the same in every piece), each treated exactly by the Airy kernel and shifted
by the mean of the curve above its chord (the least-squares line of the piece;
this removes the leading, one-signed error of the chords). The count per
segment is the smallest n with |drop| ln(r_out/r_in) / (8 n^2) <= ``curvature_tol_eV``
(the chord's largest deviation from ln r); the default gives the current to
~1e-4 relative (convergence test in tests/test_stack_barrier.py). The
transmission is the 1-D one along the radius (angular momentum l = 0 of the
transverse motion neglected) with the planar Tsu–Esaki supply of the emitter:
the standard approximation while the radii are much larger than the carriers'
wavelength (~1 nm). The current density is per area of the emitting surface
(the channel surface for channel emission, the gate surface for gate
emission); per area at radius r it scales as r_emitter / r. The image force
uses the planar image term (distance from the emitter << radius).

Metal leads are free-electron bands with mass 1 m0 (a documented assumption,
``metal_mass`` changes it) whose band bottom lies ``metal_fermi_depth_eV``
below the Fermi level (5 eV by default, assumed; the current depends on it only
through the lead's wave vector at the interface).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Sequence

import numba
import numpy as np

from solver.units import (
    BOLTZMANN_EV_K,
    EPSILON0_F_M,
    M_TO_NM,
    NM_TO_M,
    PER_CM2_TO_PER_M2,
    PER_CM3_TO_PER_M3,
    Q_C,
    V_PER_M_TO_MV_PER_CM,
    MV_PER_CM_TO_V_PER_M,
)

CARRIERS = ("electron", "hole")
EMITTERS = ("channel", "gate")
THROUGH = ("stack", "injecting-layer")

# q / (16 pi eps0) in eV nm: the image-force energy at distance x (nm) from a
# perfectly conducting plane is -IMAGE_EV_NM / (eps_inf x). scipy.constants values.
IMAGE_EV_NM = Q_C / (16.0 * math.pi * EPSILON0_F_M) * M_TO_NM

DEFAULT_METAL_FERMI_DEPTH_EV = 5.0  # assumed: depth of a free-electron metal's band bottom below E_F
DEFAULT_METAL_MASS = 1.0  # free-electron metal, common practice


# --------------------------------------------------------------------------- data


@dataclass(frozen=True)
class StackData:
    """Plain numbers of a planar stack, taken from a Case once (trade units).

    Layers are listed from the gate to the channel. Charges are sheet densities
    in q per cm^2 (positive = positive charge) at ``charge_position`` (0 gate
    side .. 1 channel side) inside each layer. ``channel_*`` describe the
    semiconductor channel at ``temperature_K``; ``gate_*`` the gate electrode.
    """

    names: tuple[str, ...]
    thickness_nm: tuple[float, ...]
    permittivity: tuple[float, ...]
    optical_permittivity: tuple[float, ...]
    affinity_eV: tuple[float, ...]
    band_gap_eV: tuple[float, ...]
    electron_mass: tuple[float, ...]
    hole_mass: tuple[float, ...]
    charge_cm2: tuple[float, ...]
    charge_position: tuple[float, ...]
    temperature_K: float
    gate_kind: str  # "metal" | "semiconductor"
    gate_work_function_eV: float
    gate_affinity_eV: float | None  # semiconductor gate only
    gate_band_gap_eV: float | None
    gate_electron_mass: float | None
    gate_hole_mass: float | None
    channel_permittivity: float
    channel_affinity_eV: float
    channel_band_gap_eV: float
    channel_conduction_dos_cm3: float
    channel_valence_dos_cm3: float
    channel_acceptors_cm3: float
    channel_donors_cm3: float
    channel_interface_charge_cm2: float
    channel_electron_mass: float
    channel_hole_mass: float
    geometry: str = "planar"  # "planar" | "cylindrical"
    channel_radius_nm: float = math.inf  # cylindrical: outer radius of the channel (the stack starts there)
    core_radius_nm: float = 0.0  # cylindrical: inner radius of the channel shell (0 = solid)

    def __post_init__(self):
        n = len(self.thickness_nm)
        for name in ("names", "thickness_nm", "permittivity", "optical_permittivity",
                     "affinity_eV", "band_gap_eV", "electron_mass", "hole_mass",
                     "charge_cm2", "charge_position"):
            value = tuple(getattr(self, name))
            if name != "names":
                value = tuple(float(v) for v in value)
            if len(value) != n:
                raise ValueError(f"StackData: {name} has {len(value)} entries, expected {n} (one per layer)")
            object.__setattr__(self, name, value)
        if n == 0:
            raise ValueError("StackData: the stack has no dielectric layers")
        for i in range(n):
            for name in ("thickness_nm", "permittivity", "electron_mass", "hole_mass", "band_gap_eV"):
                v = getattr(self, name)[i]
                if not v > 0 or not math.isfinite(v):
                    raise ValueError(f"layer {i}: {name} must be a finite number > 0, got {v}")
            p = self.charge_position[i]
            if not 0.0 <= p <= 1.0:
                raise ValueError(f"layer {i}: charge_position must lie in [0, 1], got {p}")
            if not math.isfinite(self.charge_cm2[i]) or not math.isfinite(self.affinity_eV[i]):
                raise ValueError(f"layer {i}: charge_cm2 and electron_affinity_eV must be finite")
        if self.gate_kind not in ("metal", "semiconductor"):
            raise ValueError(f"gate kind must be 'metal' or 'semiconductor', got {self.gate_kind!r}")
        if self.gate_kind == "semiconductor":
            for name in ("gate_affinity_eV", "gate_band_gap_eV", "gate_electron_mass", "gate_hole_mass"):
                v = getattr(self, name)
                if v is None or not math.isfinite(v) or (name != "gate_affinity_eV" and not v > 0):
                    raise ValueError(f"{name} must be a finite number (> 0 for a gap or mass) for a "
                                     f"semiconductor gate, got {v!r}")
        for name in ("temperature_K", "channel_permittivity", "channel_band_gap_eV", "channel_conduction_dos_cm3",
                     "channel_valence_dos_cm3", "channel_electron_mass", "channel_hole_mass"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise ValueError(f"{name} must be a finite number > 0, got {v!r}")
        for name in ("channel_acceptors_cm3", "channel_donors_cm3"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v >= 0):
                raise ValueError(f"{name} must be a finite number >= 0, got {v!r}")
        if self.geometry not in ("planar", "cylindrical"):
            raise ValueError(f"geometry must be 'planar' or 'cylindrical', got {self.geometry!r}")
        object.__setattr__(self, "channel_radius_nm", float(self.channel_radius_nm))
        object.__setattr__(self, "core_radius_nm", float(self.core_radius_nm))
        if self.geometry == "cylindrical":
            r0, rc = self.channel_radius_nm, self.core_radius_nm
            if not (math.isfinite(r0) and r0 > 0):
                raise ValueError(f"channel_radius_nm must be a finite number > 0 for a cylinder, got {r0}")
            if not (math.isfinite(rc) and 0.0 <= rc < r0):
                raise ValueError(f"core_radius_nm must lie in [0, channel_radius_nm = {r0:g}), got {rc}")

    @property
    def count(self) -> int:
        return len(self.thickness_nm)

    @property
    def cylindrical(self) -> bool:
        return self.geometry == "cylindrical"

    @property
    def radii_nm(self) -> tuple[float, ...]:
        """Cylinder: radius of every layer boundary, gate first (count + 1 values,
        the last is the channel radius). Raises ValueError for a planar stack."""
        if not self.cylindrical:
            raise ValueError("radii_nm: a planar stack has no radii")
        r = self.channel_radius_nm + np.concatenate(([0.0], np.cumsum(self.thickness_nm[::-1])))
        return tuple(float(v) for v in r[::-1])

    def with_thickness(self, index: int, thickness_nm: float) -> "StackData":
        t = list(self.thickness_nm)
        t[index] = float(thickness_nm)
        return replace(self, thickness_nm=tuple(t))


def stack_data(case) -> StackData:
    """The plain numbers of ``case``'s stack, planar or cylindrical (see `StackData`)."""
    from solver.errors import CaseError

    geometry = getattr(case, "geometry", None)
    kind = getattr(geometry, "kind", "planar") if geometry is not None else "planar"
    if kind not in ("planar", "cylindrical"):
        raise CaseError(f"geometry.kind: {kind!r} is not supported; allowed 'planar', 'cylindrical'")
    geo = dict(geometry="planar")
    if kind == "cylindrical":
        geo = dict(geometry="cylindrical", channel_radius_nm=float(geometry.channel_radius_nm),
                   core_radius_nm=float(geometry.core_radius_nm or 0.0))
    T = float(case.temperature_K)
    layers = tuple(case.layers)
    if not layers:
        raise CaseError("layers: the case has no dielectric layers; at least one is required")
    mats = [layer.material for layer in layers]
    ch = case.channel
    sc = ch.material
    gate = case.gate
    gate_kind = getattr(gate, "kind", "metal")
    g_aff = g_gap = g_me = g_mh = None
    if gate_kind == "semiconductor":
        gm = gate.material
        g_aff = float(gm.electron_affinity_eV)
        g_gap = float(_call(gm.band_gap_eV, T))
        g_me = float(getattr(gm, "tunnel_mass", None) or gm.transverse_mass)
        g_mh = float(getattr(gm, "heavy_hole_mass", None) or gm.hole_dos_mass)
    return StackData(
        names=tuple(str(layer.name) for layer in layers),
        thickness_nm=tuple(layer.thickness_nm for layer in layers),
        permittivity=tuple(m.relative_permittivity for m in mats),
        optical_permittivity=tuple(math.nan if m.optical_permittivity is None
                                   else m.optical_permittivity for m in mats),
        affinity_eV=tuple(m.electron_affinity_eV for m in mats),
        band_gap_eV=tuple(m.band_gap_eV for m in mats),
        electron_mass=tuple(m.electron_mass for m in mats),
        hole_mass=tuple(m.hole_mass for m in mats),
        charge_cm2=tuple(getattr(layer, "charge_cm2", 0.0) or 0.0 for layer in layers),
        charge_position=tuple(getattr(layer, "charge_position", 0.5) for layer in layers),
        temperature_K=T,
        gate_kind=gate_kind,
        gate_work_function_eV=float(gate.work_function_eV),
        gate_affinity_eV=g_aff,
        gate_band_gap_eV=g_gap,
        gate_electron_mass=g_me,
        gate_hole_mass=g_mh,
        channel_permittivity=float(sc.relative_permittivity),
        channel_affinity_eV=float(sc.electron_affinity_eV),
        channel_band_gap_eV=float(_call(sc.band_gap_eV, T)),
        channel_conduction_dos_cm3=float(_call(sc.conduction_dos_cm3, T)),
        channel_valence_dos_cm3=float(_call(sc.valence_dos_cm3, T)),
        channel_acceptors_cm3=float(ch.acceptors_cm3 or 0.0),
        channel_donors_cm3=float(ch.donors_cm3 or 0.0),
        channel_interface_charge_cm2=float(getattr(ch, "interface_charge_cm2", 0.0) or 0.0),
        # One isotropic band per carrier: the material's lead (tunnel) mass for
        # electrons, the heavy-hole mass for holes. Which Si mass supplies the
        # transverse momentum is debated (Weinberg, J. Appl. Phys. 53, 5052 (1982));
        # `stack_barrier(emitter_mass=...)` overrides it.
        channel_electron_mass=float(getattr(sc, "tunnel_mass", None) or sc.transverse_mass),
        channel_hole_mass=float(getattr(sc, "heavy_hole_mass", None) or sc.hole_dos_mass),
        **geo,
    )


def _call(value, T):
    return value(T) if callable(value) else value


# ------------------------------------------------------------------ electrostatics


@dataclass(frozen=True)
class _Segments:
    """Fields of the stack's segments (gate first) for one stack voltage, SI."""

    layer: tuple[int, ...]
    thickness_nm: np.ndarray
    radius_out_nm: np.ndarray | None  # gate-side radius of each segment (cylinder), else None
    radius_in_nm: np.ndarray | None  # channel-side radius
    field_in: np.ndarray  # V/m along +x at the channel-side end
    field_out: np.ndarray  # V/m along +x at the gate-side end
    displacement_in: np.ndarray  # C/m^2 at the channel-side end
    drop_V: np.ndarray  # potential of the gate side minus the channel side, per segment


def _split(t, sigma, pos):
    """Segments of the layers (a sheet strictly inside a layer splits it) and the
    sheet density at each segment's channel-side end."""
    seg_layer, seg_t, sheet_after = [], [], []
    for i in range(t.size):
        p = pos[i]
        if sigma[i] != 0.0 and 0.0 < p < 1.0:
            seg_layer += [i, i]
            seg_t += [p * t[i], (1.0 - p) * t[i]]
            sheet_after += [sigma[i], 0.0]
        elif sigma[i] != 0.0 and p == 0.0:
            # sheet at the layer's gate-side face: it sits before this layer
            # (on the gate electrode itself it does not change the fields inside)
            if seg_layer:
                sheet_after[-1] += sigma[i]
            seg_layer.append(i)
            seg_t.append(t[i])
            sheet_after.append(0.0)
        else:
            seg_layer.append(i)
            seg_t.append(t[i])
            sheet_after.append(sigma[i] if p == 1.0 else 0.0)
    return seg_layer, np.array(seg_t), np.array(sheet_after)


def _segments(thickness_nm, permittivity, charge_cm2, charge_position, stack_V,
              channel_radius_nm=None) -> _Segments:
    t = np.asarray(thickness_nm, float)
    eps = np.asarray(permittivity, float)
    sigma = np.asarray(charge_cm2, float) * PER_CM2_TO_PER_M2 * Q_C
    pos = np.asarray(charge_position, float)
    seg_layer, seg_t_nm, after = _split(t, sigma, pos)
    seg_eps = eps[np.array(seg_layer)]
    if channel_radius_nm is None:
        r_out = r_in = None
        w = seg_t_nm * NM_TO_M / seg_eps  # t / eps per segment
        sheets = after
    else:
        r0 = float(channel_radius_nm)
        bounds = r0 + np.concatenate(([0.0], np.cumsum(seg_t_nm[::-1])))[::-1]  # gate first
        r_out, r_in = bounds[:-1], bounds[1:]
        # r_0 ln(r_out / r_in) / eps; log1p keeps it exact for r_0 >> t
        w = r0 * NM_TO_M * np.log1p(seg_t_nm / r_in) / seg_eps
        sheets = after * r_in / r0  # a sheet at r_in carries sigma r_in per length / (2 pi)
    # (scaled) D in segment k = D_0 + sum of the sheets before it
    before = np.concatenate(([0.0], np.cumsum(sheets)[:-1]))
    d0 = (EPSILON0_F_M * stack_V - np.sum(before * w)) / np.sum(w)
    d = d0 + before
    if r_in is None:
        e = d / (EPSILON0_F_M * seg_eps)
        e_in = e_out = e
        d_in = d
    else:
        d_in = d * channel_radius_nm / r_in
        e_in = d_in / (EPSILON0_F_M * seg_eps)
        e_out = d * channel_radius_nm / r_out / (EPSILON0_F_M * seg_eps)
    return _Segments(tuple(seg_layer), seg_t_nm, r_out, r_in, e_in, e_out, d_in,
                     d * w / EPSILON0_F_M)


def _data_segments(data: StackData, stack_V: float) -> _Segments:
    return _segments(data.thickness_nm, data.permittivity, data.charge_cm2, data.charge_position,
                     stack_V, data.channel_radius_nm if data.cylindrical else None)


def stack_fields(thickness_nm: Sequence[float], permittivity: Sequence[float],
                 charge_cm2: Sequence[float], charge_position: Sequence[float],
                 stack_V: float, *, channel_radius_nm: float | None = None):
    """Fields of a planar (or coaxial) stack with sheet charges for a voltage across it.

    Parameters are per layer, gate first; ``stack_V`` = potential of the gate
    side minus potential of the channel side (V). Returns
    ``(segment_layer, segment_thickness_nm, segment_field_V_m, displacement_C_m2)``
    where the field is along +x (gate -> channel) and ``displacement_C_m2`` is
    D in each segment. A layer whose sheet charge sits strictly inside it gives
    two segments. ``channel_radius_nm``: a coaxial stack around a channel of
    that radius (layers outward from it, the last layer at the channel); field
    and displacement are then those at each segment's channel-side end (see the
    module docstring; sheet densities per area at their own radius).
    """
    seg = _segments(thickness_nm, permittivity, charge_cm2, charge_position, stack_V, channel_radius_nm)
    return seg.layer, tuple(float(v) for v in seg.thickness_nm), seg.field_in, seg.displacement_in


def _bulk_channel(data: StackData):
    """Bulk carrier densities (m^-3), kT (eV) and E_c - E_F in the bulk (eV)."""
    kT = BOLTZMANN_EV_K * data.temperature_K
    nc = data.channel_conduction_dos_cm3 * PER_CM3_TO_PER_M3
    nv = data.channel_valence_dos_cm3 * PER_CM3_TO_PER_M3
    # n_i implied by the same (Nc, Nv, Eg) set, never mixed with a measured value
    ni = math.sqrt(nc * nv) * math.exp(-data.channel_band_gap_eV / (2.0 * kT))
    net = (data.channel_donors_cm3 - data.channel_acceptors_cm3) * PER_CM3_TO_PER_M3
    half = 0.5 * abs(net)
    major = half + math.sqrt(half * half + ni * ni)
    minor = ni * ni / major
    n0, p0 = (major, minor) if net >= 0 else (minor, major)
    if n0 >= p0:
        ec_minus_ef = kT * math.log(nc / n0)
    else:
        ec_minus_ef = data.channel_band_gap_eV - kT * math.log(nv / p0)
    return n0, p0, kT, ec_minus_ef


def surface_charge_C_m2(data: StackData, psi_V):
    """Classical semiconductor charge per area (C/m^2) at band bending psi_V
    (Sze & Ng 2007, Sec. 4.2; positive psi bends the bands down)."""
    n0, p0, kT, _ = _bulk_channel(data)
    u = np.asarray(psi_V, float) / kT
    eps_s = data.channel_permittivity * EPSILON0_F_M
    # p0 (e^-u - 1 + u) + n0 (e^u - 1 - u); the exponentials taken with the densities' logs so a
    # tiny minority density times a huge exponential neither overflows nor warns
    with np.errstate(over="ignore"):
        ep = np.where(-u > 40.0, np.exp(math.log(p0) - u) - p0, p0 * np.expm1(-u)) if p0 > 0 else 0.0
        en = np.where(u > 40.0, np.exp(math.log(n0) + u) - n0, n0 * np.expm1(u)) if n0 > 0 else 0.0
    g = ep + p0 * u + en - n0 * u
    return -np.sign(u) * np.sqrt(2.0 * eps_s * kT * Q_C * np.maximum(g, 0.0))


def _surface_potential(data: StackData, displacement_C_m2: float) -> float:
    """Band bending for a displacement D_L (C/m^2) in the dielectric at the channel."""
    from scipy.optimize import brentq

    target = -(displacement_C_m2 + data.channel_interface_charge_cm2 * PER_CM2_TO_PER_M2 * Q_C)
    if data.cylindrical:
        return float(shell_potential(data, target)[1][-1])
    f = lambda psi: float(surface_charge_C_m2(data, psi)) - target  # noqa: E731, decreasing in psi
    lo, hi = -1.0, 1.0
    while f(lo) < 0.0:
        lo *= 2.0
        if lo < -64:
            raise ValueError(f"surface potential: no bracket for a channel charge of {target:g} C/m^2")
    while f(hi) > 0.0:
        hi *= 2.0
        if hi > 64:
            raise ValueError(f"surface potential: no bracket for a channel charge of {target:g} C/m^2")
    return float(brentq(f, lo, hi, xtol=1e-13, rtol=1e-14, maxiter=200))


# ------------------------------------------------------- the channel shell of a cylinder

SHELL_SURFACE_SPACING_NM = 0.002  # first mesh step at the channel surface
SHELL_GROWTH = 1.1  # growth of the steps inward
SHELL_MAX_SPACING_NM = 0.5  # largest step within SHELL_DENSE_DEPTH_NM of the surface
SHELL_DENSE_DEPTH_NM = 25.0  # deeper, steps grow as 2 % of the depth (the neutral interior)
SHELL_TOLERANCE_V = 1e-11  # Newton: largest potential update at convergence
SHELL_MAX_ITERATIONS = 400


def shell_mesh_nm(channel_radius_nm: float, core_radius_nm: float = 0.0) -> np.ndarray:
    """Nodes (nm, increasing) of the channel shell core_radius .. channel_radius,
    graded toward the surface (see the SHELL_* constants)."""
    r0, rc = float(channel_radius_nm), float(core_radius_nm)
    depth = [0.0]
    h = SHELL_SURFACE_SPACING_NM
    span = r0 - rc
    while depth[-1] < span:
        d = depth[-1]
        cap = SHELL_MAX_SPACING_NM if d < SHELL_DENSE_DEPTH_NM else max(SHELL_MAX_SPACING_NM, 0.02 * d)
        h = min(h * SHELL_GROWTH, cap) if len(depth) > 1 else h
        depth.append(d + h)
    depth[-1] = span
    if len(depth) > 2 and depth[-1] - depth[-2] < 0.3 * (depth[-2] - depth[-3]):
        del depth[-2]  # no sliver next to the inner boundary
    return (r0 - np.array(depth))[::-1]


@numba.njit(cache=True)
def _shell_newton(r, cond, vol, p0, n0, kT, eps_s, surface_flux, psi, tol, max_iter):
    """Newton for the classical radial Poisson equation of a channel shell.

    Finite volumes per radian: box i holds the charge vol[i] rho(psi_i)
    (rho = q [p0 (e^-u - 1) - n0 (e^u - 1)], u = psi/kT, so that psi = 0 is
    the neutral channel); the flux r eps_s E_r between nodes i and i+1 is
    -eps_s cond[i] (psi_{i+1} - psi_i) (cond = 1 / ln(r_{i+1}/r_i), exact for a
    charge-free interval); zero flux at the inner boundary, ``surface_flux``
    (= r_0 Q_s) at the outer one. Updates are damped per node to
    Delta / (1 + |Delta| / (4 kT)). Returns (iterations, last update); ``psi``
    is updated in place."""
    n = r.size
    diag = np.empty(n)
    lower = np.empty(n)
    rhs = np.empty(n)
    cp = np.empty(n)
    dp = np.empty(n)
    q = 1.602176634e-19
    step = 1e300
    it = 0
    while it < max_iter:
        it += 1
        for i in range(n):
            u = psi[i] / kT
            if u > 300.0:
                u = 300.0
            elif u < -300.0:
                u = -300.0
            ep = math.exp(u)
            em = math.exp(-u)
            rho = q * (p0 * (em - 1.0) - n0 * (ep - 1.0))
            drho = -q * (p0 * em + n0 * ep) / kT
            f = -vol[i] * rho
            dd = -vol[i] * drho
            if i > 0:
                f += eps_s * cond[i - 1] * (psi[i] - psi[i - 1])
                dd += eps_s * cond[i - 1]
            if i < n - 1:
                f -= eps_s * cond[i] * (psi[i + 1] - psi[i])
                dd += eps_s * cond[i]
            else:
                f += surface_flux
            diag[i] = dd
            rhs[i] = -f
            lower[i] = -eps_s * cond[i - 1] if i > 0 else 0.0
        # Thomas algorithm, symmetric tridiagonal (upper[i] = lower[i + 1])
        cp[0] = (lower[1] if n > 1 else 0.0) / diag[0]
        dp[0] = rhs[0] / diag[0]
        for i in range(1, n):
            m = diag[i] - lower[i] * cp[i - 1]
            cp[i] = (lower[i + 1] / m) if i < n - 1 else 0.0
            dp[i] = (rhs[i] - lower[i] * dp[i - 1]) / m
        step = 0.0
        for i in range(n - 1, -1, -1):
            delta = dp[i] - (cp[i] * dp[i + 1] if i < n - 1 else 0.0)
            dp[i] = delta
            a = abs(delta)
            if a > step:
                step = a
            psi[i] += delta / (1.0 + a / (4.0 * kT))
        if step < tol:
            break
    return it, step


_SHELL_CACHE: dict = {}  # (r0, rc) -> (r, cond, vol, last psi); meshes and a warm start per geometry


def shell_potential(data: StackData, surface_charge_C_m2: float):
    """Classical potential of a cylinder's channel shell for a semiconductor
    charge ``surface_charge_C_m2`` (per area of the channel surface; Q_s < 0 for
    depletion/inversion of p-type). Returns ``(r_nm, psi_V)`` (the last value is
    the surface potential). Raises ConvergenceError if Newton does not converge.
    """
    from solver.errors import ConvergenceError, ConvergenceRecord

    if not data.cylindrical:
        raise ValueError("shell_potential: the stack is planar")
    key = (data.channel_radius_nm, data.core_radius_nm)
    entry = _SHELL_CACHE.get(key)
    if entry is None:
        r_nm = shell_mesh_nm(*key)
        r = r_nm * NM_TO_M
        if r[0] == 0.0:  # solid channel: the first interval from the axis
            cond = np.empty(r.size - 1)
            cond[1:] = 1.0 / np.log(r[2:] / r[1:-1])
            cond[0] = 0.5 * (r[0] + r[1]) / (r[1] - r[0])
        else:
            cond = 1.0 / np.log(r[1:] / r[:-1])
        half = np.concatenate(([r[0]], 0.5 * (r[1:] + r[:-1]), [r[-1]]))
        vol = 0.5 * (half[1:] ** 2 - half[:-1] ** 2)
        entry = [r_nm, cond, vol, np.zeros(r.size)]
        if len(_SHELL_CACHE) > 64:
            _SHELL_CACHE.clear()
        _SHELL_CACHE[key] = entry
    r_nm, cond, vol, last = entry
    n0, p0, kT, _ = _bulk_channel(data)
    eps_s = data.channel_permittivity * EPSILON0_F_M
    flux = data.channel_radius_nm * NM_TO_M * float(surface_charge_C_m2)
    psi = last.copy()
    it, step = _shell_newton(r_nm * NM_TO_M, cond, vol, p0, n0, kT, eps_s, flux, psi,
                             SHELL_TOLERANCE_V, SHELL_MAX_ITERATIONS)
    if not step < SHELL_TOLERANCE_V:
        psi = np.zeros(r_nm.size)  # once more from the neutral channel
        it2, step = _shell_newton(r_nm * NM_TO_M, cond, vol, p0, n0, kT, eps_s, flux, psi,
                                  SHELL_TOLERANCE_V, SHELL_MAX_ITERATIONS)
        it += it2
    if not step < SHELL_TOLERANCE_V or not np.all(np.isfinite(psi)):
        record = ConvergenceRecord(converged=False, iterations=int(it), residual_history=(float(step),),
                                   message="classical channel-shell Poisson (Newton)", residual_unit="V")
        raise ConvergenceError(f"channel shell potential did not converge for Q_s = "
                               f"{surface_charge_C_m2:g} C/m^2 (last update {step:.3g} V)", record)
    entry[3] = psi
    return r_nm, psi


@dataclass(frozen=True)
class StackState:
    """The electrostatic state of the stack at one bias.

    Energies are in eV with the channel Fermi level at 0. Segments are listed
    from the gate to the channel; ``vacuum_level_eV`` has one entry per segment
    boundary (segments + 1). Fields are along +x (gate -> channel): positive
    when the gate is the more positive electrode. ``segment_field_MV_cm`` is
    at each segment's channel-side end, ``segment_field_gate_side_MV_cm`` at its
    gate-side end (equal in a planar stack; in a cylinder the field goes as 1/r
    and the vacuum level as ln r in between). ``segment_radius_nm``: the radii
    of the segment boundaries, gate first (cylinder; empty for a planar stack).
    """

    stack_V: float
    gate_V: float
    surface_potential_V: float
    segment_layer: tuple[int, ...]
    segment_thickness_nm: tuple[float, ...]
    segment_field_MV_cm: tuple[float, ...]
    layer_fields_MV_cm: tuple[float, ...]  # per layer, at its channel-side edge
    vacuum_level_eV: tuple[float, ...]
    channel_conduction_eV: float  # channel band edges at the surface
    channel_valence_eV: float
    segment_field_gate_side_MV_cm: tuple[float, ...] = ()
    segment_radius_nm: tuple[float, ...] = ()

    def __post_init__(self):
        if not self.segment_field_gate_side_MV_cm:
            object.__setattr__(self, "segment_field_gate_side_MV_cm", tuple(self.segment_field_MV_cm))

    @property
    def cylindrical(self) -> bool:
        return bool(self.segment_radius_nm)

    @property
    def gate_fermi_eV(self) -> float:
        return -self.gate_V

    @property
    def segment_x_nm(self) -> np.ndarray:
        return np.concatenate(([0.0], np.cumsum(self.segment_thickness_nm)))

    def interface_field_MV_cm(self, side: str) -> float:
        """Signed field along +x at the stack's gate-side face (``side="gate"``)
        or at its channel-side face (``"channel"``): the injecting interface."""
        _check_choice("side", side, EMITTERS)
        return float(self.segment_field_gate_side_MV_cm[0] if side == "gate" else self.segment_field_MV_cm[-1])


def stack_state(data: StackData, *, stack_V: float | None = None, gate_V: float | None = None,
                field_MV_cm: float | None = None, field_layer: int = -1,
                field_side: str = "channel") -> StackState:
    """Electrostatic state for exactly one of: the voltage across the stack
    (``stack_V``, gate side minus channel side), the gate voltage (``gate_V``,
    against the channel bulk), or the field along +x in layer ``field_layer``
    (``field_MV_cm``) at its ``field_side`` = "gate" or "channel" edge (the
    edge matters when a sheet charge splits the layer or in a cylinder)."""
    given = [v is not None for v in (stack_V, gate_V, field_MV_cm)]
    if sum(given) != 1:
        raise ValueError("stack_state: give exactly one of stack_V, gate_V, field_MV_cm")
    _check_choice("field_side", field_side, EMITTERS)
    _, _, kT, ec_minus_ef = _bulk_channel(data)
    phi_s = data.channel_affinity_eV + ec_minus_ef  # channel work function, eV
    phi_ms = data.gate_work_function_eV - phi_s
    if field_MV_cm is not None:
        n = data.count
        if not -n <= field_layer < n:
            raise ValueError(f"stack_state: field_layer {field_layer} out of range for {n} layers")
        layer = field_layer % n
        # fields are linear in the stack voltage: E = a V + b per segment
        s0, s1 = _data_segments(data, 0.0), _data_segments(data, 1.0)
        idx = [k for k, li in enumerate(s0.layer) if li == layer]
        if field_side == "gate":
            k, e0, e1 = idx[0], s0.field_out, s1.field_out
        else:
            k, e0, e1 = idx[-1], s0.field_in, s1.field_in
        stack_V = (field_MV_cm * MV_PER_CM_TO_V_PER_M - e0[k]) / (e1[k] - e0[k])
    if gate_V is not None:
        from scipy.optimize import brentq

        def excess(v_stack):
            st = _state_from_stack(data, v_stack, phi_ms, ec_minus_ef)
            return st.gate_V - gate_V

        # V_G(V_stack) is increasing; bracket around V_G - phi_ms
        guess = gate_V - phi_ms
        lo, hi = guess - 4.0, guess + 4.0
        while excess(lo) > 0:
            lo -= 4.0 + abs(lo)
        while excess(hi) < 0:
            hi += 4.0 + abs(hi)
        stack_V = brentq(excess, lo, hi, xtol=1e-12, rtol=1e-13, maxiter=200)
    return _state_from_stack(data, float(stack_V), phi_ms, ec_minus_ef)


def _state_from_stack(data: StackData, stack_V: float, phi_ms: float, ec_minus_ef: float) -> StackState:
    seg = _data_segments(data, stack_V)
    d_channel = float(seg.displacement_in[-1])
    # a sheet at the channel-side face of the last layer sits on the interface
    if data.charge_position[-1] == 1.0:
        d_channel += data.charge_cm2[-1] * PER_CM2_TO_PER_M2 * Q_C
    psi_s = _surface_potential(data, d_channel)
    gate_V = phi_ms + psi_s + stack_V
    ec_surface = ec_minus_ef - psi_s
    vac_end = ec_surface + data.channel_affinity_eV
    drops = seg.drop_V  # volts per segment
    vac = vac_end - np.concatenate(([0.0], np.cumsum(drops[::-1])))[::-1]
    fields = seg.field_in * V_PER_M_TO_MV_PER_CM
    layer_fields = [0.0] * data.count
    for k, li in enumerate(seg.layer):
        layer_fields[li] = float(fields[k])  # the last segment of a layer is its channel side
    radii = () if seg.radius_out_nm is None else tuple(
        float(v) for v in np.append(seg.radius_out_nm, seg.radius_in_nm[-1]))
    return StackState(
        stack_V=float(stack_V), gate_V=float(gate_V), surface_potential_V=float(psi_s),
        segment_layer=tuple(seg.layer), segment_thickness_nm=tuple(float(v) for v in seg.thickness_nm),
        segment_field_MV_cm=tuple(float(v) for v in fields),
        layer_fields_MV_cm=tuple(layer_fields),
        vacuum_level_eV=tuple(float(v) for v in vac),
        channel_conduction_eV=float(ec_surface),
        channel_valence_eV=float(ec_surface - data.channel_band_gap_eV),
        segment_field_gate_side_MV_cm=tuple(float(v) for v in seg.field_out * V_PER_M_TO_MV_PER_CM),
        segment_radius_nm=radii,
    )


def state_from_solution(data: StackData, solution) -> StackState:
    """The StackState of a solved band profile (`solver.solve`), for `stack_barrier`.

    The voltage across the stack is read from the solution's layer band edges
    (vacuum level = E_c + chi at the gate-side edge of the first layer and the
    channel-side edge of the last); fields and sheet-charge kinks inside the
    stack follow from it exactly as in `stack_state`. The channel's surface band
    edges, band bending and the gate voltage are the solution's, on the scale
    with the channel Fermi level at 0. The emitter stays a 3-D lead at the
    surface band edge: the subband-resolved supply of a quantized channel is
    not part of this Barrier.
    """
    if getattr(solution, "geometry", "planar") != data.geometry:
        raise ValueError(f"state_from_solution: the solution is {solution.geometry}, "
                         f"the stack {data.geometry}")
    ef = float(solution.fermi_level_eV)
    ec = solution.layer_conduction_band_eV
    if len(ec) != data.count:
        raise ValueError(f"state_from_solution: the solution has {len(ec)} layers, the stack {data.count}")
    vac_gate = float(ec[0][0]) + data.affinity_eV[0] - ef
    vac_chan = float(ec[-1][1]) + data.affinity_eV[-1] - ef
    _, _, _, ec_minus_ef = _bulk_channel(data)
    phi_ms = data.gate_work_function_eV - (data.channel_affinity_eV + ec_minus_ef)
    base = _state_from_stack(data, vac_chan - vac_gate, phi_ms, ec_minus_ef)
    shift = vac_chan - base.vacuum_level_eV[-1]
    ec_surface = vac_chan - data.channel_affinity_eV
    return replace(base, gate_V=float(solution.gate_V),
                   surface_potential_V=float(solution.surface_potential_V),
                   vacuum_level_eV=tuple(v + shift for v in base.vacuum_level_eV),
                   channel_conduction_eV=float(ec_surface),
                   channel_valence_eV=float(ec_surface - data.channel_band_gap_eV))


# ------------------------------------------------------------------------ barriers


@dataclass(frozen=True)
class StackBarrier:
    """A Barrier oriented along the carrier flow (left lead = emitter), with what
    the current and the hand formulas need.

    ``fermi_left_eV`` / ``fermi_right_eV`` are the Fermi levels of emitter and
    collector in the carrier's own picture (for holes, minus the electron
    energies). ``barrier_height_eV`` is the barrier at the emitter interface
    measured from the emitter's reference energy: its Fermi level for a metal,
    its band edge for a semiconductor (the band offset). ``injecting_field_MV_cm``
    is the field magnitude in the injecting layer at the emitter side,
    ``injecting_drop_eV`` the fall of the band edge across that layer in the
    direction of flow (positive when the field drives the carrier to the
    collector). ``layer_order`` lists the stack layers in the Barrier's order.
    """

    barrier: object  # solver.tunneling.barrier.Barrier
    carrier: str
    emitter: str
    fermi_left_eV: float
    fermi_right_eV: float
    temperature_K: float
    barrier_height_eV: float
    emitter_reference_eV: float
    injecting_layer: int
    injecting_field_MV_cm: float
    injecting_drop_eV: float
    injecting_mass: float
    injecting_optical_permittivity: float
    layer_order: tuple[int, ...]
    image_force: bool = False
    state: StackState | None = field(default=None, compare=False, repr=False)

    @property
    def regime(self) -> str:
        """'direct' while the band edge at the far side of the injecting layer is
        still above the emitter reference (q V_layer < barrier height),
        'fowler-nordheim' above it (common practice, e.g. Schuegraf & Hu,
        IEEE TED 41, 761 (1994))."""
        return "fowler-nordheim" if self.injecting_drop_eV >= self.barrier_height_eV else "direct"


def emission_sign(carrier: str, emitter: str) -> int:
    """Sign of the field along +x that drives ``carrier`` out of ``emitter``:
    +1 (gate positive) for electrons from the channel and holes from the gate,
    -1 for electrons from the gate and holes from the channel."""
    _check_choice("carrier", carrier, CARRIERS)
    _check_choice("emitter", emitter, EMITTERS)
    return 1 if (carrier == "electron") == (emitter == "channel") else -1


def _check_choice(name, value, allowed):
    if value not in allowed:
        raise ValueError(f"{name} must be one of {', '.join(map(repr, allowed))}, got {value!r}")


def _make_barrier(thickness_nm, u_start_eV, u_end_eV, mass, left, right):
    from solver.tunneling.barrier import Barrier

    return Barrier(tuple(thickness_nm), tuple(u_start_eV), tuple(u_end_eV), tuple(mass),
                   left=tuple(left), right=tuple(right))


def stack_barrier(data: StackData, state: StackState, *, carrier: str = "electron",
                  emitter: str = "channel", through: str = "stack", image_force: bool = False,
                  emitter_mass: float | None = None, metal_mass: float = DEFAULT_METAL_MASS,
                  metal_fermi_depth_eV: float = DEFAULT_METAL_FERMI_DEPTH_EV,
                  image_slices: int = 200, image_method: str = "staircase",
                  curvature_tol_eV: float = None) -> StackBarrier:
    """The Barrier that ``carrier`` crosses when ``emitter`` emits it at ``state``.

    ``through="stack"``: all dielectric layers up to the far electrode;
    ``through="injecting-layer"``: only the layer at the emitter, collected in the
    band of the next layer (flat lead at that interface; the far electrode when
    the stack has one layer) – the current into a charge-trap layer.
    ``image_force``: lower the profile by the image potential of the emitter,
    -q^2/(16 pi eps0 eps_inf x) with the optical permittivity of each layer and
    x the distance from the emitter interface (Sze & Ng 2007, Sec. 3.2.4;
    single-image approximation, common practice), its divergence at x -> 0 cut
    so that the barrier does not fall below the emitter band edge
    (semiconductor) or 1 eV below the Fermi level (metal); the nonlinear
    profile is cut into ``image_slices`` pieces, finer near the emitter: flat
    slices (``image_method="staircase"``, the default: 200 slices give the
    current to ~0.3 % of the converged value on the shipped cases, and flat
    layers are the kernel's fast path) or linear pieces (``"linear"``, each
    treated exactly by the Airy kernel; slower, and no more accurate per piece
    near the emitter where the image term curves most).
    ``curvature_tol_eV`` (cylinder): largest chord deviation from the ln r
    profile that sets the number of linear pieces per segment (default
    CURVATURE_TOL_EV; see the module docstring).
    """
    _check_choice("through", through, THROUGH)
    _check_choice("image_method", image_method, ("linear", "staircase"))
    if image_force and not (isinstance(image_slices, (int, np.integer)) and image_slices >= 1):
        raise ValueError(f"image_slices must be an integer >= 1, got {image_slices!r}")
    if data.gate_kind == "metal" and not (math.isfinite(metal_fermi_depth_eV) and metal_fermi_depth_eV > 0):
        raise ValueError(f"metal_fermi_depth_eV must be a finite number > 0, got {metal_fermi_depth_eV!r}")
    emission_sign(carrier, emitter)  # checks both names
    n = data.count
    if state.cylindrical != data.cylindrical:
        raise ValueError(f"stack_barrier: the state is {'cylindrical' if state.cylindrical else 'planar'}, "
                         f"the stack {data.geometry}")
    vac = np.asarray(state.vacuum_level_eV)
    seg_layer, t, vac_start, vac_end, vac_exact = _pieces(
        state, CURVATURE_TOL_EV if curvature_tol_eV is None else curvature_tol_eV)
    aff = np.asarray(data.affinity_eV)[seg_layer]
    gap = np.asarray(data.band_gap_eV)[seg_layer]
    # the pieces' band edges, and the exact profile at the piece ends (heights, drops)
    ec_start, ec_end = vac_start - aff, vac_end - aff
    ecx_start, ecx_end = vac_exact[:-1] - aff, vac_exact[1:] - aff
    if carrier == "electron":
        u_start, u_end = ec_start, ec_end
        ux_start, ux_end = ecx_start, ecx_end
        mass = np.asarray(data.electron_mass)[seg_layer]
        flip = 1.0
    else:  # hole picture: hole energy = -electron energy
        u_start, u_end = -(ec_start - gap), -(ec_end - gap)
        ux_start, ux_end = -(ecx_start - gap), -(ecx_end - gap)
        mass = np.asarray(data.hole_mass)[seg_layer]
        flip = -1.0

    # leads in the carrier's picture: (band_edge, mass, fermi, reference)
    gate_fermi = -state.gate_V
    if data.gate_kind == "metal":
        gate_lead = (flip * gate_fermi - metal_fermi_depth_eV, metal_mass)
        gate_ref = flip * gate_fermi
    else:
        ec_gate = vac[0] - data.gate_affinity_eV
        if carrier == "electron":
            gate_lead = (ec_gate, data.gate_electron_mass)
        else:
            gate_lead = (-(ec_gate - data.gate_band_gap_eV), data.gate_hole_mass)
        gate_ref = gate_lead[0]
    if carrier == "electron":
        chan_lead = (state.channel_conduction_eV, data.channel_electron_mass)
    else:
        chan_lead = (-state.channel_valence_eV, data.channel_hole_mass)
    chan_ref = chan_lead[0]
    gate_fermi_c, chan_fermi_c = flip * gate_fermi, 0.0

    if emitter == "channel":
        order = list(range(len(seg_layer)))[::-1]
        us, ue = u_end[order], u_start[order]
        usx, uex = ux_end[order], ux_start[order]
        emit_lead, emit_fermi, emit_ref = chan_lead, chan_fermi_c, chan_ref
        coll_lead, coll_fermi = gate_lead, gate_fermi_c
    else:
        order = list(range(len(seg_layer)))
        us, ue = u_start[order], u_end[order]
        usx, uex = ux_start[order], ux_end[order]
        emit_lead, emit_fermi, emit_ref = gate_lead, gate_fermi_c, gate_ref
        coll_lead, coll_fermi = chan_lead, chan_fermi_c
    if emitter_mass is not None:
        if not emitter_mass > 0:
            raise ValueError(f"emitter_mass must be > 0 (units of m0), got {emitter_mass}")
        emit_lead = (emit_lead[0], float(emitter_mass))
    thick = t[order]
    m = mass[order]
    layers_in_order = [seg_layer[k] for k in order]
    inj = layers_in_order[0]
    inj_segments = [j for j, li in enumerate(layers_in_order) if li == inj]

    if through == "injecting-layer" and n > 1:
        keep = inj_segments
        nxt = layers_in_order[keep[-1] + 1]
        next_seg = keep[-1] + 1
        edge = usx[next_seg]
        next_mass = (data.electron_mass if carrier == "electron" else data.hole_mass)[nxt]
        coll_lead = (float(edge), float(next_mass))
        us, ue, thick, m = us[keep], ue[keep], thick[keep], m[keep]
        layers_in_order = layers_in_order[:len(keep)]

    field_inj = abs(state.interface_field_MV_cm(emitter))
    drop = float(usx[0] - uex[inj_segments[-1]])
    height = float(usx[0] - emit_ref)
    layer_order = tuple(dict.fromkeys(layers_in_order))

    if image_force:
        metal_emitter = emitter == "gate" and data.gate_kind == "metal"
        floor = emit_fermi - 1.0 if metal_emitter else emit_ref
        barrier = _image_profile(us, ue, thick, m, layers_in_order, data, emit_lead, coll_lead,
                                 floor, image_slices, image_method)
    else:
        barrier = _make_barrier(thick, us, ue, m, emit_lead, coll_lead)
    return StackBarrier(
        barrier=barrier, carrier=carrier, emitter=emitter,
        fermi_left_eV=float(emit_fermi), fermi_right_eV=float(coll_fermi),
        temperature_K=data.temperature_K, barrier_height_eV=height,
        emitter_reference_eV=float(emit_ref), injecting_layer=int(inj),
        injecting_field_MV_cm=field_inj, injecting_drop_eV=drop,
        injecting_mass=float((data.electron_mass if carrier == "electron" else data.hole_mass)[inj]),
        injecting_optical_permittivity=float(data.optical_permittivity[inj]),
        layer_order=layer_order, image_force=bool(image_force), state=state,
    )


CURVATURE_TOL_EV = 3e-4  # default chord tolerance of the coaxial pieces: J to ~1e-4 (tests)


def _pieces(state: StackState, tol_eV: float):
    """Linear pieces of the vacuum level, gate first: (layer per piece,
    thickness_nm, vacuum level at the gate-side and channel-side ends, the
    exact profile at the piece boundaries).

    Planar: one piece per segment. Cylinder: each segment's ln r profile is cut
    into n pieces of equal ratio r_{j}/r_{j+1} (n from the chord criterion
    |drop| ln(r_out/r_in) / (8 n^2) <= tol_eV), each shifted by the mean of the
    profile above its chord.
    """
    vac = np.asarray(state.vacuum_level_eV, float)
    t = np.asarray(state.segment_thickness_nm, float)
    layers = list(state.segment_layer)
    if not state.cylindrical:
        return layers, t, vac[:-1], vac[1:], vac
    if not (tol_eV > 0 and math.isfinite(tol_eV)):
        raise ValueError(f"curvature_tol_eV must be a finite number > 0, got {tol_eV!r}")
    radii = np.asarray(state.segment_radius_nm, float)
    out_layer, out_t, out_s, out_e, exact = [], [], [], [], [vac[:1]]
    for k in range(t.size):
        r_out, r_in = radii[k], radii[k + 1]
        drop = vac[k + 1] - vac[k]  # rise of the vacuum level toward the channel
        lnr = math.log1p(t[k] / r_in)
        count = max(1, math.ceil(math.sqrt(abs(drop) * lnr / (8.0 * tol_eV))))
        b = drop / lnr  # vac(r) = vac[k] + b ln(r_out / r)
        j = np.arange(count + 1)
        rr = r_out * np.exp(-lnr * j / count)  # decreasing
        rr[-1] = r_in
        vals = vac[k] + b * (lnr * j / count)
        vals[-1] = vac[k + 1]
        # mean of (profile - chord) over a piece [a, c] in r, e = 1 - a/c:
        # -b (e^2/12 + e^3/12 + ...); exact form for larger e
        e = -np.expm1(-lnr / count)
        if e < 1e-3:
            shift = -b * e * e / 12.0 * (1.0 + e)
        else:
            q = 1.0 - e
            big = -math.log(q)
            shift = b * (1.0 - q * big / e - 0.5 * big)
        out_layer += [layers[k]] * count
        out_t.append(-np.diff(rr))
        out_s.append(vals[:-1] + shift)
        out_e.append(vals[1:] + shift)
        exact.append(vals[1:])
    return (out_layer, np.concatenate(out_t), np.concatenate(out_s), np.concatenate(out_e),
            np.concatenate(exact))


def _image_profile(us, ue, thick, m, layers_in_order, data, emit_lead, coll_lead, floor_eV, slices,
                   method="linear"):
    """Image-lowered profile as ``slices`` pieces, refined near the emitter (x = total s^2).

    ``method="linear"``: linear pieces between the sampled nodes (each treated
    exactly by the Airy kernel; error O(h^2) in the curvature of the image term
    only); ``"staircase"``: flat slices at the interval midpoints.
    """
    thick = np.asarray(thick, float)
    us, ue, m = np.asarray(us, float), np.asarray(ue, float), np.asarray(m, float)
    layer_idx = np.asarray(layers_in_order)
    eps_all = np.asarray(data.optical_permittivity)[layer_idx]
    if not np.all(eps_all > 0):
        bad = int(layer_idx[~(eps_all > 0)][0])
        from solver.errors import CaseError

        raise CaseError(f"layers.{data.names[bad]}.optical_permittivity: not given for this material; "
                        "the image force needs it (set it as a material override)")
    total = float(np.sum(thick))
    edges = np.concatenate(([0.0], np.cumsum(thick)))
    nodes = np.unique(np.concatenate((total * np.linspace(0.0, 1.0, slices + 1) ** 2, edges)))
    a, b = nodes[:-1], nodes[1:]
    keep = b - a > 1e-9 * total
    a, b = a[keep], b[keep]
    seg = np.clip(np.searchsorted(edges, 0.5 * (a + b), side="right") - 1, 0, thick.size - 1)

    def u_at(x):
        frac = (x - edges[seg]) / thick[seg]
        lin = us[seg] + frac * (ue[seg] - us[seg])
        with np.errstate(divide="ignore"):
            image = IMAGE_EV_NM / (eps_all[seg] * x)
        # the image term saturates near the emitter, where it would pull the barrier
        # below the floor; farther away the band may legitimately fall below it
        return lin - np.minimum(image, max(us[0] - floor_eV, 0.0))

    if method == "staircase":
        u0 = u1 = u_at(0.5 * (a + b))
    else:
        u0, u1 = u_at(a), u_at(b)
    return _make_barrier(b - a, u0, u1, m[seg], emit_lead, coll_lead)


def barrier_from_profile(x_nm, band_edge_eV, mass, left, right, *, reverse: bool = False,
                         method: str = "linear"):
    """A Barrier from a sampled band-edge profile (e.g. a solved band diagram).

    ``x_nm`` increasing sample positions, ``band_edge_eV`` and ``mass`` per
    sample (the mass of an interval is the mean of the masses at its two
    ends). ``method="linear"`` joins the samples
    by linear pieces (treated exactly by the Airy kernel), ``"staircase"`` uses
    flat slices at the interval midpoints. ``reverse=True`` lists the profile
    from the last sample to the first (e.g. flow from the channel to the gate).
    Discontinuities (band offsets) are represented by two samples at the same
    x: such zero-width intervals are dropped, leaving a step.
    """
    x = np.asarray(x_nm, float)
    u = np.asarray(band_edge_eV, float)
    mm = np.asarray(mass, float)
    if x.ndim != 1 or x.size < 2 or u.shape != x.shape or mm.shape != x.shape:
        raise ValueError("barrier_from_profile: x_nm, band_edge_eV and mass must be 1-D arrays "
                         "of equal length >= 2")
    if np.any(np.diff(x) < 0):
        raise ValueError("barrier_from_profile: x_nm must be non-decreasing")
    _check_choice("method", method, ("linear", "staircase"))
    if reverse:
        x, u, mm = x[-1] - x[::-1], u[::-1], mm[::-1]
    width = np.diff(x)
    keep = width > 0
    u0, u1 = u[:-1][keep], u[1:][keep]
    m_int = 0.5 * (mm[:-1] + mm[1:])[keep]
    if method == "staircase":
        u0 = u1 = 0.5 * (u0 + u1)
    return _make_barrier(width[keep], u0, u1, m_int, left, right)
