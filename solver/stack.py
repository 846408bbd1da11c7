"""Closed-form properties of a case's dielectric stack (no solve needed):
band offsets, equivalent oxide thickness, capacitance, flat-band voltage.

Planar: C_ox = eps0 / sum(t_i / eps_i). Cylindrical (coaxial layers from the
channel radius r_0 outward): C per channel area = eps0 / (r_0 sum ln(r_{i+1}/r_i)/eps_i)
(Gauss's law; e.g. Jackson, Classical Electrodynamics).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from solver.units import (BOLTZMANN_EV_K, EPSILON0_F_M, F_PER_M2_TO_F_PER_CM2, NM_TO_M, Q_C,
                          SIO2_PERMITTIVITY_FOR_EOT)


@dataclass(frozen=True)
class LayerSummary:
    name: str
    material: str
    thickness_nm: float
    relative_permittivity: float
    conduction_offset_eV: float    # dielectric conduction band above the channel's
    valence_offset_eV: float       # dielectric valence band below the channel's
    eot_nm: float
    inner_radius_nm: float | None  # cylindrical only (channel side)
    outer_radius_nm: float | None


@dataclass(frozen=True)
class StackSummary:
    layers: tuple[LayerSummary, ...]
    thickness_nm: float
    eot_nm: float                  # planar EOT; for a cylinder the planar-equivalent at the channel surface
    capacitance_F_cm2: float       # per channel-surface area
    channel_work_function_eV: float
    flat_band_V: float


def layer_radii_nm(case) -> list[tuple[float, float]]:
    """(inner, outer) radius of each layer of a cylindrical case, gate first."""
    r = case.geometry.channel_radius_nm
    radii = []
    for layer in reversed(case.layers):
        radii.append((r, r + layer.thickness_nm))
        r += layer.thickness_nm
    return radii[::-1]


def channel_work_function_eV(case) -> float:
    """Work function of the neutral channel, Boltzmann statistics (Sze & Ng 2007, Sec. 4.2)."""
    ch, T = case.channel, case.temperature_K
    sc = ch.material
    kt = BOLTZMANN_EV_K * T
    net = ch.donors_cm3 - ch.acceptors_cm3
    ni = sc.intrinsic_density_cm3(T)
    # Fermi level from charge neutrality n - p = net with n p = ni^2 (Boltzmann)
    n = 0.5 * (net + math.sqrt(net * net + 4 * ni * ni)) if net > 0 else ni * ni / (0.5 * (-net + math.sqrt(net * net + 4 * ni * ni)))
    ef_minus_ec = kt * math.log(n / sc.conduction_dos_cm3(T))
    return sc.electron_affinity_eV - ef_minus_ec


def summarize(case) -> StackSummary:
    sc, T = case.channel.material, case.temperature_K
    cyl = case.geometry.kind == "cylindrical"
    radii = layer_radii_nm(case) if cyl else [(None, None)] * len(case.layers)
    layers = []
    for layer, (ri, ro) in zip(case.layers, radii):
        m = layer.material
        layers.append(LayerSummary(layer.name, m.name, layer.thickness_nm, m.relative_permittivity,
                                   m.conduction_offset_eV(sc, T), m.valence_offset_eV(sc, T), layer.eot_nm, ri, ro))
    if cyl:
        r0 = case.geometry.channel_radius_nm
        s = sum(math.log(ro / ri) / l.relative_permittivity for l, (ri, ro) in zip(layers, radii))
        eot = SIO2_PERMITTIVITY_FOR_EOT * r0 * s
    else:
        eot = case.eot_nm
    cap = EPSILON0_F_M * SIO2_PERMITTIVITY_FOR_EOT / (eot * NM_TO_M) * F_PER_M2_TO_F_PER_CM2
    phi_s = channel_work_function_eV(case)
    vfb = case.gate.work_function_eV - phi_s - _charge_shift_V(case)
    return StackSummary(tuple(layers), case.thickness_nm, eot, cap, phi_s, vfb)


def _charge_shift_V(case) -> float:
    """Flat-band shift by sheet charges: sum of Q_k X_k / eps0, X_k = electrical distance from the gate
    (planar: sum t/eps; coaxial: r_c sum ln(r_out/r_in)/eps), Q in C/m^2 (Sze & Ng 2007, Sec. 4.3)."""
    total = 0.0
    cyl = case.geometry.kind == "cylindrical"
    radii = layer_radii_nm(case) if cyl else None
    charges = [(i, l.charge_cm2, l.charge_position) for i, l in enumerate(case.layers) if l.charge_cm2]
    if case.channel.interface_charge_cm2:
        charges.append((len(case.layers) - 1, case.channel.interface_charge_cm2, 1.0))
    for i, q_cm2, pos in charges:
        q = q_cm2 * 1e4 * Q_C
        if not cyl:
            x = sum(l.thickness_nm / l.material.relative_permittivity for l in case.layers[:i])
            x += pos * case.layers[i].thickness_nm / case.layers[i].material.relative_permittivity
            total += q * x * NM_TO_M / EPSILON0_F_M
        else:
            ri, ro = radii[i]
            rc = ro - pos * (ro - ri)          # position 0 = gate side (outer)
            x = math.log(ro / rc) / case.layers[i].material.relative_permittivity
            x += sum(math.log(b / a) / l.material.relative_permittivity for l, (a, b) in zip(case.layers[:i], radii[:i]))
            total += q * rc * x * NM_TO_M / EPSILON0_F_M
    return total
