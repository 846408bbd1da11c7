"""Node placement and the finite-volume metric, planar and cylindrical.

A `Structure` is the case turned into arrays on one mesh: node positions,
the region (gate, dielectric layer, channel, core) of every cell, the
permittivity of every cell, the finite-volume link coefficients and box
volumes, the semiconductor regions with their doping and band data, and the
fixed sheet charges. Everything is SI. It holds no statistics and no bias:
`solver.electrostatics` computes Fermi levels and boundary values from it.

Coordinates
-----------
planar       x is the depth from the gate electrode toward the channel bulk:
             x = 0 at the gate / first-dielectric interface (a poly-Si gate
             occupies x < 0), the channel starts at the sum of the layer
             thicknesses and the last node is the neutral bulk.
cylindrical  x is the radius from the axis outward: [core filler] channel,
             then the layers from the channel (tunnel) to the gate (blocking),
             then the gate. The gate boundary is the outermost node.

Finite-volume metric (per unit area in planar, per radian and unit length in
cylindrical geometry, so that "charge" at a node means C/m^2 or C/m/rad):

    link i between nodes i and i+1, permittivity eps_i
        planar       c_i = eps_i / h_i
        cylindrical  c_i = eps_i / ln(r_{i+1} / r_i)   (exact for a charge-free
                     coaxial shell); on the link touching the axis
                     (the mesh starts there) c_0 = eps_cell_0 r_{1/2} / h_0
    box of node i: from the midpoint of link i-1 to that of link i
        planar       half volumes h_{i-1}/2 and h_i/2
        cylindrical  (r_i^2 - r_{i-1/2}^2)/2 and (r_{i+1/2}^2 - r_i^2)/2
    a sheet charge sigma (C/m^2) at node i counts sigma (planar) or sigma r_i.

Spacing: `interface_spacing` at every interface, growing by the factor
`growth` per cell up to `max_spacing` (within the quantum region at most
`quantum_spacing`, growing by at most 1.05 per cell there, since inversion
and accumulation layers vary on a sub-nm scale); in the deep semiconductor beyond the quantum region the
cap relaxes to a quarter of the bulk Debye length when that is larger, since
the solution varies there on that scale only.

Automatic depths
----------------
semiconductor  W(E_g + 0.3 V) * 1.2 + 8 L_D: the depletion width at a band
               bending of the gap plus 0.3 V (an upper bound for any
               equilibrium bias, so that a gate sweep shares one mesh), plus
               eight bulk Debye lengths (Sze & Ng 2007, Sec. 4.2 for W and L_D);
               at most 20 um.
quantum        4 kT/(q F_T) with F_T the surface field at threshold
               (2 psi_B band bending, depletion approximation), clipped to
               [15, 40] nm and to the semiconductor.
poly-Si gate   W(E_g + 2 V) of the gate doping plus 8 Debye lengths, >= 10 nm.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from solver.materials import Valley
from solver.units import (
    BOLTZMANN_EV_K,
    EPSILON0_F_M,
    NM_TO_M,
    PER_CM2_TO_PER_M2,
    PER_CM3_TO_PER_M3,
    Q_C,
)

__all__ = [
    "ValleySpec",
    "DielectricSpec",
    "SemiconductorSpec",
    "MeshOptions",
    "Region",
    "SemiRegion",
    "Structure",
    "graded_points",
    "build_structure",
    "structure_from_case",
    "automatic_depth_m",
    "automatic_quantum_depth_m",
]

MAX_DEPTH_M = 20e-6
MIN_DEPTH_M = 20e-9
DIELECTRIC_PENETRATION_M = 2e-9  # the quantum box extends this far into the adjacent dielectric
QUANTUM_GROWTH = 1.05  # growth cap in the channel's quantum region (inversion/accumulation layers)


# ------------------------------------------------------------------ inputs (SI)
# one set of equivalent band extrema for quantization (masses in m0): the materials record
ValleySpec = Valley

@dataclass(frozen=True)
class DielectricSpec:
    name: str
    material: str
    thickness_m: float
    relative_permittivity: float
    affinity_eV: float
    gap_eV: float
    electron_mass: float
    hole_mass: float
    sheet_charge_C_m2: float = 0.0
    charge_position: float = 0.5   # 0 = gate side, 1 = channel side


@dataclass(frozen=True)
class SemiconductorSpec:
    name: str
    material: str
    relative_permittivity: float
    affinity_eV: float
    gap_eV: float
    conduction_dos_m3: float
    valence_dos_m3: float
    donors_m3: float = 0.0
    acceptors_m3: float = 0.0
    donor_ionization_eV: float = 0.045
    acceptor_ionization_eV: float = 0.045
    incomplete_ionization: bool = False
    electron_valleys: tuple[ValleySpec, ...] = ()
    hole_bands: tuple[ValleySpec, ...] = ()

    @property
    def net_doping_m3(self) -> float:
        return self.donors_m3 - self.acceptors_m3

    @property
    def intrinsic_m3(self) -> float:
        return math.sqrt(self.conduction_dos_m3 * self.valence_dos_m3)  # times exp(-Eg/2kT)


@dataclass(frozen=True)
class MeshOptions:
    interface_spacing_m: float = 0.02e-9
    max_spacing_m: float = 1.0e-9
    growth: float = 1.15
    depth_m: float | None = None
    quantum_depth_m: float | None = None
    quantum_spacing_m: float = 0.25e-9
    gate_depth_m: float | None = None


# ------------------------------------------------------------------ mesh pieces
def graded_points(length: float, h_start: float | None, h_end: float | None,
                  growth: float, h_max: float, min_cells: int = 1) -> np.ndarray:
    """Offsets 0 = s_0 < ... < s_n = length of a graded segment.

    The local spacing follows h(s) = min(h_max, h_start + (g - 1) s,
    h_end + (g - 1)(length - s)) (a geometric progression of ratio g in the
    continuum limit); None leaves that end unrefined. Nodes are placed by
    equidistributing the integral of 1/h.
    """
    if not length > 0:
        raise ValueError(f"segment length must be > 0, got {length}")
    slope = max(growth - 1.0, 1e-6)
    # samples cluster geometrically at both ends so the integral of 1/h is
    # resolved even where h is far below length/4000
    h_small = min(h for h in (h_start, h_end, h_max) if h is not None)
    tail = np.geomspace(min(1e-3 * h_small, 1e-3 * length), length, 1500)
    s = np.unique(np.concatenate((np.linspace(0.0, length, 2001), tail, length - tail, [0.0])))
    s = s[(s >= 0.0) & (s <= length)]
    h = np.full_like(s, h_max)
    if h_start is not None:
        h = np.minimum(h, h_start + slope * s)
    if h_end is not None:
        h = np.minimum(h, h_end + slope * (length - s))
    inv = 1.0 / h
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(s))))
    n = max(int(math.ceil(cum[-1] - 1e-9)), min_cells)
    targets = np.linspace(0.0, cum[-1], n + 1)
    pts = np.interp(targets, cum, s)
    pts[0], pts[-1] = 0.0, length
    return pts


def _debye_length_m(eps_r: float, density_m3: float, temperature_K: float) -> float:
    kt_v = BOLTZMANN_EV_K * temperature_K
    return math.sqrt(eps_r * EPSILON0_F_M * kt_v / (Q_C * max(density_m3, 1.0)))


def _intrinsic_m3(spec: SemiconductorSpec, temperature_K: float) -> float:
    kt = BOLTZMANN_EV_K * temperature_K
    return spec.intrinsic_m3 * math.exp(-spec.gap_eV / (2 * kt))


def _doping_m3(spec: SemiconductorSpec, temperature_K: float) -> float:
    return max(abs(spec.net_doping_m3), _intrinsic_m3(spec, temperature_K))


def automatic_depth_m(spec: SemiconductorSpec, temperature_K: float) -> float:
    """Semiconductor depth holding the widest equilibrium depletion region."""
    n = _doping_m3(spec, temperature_K)
    eps = spec.relative_permittivity * EPSILON0_F_M
    w = math.sqrt(2 * eps * (spec.gap_eV + 0.3) / (Q_C * n))
    depth = 1.2 * w + 8 * _debye_length_m(spec.relative_permittivity, n, temperature_K)
    # at degenerate doping w is a few nm, shorter than the quantum region (>= 15 nm) and too
    # short for the bulk contact check: keep at least MIN_DEPTH_M
    return min(max(depth, MIN_DEPTH_M), MAX_DEPTH_M)


def automatic_quantum_depth_m(spec: SemiconductorSpec, temperature_K: float) -> float:
    """Width of the quantum region next to the interface (see module doc)."""
    n = _doping_m3(spec, temperature_K)
    kt = BOLTZMANN_EV_K * temperature_K
    psi_b = kt * math.log(max(n / _intrinsic_m3(spec, temperature_K), 1.0 + 1e-12))
    eps = spec.relative_permittivity * EPSILON0_F_M
    f_t = math.sqrt(2 * Q_C * n * max(2 * psi_b, 4 * kt) / eps)
    return min(max(4 * kt / f_t, 15e-9), 40e-9)


def _gate_depth_m(spec: SemiconductorSpec, temperature_K: float) -> float:
    n = _doping_m3(spec, temperature_K)
    eps = spec.relative_permittivity * EPSILON0_F_M
    w = math.sqrt(2 * eps * (spec.gap_eV + 2.0) / (Q_C * n))
    return min(max(w + 8 * _debye_length_m(spec.relative_permittivity, n, temperature_K), 10e-9),
               MAX_DEPTH_M)


# ------------------------------------------------------------------ structure
@dataclass(frozen=True)
class Region:
    """A contiguous part of the mesh: nodes lo..hi inclusive (x order)."""

    name: str
    kind: str                 # "gate" | "layer" | "channel" | "core"
    material: str
    lo: int
    hi: int
    relative_permittivity: float
    affinity_eV: float
    gap_eV: float
    electron_mass: float
    hole_mass: float
    layer_index: int = -1     # gate-first index for layers


@dataclass(frozen=True, eq=False)
class SemiRegion:
    """A semiconductor region with its nodes and semiconductor box volumes."""

    role: str                 # "channel" | "gate"
    spec: SemiconductorSpec
    nodes: np.ndarray         # node indices
    volume: np.ndarray        # semiconductor part of each node's box (m or m^2/rad)
    region: int               # index into Structure.regions


@dataclass(frozen=True, eq=False)
class Structure:
    geometry: str                       # "planar" | "cylindrical"
    temperature_K: float
    x_m: np.ndarray
    eps_cell: np.ndarray                # F/m per cell
    coef: np.ndarray                    # link coefficients
    vol_left: np.ndarray                # half box volumes
    vol_right: np.ndarray
    cell_region: np.ndarray             # region index per cell
    regions: tuple[Region, ...]
    semis: tuple[SemiRegion, ...]
    node_region: np.ndarray             # region of every node, channel-side rule
    fixed_charge: np.ndarray            # sheet charges per node (C/m^2 or C/m/rad)
    area: np.ndarray                    # 1 (planar) or r (cylindrical) per node
    gate_node: int
    bulk_node: int                      # -1: no neutral contact (cylinder)
    interface_node: int                 # dielectric / channel interface
    reference_area: float               # 1 (planar) or channel radius (per channel surface)
    interface_trap_density_m2_J: float
    metal_work_function_eV: float | None
    layer_regions: tuple[int, ...]      # indices into regions, gate first
    quantum_nodes: np.ndarray           # nodes of the Schrödinger box (x order)
    quantum_blend: np.ndarray           # weight of the quantum density per box node
    channel_side_sign: int              # +1: channel at larger x (planar); -1 (cylinder)
    interfaces_m: tuple[float, ...]     # gate/dielectric ... dielectric/channel, x order

    @property
    def size(self) -> int:
        return self.x_m.size

    @property
    def channel(self) -> SemiRegion:
        return next(s for s in self.semis if s.role == "channel")

    @property
    def gate_semi(self) -> SemiRegion | None:
        return next((s for s in self.semis if s.role == "gate"), None)

    @property
    def volume(self) -> np.ndarray:
        return self.vol_left + self.vol_right


def _assemble(geometry, breaks, seg_specs, opts):
    """Nodes from breakpoints: breaks[k] positions, seg_specs[k] = (h_start,
    h_end, cap, min_cells) for segment k."""
    xs = [np.array([breaks[0]])]
    for k, (a, b) in enumerate(zip(breaks[:-1], breaks[1:])):
        h0, h1, cap, nmin, *g = seg_specs[k]
        pts = graded_points(b - a, h0, h1, g[0] if g else opts.growth, cap, nmin)
        xs.append(a + pts[1:])
    x = np.concatenate(xs)
    # snap breakpoints exactly
    idx = np.cumsum([0] + [len(p) for p in xs[1:]])
    for k, i in enumerate(idx):
        x[i] = breaks[k]
    return x, idx


def build_structure(*, geometry: str, temperature_K: float, layers: tuple[DielectricSpec, ...],
                    channel: SemiconductorSpec, metal_work_function_eV: float | None = None,
                    gate: SemiconductorSpec | None = None, channel_radius_m: float | None = None,
                    core_radius_m: float = 0.0, core: DielectricSpec | None = None,
                    interface_charge_C_m2: float = 0.0, interface_trap_density_m2_J: float = 0.0,
                    options: MeshOptions = MeshOptions()) -> Structure:
    """Mesh and material arrays of a gate stack (layers listed gate first)."""
    if (metal_work_function_eV is None) == (gate is None):
        raise ValueError("give exactly one of metal_work_function_eV and gate (a semiconductor)")
    if not layers:
        raise ValueError("layers: at least one dielectric layer is needed")
    if geometry not in ("planar", "cylindrical"):
        raise ValueError(f"geometry must be 'planar' or 'cylindrical', got {geometry!r}")
    o = options
    h0, hmax = o.interface_spacing_m, o.max_spacing_m
    hq = min(o.quantum_spacing_m, hmax)
    gq = min(o.growth, QUANTUM_GROWTH)
    T = temperature_K
    n_ch = _doping_m3(channel, T)
    h_bulk = max(hmax, 0.25 * _debye_length_m(channel.relative_permittivity, n_ch, T))
    qdepth = o.quantum_depth_m if o.quantum_depth_m is not None else automatic_quantum_depth_m(channel, T)
    gdepth = None
    if gate is not None:
        gdepth = o.gate_depth_m if o.gate_depth_m is not None else _gate_depth_m(gate, T)
        h_gate = max(hmax, 0.25 * _debye_length_m(gate.relative_permittivity, _doping_m3(gate, T), T))

    # region list in x order: (kind, spec, x0, x1); sheet charge points as extra breaks
    regs = []
    if geometry == "planar":
        x = 0.0
        if gate is not None:
            regs.append(("gate", gate, -gdepth, 0.0))
        for i, L in enumerate(layers):
            regs.append(("layer", (i, L), x, x + L.thickness_m))
            x += L.thickness_m
        depth = o.depth_m if o.depth_m is not None else automatic_depth_m(channel, T)
        qdepth = min(qdepth, depth)
        regs.append(("channel", channel, x, x + depth))
    else:
        if channel_radius_m is None or not channel_radius_m > core_radius_m >= 0:
            raise ValueError("cylindrical geometry needs channel_radius_m > core_radius_m >= 0")
        if core_radius_m > 0:
            if core is None:
                raise ValueError("a hollow channel (core_radius_m > 0) needs a core dielectric")
            regs.append(("core", core, 0.0, core_radius_m))
        regs.append(("channel", channel, core_radius_m, channel_radius_m))
        qdepth = min(qdepth, channel_radius_m - core_radius_m)
        r = channel_radius_m
        for i in reversed(range(len(layers))):
            L = layers[i]
            regs.append(("layer", (i, L), r, r + L.thickness_m))
            r += L.thickness_m
        if gate is not None:
            regs.append(("gate", gate, r, r + gdepth))

    # breakpoints and segment spacing
    breaks, specs, owners = [regs[0][2]], [], []
    for k, (kind, spec, a, b) in enumerate(regs):
        if kind == "layer":
            i, L = spec
            pos = L.charge_position if geometry == "planar" else 1.0 - L.charge_position
            cuts = [a, b]
            if L.sheet_charge_C_m2 != 0.0 and 0.0 < pos < 1.0:
                cuts = [a, a + pos * (b - a), b]
            segs = []
            for c0, c1 in zip(cuts[:-1], cuts[1:]):
                segs.append((c0, c1, (h0, h0, hmax, max(2, 6 // (len(cuts) - 1)))))
        elif kind == "gate":
            if geometry == "planar":
                segs = [(a, b, (None, h0, h_gate, 4))]
            else:
                segs = [(a, b, (h0, None, h_gate, 4))]
        elif kind == "core":
            segs = [(a, b, (None, h0, hmax, 4))]
        else:  # channel
            if geometry == "planar":
                q_end = a + qdepth
                segs = [(a, q_end, (h0, hq, hq, 8, gq))]
                if b - q_end > 1e-15:
                    segs.append((q_end, b, (hq, None, h_bulk, 2)))
            else:
                q_start = b - qdepth
                inner_h = h0 if a > 0 else None
                if q_start - a > 1e-15:
                    segs = [(a, q_start, (inner_h, hq, hmax, 2)), (q_start, b, (hq, h0, hq, 8, gq))]
                else:
                    segs = [(a, b, (inner_h, h0, hq, 8, gq))]
        for c0, c1, sp in segs:
            breaks.append(c1)
            specs.append(sp)
            owners.append(k)
    x, bidx = _assemble(geometry, breaks, specs, o)
    n = x.size

    # region node ranges
    seg_start = {}
    for s, k in enumerate(owners):
        seg_start.setdefault(k, bidx[s])
        seg_start[(k, "end")] = bidx[s + 1]
    cell_region = np.empty(n - 1, dtype=np.int64)
    regions, semis, layer_regions = [], [], [None] * len(layers)
    for k, (kind, spec, a, b) in enumerate(regs):
        lo, hi = seg_start[k], seg_start[(k, "end")]
        cell_region[lo:hi] = k
        if kind == "layer":
            i, L = spec
            regions.append(Region(L.name, "layer", L.material, lo, hi, L.relative_permittivity,
                                  L.affinity_eV, L.gap_eV, L.electron_mass, L.hole_mass, i))
            layer_regions[i] = k
        elif kind == "core":
            regions.append(Region(spec.name, "core", spec.material, lo, hi, spec.relative_permittivity,
                                  spec.affinity_eV, spec.gap_eV, spec.electron_mass, spec.hole_mass))
        else:
            regions.append(Region(spec.name, kind, spec.material, lo, hi, spec.relative_permittivity,
                                  spec.affinity_eV, spec.gap_eV, 1.0, 1.0))
    eps_cell = np.array([regions[k].relative_permittivity for k in cell_region]) * EPSILON0_F_M

    # metric
    h = np.diff(x)
    if geometry == "planar":
        coef = eps_cell / h
        vol_left = np.zeros(n)
        vol_right = np.zeros(n)
        vol_left[1:] = 0.5 * h
        vol_right[:-1] = 0.5 * h
        area = np.ones(n)
        ref_area = 1.0
    else:
        # the mesh starts on the axis (x[0] = 0): exact shells beyond the first link
        coef = np.empty(n - 1)
        coef[1:] = eps_cell[1:] / np.log(x[2:] / x[1:-1])
        coef[0] = eps_cell[0] * 0.5 * (x[0] + x[1]) / h[0]
        mid = 0.5 * (x[1:] + x[:-1])
        vol_left = np.zeros(n)
        vol_right = np.zeros(n)
        vol_left[1:] = 0.5 * (x[1:] ** 2 - mid ** 2)
        vol_right[:-1] = 0.5 * (mid ** 2 - x[:-1] ** 2)
        area = x.copy()
        ref_area = channel_radius_m

    # semiconductor regions
    for k, (kind, spec, a, b) in enumerate(regs):
        if kind in ("channel", "gate"):
            R = regions[k]
            nodes = np.arange(R.lo, R.hi + 1)
            vol = np.zeros(nodes.size)
            vol[1:] += vol_left[nodes[1:]]
            vol[:-1] += vol_right[nodes[:-1]]
            # outer nodes that are not interfaces (contacts, axis) keep their box
            if R.lo == 0:
                vol[0] += vol_left[0]
            if R.hi == n - 1:
                vol[-1] += vol_right[-1]
            semis.append(SemiRegion("channel" if kind == "channel" else "gate", spec, nodes, vol, k))

    # node region: the region on the channel side of an interface node
    node_region = np.empty(n, dtype=np.int64)
    node_region[:-1] = cell_region
    node_region[-1] = cell_region[-1]
    sign = 1 if geometry == "planar" else -1
    if sign < 0:
        node_region[1:] = cell_region
        node_region[0] = cell_region[0]
    ch_k = next(k for k, r in enumerate(regs) if r[0] == "channel")
    chR = regions[ch_k]
    node_region[chR.lo:chR.hi + 1] = ch_k

    # fixed sheet charges
    fixed = np.zeros(n)
    for i, L in enumerate(layers):
        if L.sheet_charge_C_m2 == 0.0:
            continue
        R = regions[layer_regions[i]]
        pos = L.charge_position if geometry == "planar" else 1.0 - L.charge_position
        xc = x[R.lo] + pos * (x[R.hi] - x[R.lo])
        j = R.lo + int(np.argmin(np.abs(x[R.lo:R.hi + 1] - xc)))
        fixed[j] += L.sheet_charge_C_m2 * area[j]
    if geometry == "planar":
        iface = chR.lo
        gate_node = 0
        bulk_node = n - 1
    else:
        iface = chR.hi
        gate_node = n - 1
        bulk_node = -1
    fixed[iface] += interface_charge_C_m2 * area[iface]

    # quantum box: from DIELECTRIC_PENETRATION_M inside the adjacent layer to qdepth in the channel
    adj = regions[layer_regions[-1]]
    pen = min(DIELECTRIC_PENETRATION_M, x[adj.hi] - x[adj.lo])
    if geometry == "planar":
        x_lo, x_hi = x[iface] - pen, x[iface] + qdepth
    else:
        x_lo, x_hi = x[iface] - qdepth, x[iface] + pen
    q_nodes = np.nonzero((x >= x_lo - 1e-15) & (x <= x_hi + 1e-15))[0]
    # blend: the quantum density is used fully near the interface and handed
    # over smoothly (cos^2) to the classical one between 50 % and 80 % of the
    # box depth in the semiconductor, classical alone beyond (the Dirichlet box
    # end would otherwise carve an artificial dip into carriers that are
    # plentiful there, i.e. majority carriers)
    depth_in = sign * (x[q_nodes] - x[iface])
    semi_box_end = qdepth
    reaches_axis = geometry == "cylindrical" and x_lo <= 1e-15 and core_radius_m == 0
    reaches_core = geometry == "cylindrical" and core_radius_m > 0 and x_lo <= core_radius_m + 1e-15
    if reaches_axis or reaches_core:
        blend = np.ones(q_nodes.size)
        if reaches_core:
            # the box continues into the core filler for the penetration length
            q_nodes = np.nonzero((x >= max(core_radius_m - DIELECTRIC_PENETRATION_M, 0.0) - 1e-15)
                                 & (x <= x_hi + 1e-15))[0]
            blend = np.ones(q_nodes.size)
    else:
        t = np.clip((depth_in - 0.5 * semi_box_end) / (0.3 * semi_box_end), 0.0, 1.0)
        blend = 0.5 * (1.0 + np.cos(np.pi * t))

    interfaces = []
    for k, (kind, spec, a, b) in enumerate(regs):
        if kind == "layer":
            interfaces.extend([a, b])
    interfaces = tuple(sorted(set(interfaces)))
    st = Structure(
        geometry=geometry, temperature_K=float(T), x_m=x, eps_cell=eps_cell, coef=coef,
        vol_left=vol_left, vol_right=vol_right, cell_region=cell_region, regions=tuple(regions),
        semis=tuple(semis), node_region=node_region, fixed_charge=fixed, area=area,
        gate_node=gate_node, bulk_node=bulk_node, interface_node=iface, reference_area=ref_area,
        interface_trap_density_m2_J=float(interface_trap_density_m2_J),
        metal_work_function_eV=metal_work_function_eV, layer_regions=tuple(layer_regions),
        quantum_nodes=q_nodes, quantum_blend=blend, channel_side_sign=sign,
        interfaces_m=interfaces,
    )
    for arr in (x, eps_cell, coef, vol_left, vol_right, cell_region, node_region, fixed, area,
                q_nodes, blend):
        arr.flags.writeable = False
    return st


# ------------------------------------------------------------------ from a Case
def _valley(v) -> ValleySpec:
    return ValleySpec(v.label, int(v.degeneracy), float(v.quantization_mass), float(v.dos_mass),
                      float(v.offset_eV))


def _semiconductor_spec(mat, T, name, *, donors_cm3, acceptors_cm3, incomplete, orientation=None):
    valleys = tuple(_valley(v) for v in mat.electron_valleys(orientation)) if orientation else ()
    holes = tuple(_valley(v) for v in mat.hole_bands) if orientation else ()
    return SemiconductorSpec(
        name=name, material=mat.name, relative_permittivity=mat.relative_permittivity,
        affinity_eV=mat.electron_affinity_eV, gap_eV=mat.band_gap_eV(T),
        conduction_dos_m3=mat.conduction_dos_cm3(T) * PER_CM3_TO_PER_M3,
        valence_dos_m3=mat.valence_dos_cm3(T) * PER_CM3_TO_PER_M3,
        donors_m3=donors_cm3 * PER_CM3_TO_PER_M3, acceptors_m3=acceptors_cm3 * PER_CM3_TO_PER_M3,
        donor_ionization_eV=mat.donor_ionization_eV, acceptor_ionization_eV=mat.acceptor_ionization_eV,
        incomplete_ionization=incomplete, electron_valleys=valleys, hole_bands=holes)


def _dielectric_spec(name, mat, thickness_nm, charge_cm2=0.0, position=0.5) -> DielectricSpec:
    return DielectricSpec(
        name=name, material=mat.name, thickness_m=thickness_nm * NM_TO_M,
        relative_permittivity=mat.relative_permittivity, affinity_eV=mat.electron_affinity_eV,
        gap_eV=mat.band_gap_eV, electron_mass=mat.electron_mass, hole_mass=mat.hole_mass,
        sheet_charge_C_m2=charge_cm2 * Q_C * PER_CM2_TO_PER_M2, charge_position=position)


def structure_from_case(case, *, depth_nm: float | None = None,
                        quantum_depth_nm: float | None = None,
                        interface_spacing_nm: float | None = None,
                        max_spacing_nm: float | None = None,
                        growth: float | None = None,
                        quantum_spacing_nm: float | None = None) -> Structure:
    """The `Structure` of a validated `solver.case.Case` (keyword arguments
    override the case's [mesh] table)."""
    T = case.temperature_K
    m = case.mesh

    def pick(override, value):
        return value if override is None else override

    opts = MeshOptions(
        interface_spacing_m=pick(interface_spacing_nm, m.interface_spacing_nm) * NM_TO_M,
        max_spacing_m=pick(max_spacing_nm, m.max_spacing_nm) * NM_TO_M,
        growth=pick(growth, m.growth),
        quantum_spacing_m=pick(quantum_spacing_nm, MeshOptions.quantum_spacing_m * 1e9) * NM_TO_M,
        depth_m=None if pick(depth_nm, m.depth_nm) is None else pick(depth_nm, m.depth_nm) * NM_TO_M,
        quantum_depth_m=(None if pick(quantum_depth_nm, m.quantum_depth_nm) is None
                         else pick(quantum_depth_nm, m.quantum_depth_nm) * NM_TO_M),
    )
    ch = case.channel
    channel = _semiconductor_spec(ch.material, T, "channel", donors_cm3=ch.donors_cm3,
                                  acceptors_cm3=ch.acceptors_cm3,
                                  incomplete=ch.ionization == "incomplete",
                                  orientation=ch.orientation)
    layers = tuple(_dielectric_spec(L.name, L.material, L.thickness_nm, L.charge_cm2, L.charge_position)
                   for L in case.layers)
    g = case.gate
    metal_wf, gate = None, None
    if g.kind == "metal":
        metal_wf = g.work_function_eV
    else:
        gate = _semiconductor_spec(g.material, T, "gate", donors_cm3=g.donors_cm3,
                                   acceptors_cm3=g.acceptors_cm3, incomplete=False)
    geo = case.geometry
    core = None
    kwargs = {}
    if geo.kind == "cylindrical":
        if geo.core_radius_nm > 0:
            core = _dielectric_spec("core", geo.core_material, geo.core_radius_nm)
        kwargs = dict(channel_radius_m=geo.channel_radius_nm * NM_TO_M,
                      core_radius_m=geo.core_radius_nm * NM_TO_M, core=core)
    # interface traps: q per cm^2 per eV -> per m^2 per J
    dit = ch.interface_trap_density_cm2_eV * PER_CM2_TO_PER_M2 / Q_C
    return build_structure(
        geometry=geo.kind, temperature_K=T, layers=layers, channel=channel,
        metal_work_function_eV=metal_wf, gate=gate,
        interface_charge_C_m2=ch.interface_charge_cm2 * Q_C * PER_CM2_TO_PER_M2,
        interface_trap_density_m2_J=dit, options=opts, **kwargs)
