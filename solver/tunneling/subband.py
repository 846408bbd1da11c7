"""Tunneling current from the quantized channel: subband-resolved emission
through the dielectric stack of a self-consistent solution.

Model (quasi-bound states, "impact frequency" picture)
------------------------------------------------------
A carrier of subband i (energy E_i, sheet population N_i per area with the
valley degeneracy included, quantization mass m_z of its valley set) strikes
the dielectric interface f_i times per second and escapes with the
probability T(E_i) of one impact, so the emission current per area is

    J = q sum_i N_i f_i T(E_i)

(the quasi-bound-state or impact-frequency treatment of tunneling from
inversion layers, common practice; 1/(f_i T_i) is the lifetime of the
quasi-bound state). N_i is the 2-D Fermi–Dirac population of the subband
(Ando, Fowler, Stern, Rev. Mod. Phys. 54, 437 (1982), Sec. III, as in
`solver.selfconsistent`), which already integrates over the transverse
energy, so this sum is the transverse-energy-integrated form; T is taken
at the longitudinal energy E_i alone (the transverse kinetic energy does not
enter the barrier: the standard approximation of the subband picture, exact
when the transverse masses of channel and dielectric are equal).

With the collector's Fermi level E_Fc the carriers coming back from the
collector into the same states are counted by detailed balance: the net
population that emits is N_i (1 - ln(1 + e^{(E_Fc - E_i)/kT}) / ln(1 + e^{(E_F - E_i)/kT})),
the 2-D analogue of the Tsu–Esaki supply difference (Tsu & Esaki, Appl. Phys.
Lett. 22, 562 (1973)). So J = 0 in equilibrium (gate_V = 0) and changes sign
when the collector's Fermi level rises above the channel's. Far from
equilibrium (program bias) the factor is 1.

Impact frequency (the chosen form: semiclassical transit time)
--------------------------------------------------------------
    f_i = [2 integral_{z_0}^{z_i} dz sqrt(m_z m0 / (2 (E_i - U(z))))]^{-1},

the inverse round-trip time of a classical carrier of energy E_i between the
interface z_0 (a hard wall: the dielectric's band offset is several eV) and
its turning point z_i in the channel, U(z) the self-consistent band edge of
its valley set (common practice). U is piecewise linear between the solution's
nodes and the integral of each interval has the closed form
2 h / (sqrt(E - U_a) + sqrt(E - U_b)) (the interval with the turning point:
2 h' / sqrt(E - U_a) with h' its allowed part), so the 1/sqrt singularity at
the turning point is integrated exactly. For the triangular well U = qFz this
gives f_i = qF / (2 sqrt(2 m_z E_i)) (E_i from the bottom of the well).

Cross-check (the wavefunction form): the standing wave at the interface is
an incident and a reflected wave; with psi and its derivative psi' on the
channel side of the interface and the local wave number
k_0 = sqrt(2 m_z m0 (E_i - U(z_0))) / hbar, the incident amplitude is
|A|^2 = (psi^2 + psi'^2 / k_0^2) / 4 and its flux per unit normalised state

    f_i = hbar (k_0^2 psi(z_0)^2 + psi'(z_0)^2) / (4 m_z m0 k_0).

With a hard wall (psi(z_0) = 0) this is hbar psi'(0)^2 / (4 m_z m0 k_0), and
for the triangular well psi'(0)^2 = 2 m_z m0 qF / hbar^2 for every state (the
hard-wall sum rule psi'(0)^2 = (2m/hbar^2) <dU/dz>), which gives back the
closed form above exactly. The two forms differ in a self-consistent well
(field screened by the inversion charge, penetration into the dielectric);
the tests hold them within a factor 2.

Transmission and barrier
------------------------
The barrier is the dielectric stack from the channel interface to the gate,
listed along the carrier flow (channel first, as every StackBarrier), with
the band edges of the solution's own layers (``Solution.layer_conduction_band_eV``
pairs; a layer with a sheet charge inside is split at its node): linear per
layer, which is exact in planar dielectrics without charge inside. In a
cylinder the ln r profile of the stack electrostatics (`state_from_solution`)
is used. The collector is the gate lead of `stack_barrier`. For subband i the
emitter lead is the channel's band edge at the interface (plus the valley
offset) with the mass m_z, so T is the exact transfer-matrix transmission of
the wave that strikes the interface (psi, psi'/m continuous). The 3-D
Tsu–Esaki estimate on the same layers uses the classical channel lead of
`stack_data` (band edge at the surface, the lead/supply mass of the material)
with the channel Fermi level: the comparison the subband picture is meant to
refine.

Subband against 3-D on the same barrier (measured on the shipped cases,
tests/tunneling/test_subband.py): quantization has two effects of definite
sign. It reduces the supply: the subbands strike the interface
(sum N_i f_i) 3-4 times less often than the 3-D Fermi gas at the surface band
edge, which in strong inversion is strongly degenerate and holds far more
carriers than the channel does. It raises the emitting energy: every subband
lies above the surface band edge, so the mean escape probability per impact
is higher (6-15x here, much of it from the 4-fold valleys with their light
m_z = 0.19 as the lead mass). The net is within an order of magnitude: on the
demo cell at 8-16 V, its coaxial twin at 10-12 V and the MOS capacitor in
inversion the subband current is 1.6-4x the 3-D estimate, and stays above it
over the literature range of the Si lead mass of the 3-D picture
(tunnel_mass 0.3-1.0: 3.8x-1.9x at 12 V on the demo cell). That sign is a
result of these models and parameters, not a law; the tests check the two
effects and the order of magnitude, not the sign of the net difference.

Energies of the Barrier are on the scale of `tunneling.stack` (channel Fermi
level at 0; hole picture for holes). Reported subband energies are those of
`Solution.subbands`. In a cylinder the impacts run along the radius, with
the radial band edge and the solution's |psi|^2 (normalised along the
radius), and the populations are per area of the channel surface: the planar
picture applied locally, valid while the channel radius is large against the
inversion layer (as the selfconsistent sheet rule). Currents are per area of
the channel surface, positive
for net emission of the carrier from the channel toward the gate (as every
StackBarrier current).

The currents are estimates (effective masses, parabolic bands, no scattering
or interface roughness); qualification follows the applicable standards and
lab practice, not this tool.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from solver.units import BOLTZMANN_EV_K, EV_TO_J, HBAR_J_S, M0_KG, NM_TO_M, Q_C

__all__ = [
    "IMPACT_FORMS",
    "SubbandCurrent",
    "channel_subband_current",
    "solution_stack_barrier",
    "subband_current_density",
    "transit_impact_frequency_Hz",
    "wavefunction_impact_frequency_Hz",
    "interface_amplitude",
    "net_emission_factor",
]

IMPACT_FORMS = ("transit-time", "wavefunction")
FIT_DEPTH_NM = 0.1  # depth of the samples behind the interface slope of psi (wavefunction form)


def _readonly(values, dtype=float) -> np.ndarray:
    a = np.array(values, dtype=dtype)
    a.flags.writeable = False
    return a


# --------------------------------------------------------------------- impact frequencies
def transit_impact_frequency_Hz(z_nm, u_eV, energy_eV, mass, *, end_nm=None) -> np.ndarray:
    """Semiclassical impact frequency on the wall at ``z_nm[0]`` (module docstring).

    ``z_nm`` increasing from the wall into the well, ``u_eV`` the band edge at
    those nodes (linear in between), ``energy_eV`` one energy or an array,
    ``mass`` the quantization mass (m0). The round trip runs from the wall to
    the first turning point; with none before ``end_nm`` (default: the last
    node) the carrier is reflected there (a second hard wall, e.g. the end of a
    quantum box). 0 where U(z_0) >= E (no classically allowed region at the
    wall). Returns f in Hz, shaped like ``energy_eV``.
    """
    z = np.asarray(z_nm, dtype=float)
    u = np.asarray(u_eV, dtype=float)
    if z.ndim != 1 or z.size < 2 or u.shape != z.shape:
        raise ValueError("transit_impact_frequency_Hz: z_nm and u_eV must be 1-D arrays of equal length >= 2")
    if np.any(np.diff(z) <= 0) or not np.all(np.isfinite(z)) or not np.all(np.isfinite(u)):
        raise ValueError("transit_impact_frequency_Hz: z_nm must be finite and strictly increasing, u_eV finite")
    if not (np.isfinite(mass) and mass > 0):
        raise ValueError(f"transit_impact_frequency_Hz: mass must be > 0 (units of m0), got {mass!r}")
    if end_nm is not None:
        keep = z <= float(end_nm)
        if keep.sum() < 2:
            raise ValueError(f"transit_impact_frequency_Hz: end_nm = {end_nm} leaves fewer than two nodes")
        z, u = z[keep], u[keep]
    e = np.asarray(energy_eV, dtype=float)
    h = np.diff(z)
    out = np.empty(e.size)
    for n, E in enumerate(e.ravel()):
        w = E - u  # kinetic energy at the nodes, eV
        if not w[0] > 0:
            out[n] = 0.0
            continue
        closed = np.flatnonzero(w <= 0)
        last = closed[0] if closed.size else w.size - 1  # node ending the allowed region
        a, b = w[:last], w[1:last + 1]
        full = 2.0 * h[:last] / (np.sqrt(a) + np.sqrt(np.maximum(b, 0.0)))
        if closed.size:  # the interval holding the turning point: its allowed part only
            j = last - 1
            part = h[j] * a[-1] / (a[-1] - b[-1])
            full[-1] = 2.0 * part / math.sqrt(a[-1])
        integral = float(np.sum(full))  # nm / sqrt(eV)
        tau = 2.0 * math.sqrt(mass * M0_KG / (2.0 * EV_TO_J)) * integral * NM_TO_M
        out[n] = 1.0 / tau
    return out.reshape(e.shape)


def wavefunction_impact_frequency_Hz(psi_nm, dpsi_nm, energy_eV, edge_eV, mass) -> np.ndarray:
    """Impact frequency from the wavefunction at the interface (module docstring):
    f = hbar (k^2 psi^2 + psi'^2) / (4 m m0 k), k = sqrt(2 m m0 (E - edge)) / hbar.

    ``psi_nm`` (nm^-1/2) and ``dpsi_nm`` (nm^-3/2, the channel-side slope into
    the well) of a state normalised to 1 along the quantization axis,
    ``edge_eV`` the band edge at the channel side of the interface, ``mass``
    the quantization mass (m0). 0 where E <= edge. Arrays broadcast."""
    psi = np.asarray(psi_nm, float) * NM_TO_M ** -0.5
    dpsi = np.asarray(dpsi_nm, float) * NM_TO_M ** -1.5
    m = np.asarray(mass, float) * M0_KG
    kin = (np.asarray(energy_eV, float) - np.asarray(edge_eV, float)) * EV_TO_J
    k = np.sqrt(2.0 * m * np.maximum(kin, 0.0)) / HBAR_J_S
    with np.errstate(divide="ignore", invalid="ignore"):
        f = HBAR_J_S * (k * k * psi * psi + dpsi * dpsi) / (4.0 * m * k)
    return np.where(kin > 0, f, 0.0)


def interface_amplitude(z_nm, psi2_nm, fit_nm=FIT_DEPTH_NM) -> tuple[float, float]:
    """(psi, dpsi/dz) at z_nm[0] from |psi|^2 samples behind it (z increasing).

    psi = sqrt(|psi|^2) (a state keeps one sign between the interface and its
    first node); the slope is that of the least-squares parabola through the
    samples within ``fit_nm`` of the interface (at least three)."""
    z = np.asarray(z_nm, float)
    p = np.sqrt(np.maximum(np.asarray(psi2_nm, float), 0.0))
    n = max(3, int(np.count_nonzero(z - z[0] <= fit_nm)))
    zz, pp = z[:n] - z[0], p[:n]
    c = np.polyfit(zz, pp, 2)
    return float(np.polyval(c, 0.0)), float(c[1])


# ------------------------------------------------------------------------ current kernel
def _log_softplus(x):
    """log(ln(1 + e^x)), stable for very negative x (where it is x)."""
    x = np.asarray(x, float)
    with np.errstate(divide="ignore"):
        return np.where(x < -30.0, x, np.log(np.logaddexp(0.0, np.maximum(x, -30.0))))


def net_emission_factor(energy_eV, fermi_emitter_eV, fermi_collector_eV, temperature_K) -> np.ndarray:
    """1 - ln(1 + e^{(E_Fc - E)/kT}) / ln(1 + e^{(E_Fe - E)/kT}): the part of a
    subband's population whose emission is not balanced by the collector's
    carriers at the same energy (detailed balance; module docstring)."""
    if not (np.isfinite(temperature_K) and temperature_K > 0):
        raise ValueError(f"temperature_K must be finite and > 0, got {temperature_K!r}")
    kT = BOLTZMANN_EV_K * temperature_K
    e = np.asarray(energy_eV, float)
    ratio_ln = _log_softplus((fermi_collector_eV - e) / kT) - _log_softplus((fermi_emitter_eV - e) / kT)
    return -np.expm1(ratio_ln) + 0.0  # + 0.0: a balanced population reports 0, not -0


def subband_current_density(barrier, energy_eV, population_cm2, impact_frequency_Hz, *, model="exact",
                            fermi_emitter_eV=None, fermi_collector_eV=None, temperature_K=None) -> np.ndarray:
    """Per-subband current J_i = q N_i f_i T(E_i), A/cm^2 (positive: emission
    from the left lead of ``barrier``, the emitter).

    ``energy_eV`` (on the Barrier's scale), ``population_cm2`` and
    ``impact_frequency_Hz`` are arrays of equal shape. ``model`` "exact" or
    "wkb" (or a callable T(barrier, energy_eV)). With ``fermi_emitter_eV``,
    ``fermi_collector_eV`` and ``temperature_K`` (all three or none) the
    populations are reduced by the collector's back-flow (`net_emission_factor`).
    """
    from solver.tunneling.current import _transmission_model

    e = np.asarray(energy_eV, float)
    n = np.asarray(population_cm2, float)
    f = np.asarray(impact_frequency_Hz, float)
    if not (e.shape == n.shape == f.shape):
        raise ValueError(f"subband_current_density: energy_eV, population_cm2 and impact_frequency_Hz must "
                         f"have one shape, got {e.shape}, {n.shape}, {f.shape}")
    if np.any(~np.isfinite(n)) or np.any(n < 0):
        raise ValueError("subband_current_density: population_cm2 must be finite and >= 0")
    if np.any(~np.isfinite(f)) or np.any(f < 0):
        raise ValueError("subband_current_density: impact_frequency_Hz must be finite and >= 0")
    given = [v is not None for v in (fermi_emitter_eV, fermi_collector_eV, temperature_K)]
    if any(given) and not all(given):
        raise ValueError("subband_current_density: give fermi_emitter_eV, fermi_collector_eV and "
                         "temperature_K together, or none of them")
    if e.size == 0:
        return np.zeros(e.shape)
    t = np.asarray(_transmission_model(model)(barrier, e), float)
    factor = 1.0
    if all(given):
        factor = net_emission_factor(e, float(fermi_emitter_eV), float(fermi_collector_eV), float(temperature_K))
    return Q_C * n * f * t * factor


# --------------------------------------------------------------------------- the solution
def _carrier_flip(carrier):
    if carrier not in ("electron", "hole"):
        raise ValueError(f"carrier must be 'electron' or 'hole', got {carrier!r}")
    return 1.0 if carrier == "electron" else -1.0


def solution_stack_barrier(case, solution, carrier: str = "electron"):
    """The StackBarrier of the solution's stack for emission of ``carrier`` from
    the channel, with the band edges of the solution's own layers (planar;
    module docstring) and the classical 3-D channel lead of `stack_barrier`.
    Energies with the channel Fermi level at 0 (hole picture for holes)."""
    from solver.tunneling.barrier import Barrier
    from solver.tunneling.stack import stack_barrier, stack_data, state_from_solution

    flip = _carrier_flip(carrier)
    data = stack_data(case)
    sb = stack_barrier(data, state_from_solution(data, solution), carrier=carrier, emitter="channel")
    if solution.geometry != "planar":
        return sb  # the ln r pieces of the stack electrostatics
    ef = float(solution.fermi_level_eV)
    x = np.asarray(solution.x_nm, float)
    phi = np.asarray(solution.potential_V, float)
    bounds = np.asarray(solution.interfaces_nm, float)  # gate/diel, ..., diel/channel
    pairs = solution.layer_conduction_band_eV if carrier == "electron" else solution.layer_valence_band_eV
    thick, u0, u1, mass = [], [], [], []
    for k, layer in enumerate(case.layers):
        lo, hi = bounds[k], bounds[k + 1]
        start, end = (flip * (v - ef) for v in pairs[k])
        m = layer.material.electron_mass if carrier == "electron" else layer.material.hole_mass
        sigma, pos = float(layer.charge_cm2 or 0.0), float(layer.charge_position)
        if sigma != 0.0 and 0.0 < pos < 1.0:
            xs = lo + pos * (hi - lo)
            j = int(np.argmin(np.abs(x - xs)))
            # the kink node: the layer's band edge there from the potential (same material)
            mid = start + flip * (phi[np.argmin(np.abs(x - lo))] - phi[j])
            thick += [xs - lo, hi - xs]
            u0 += [start, mid]
            u1 += [mid, end]
            mass += [m, m]
        else:
            thick.append(hi - lo)
            u0.append(start)
            u1.append(end)
            mass.append(m)
    # along the flow: channel first
    barrier = Barrier(tuple(thick[::-1]), tuple(u1[::-1]), tuple(u0[::-1]), tuple(mass[::-1]),
                      left=sb.barrier.left, right=sb.barrier.right)
    return replace(sb, barrier=barrier)


@dataclass(frozen=True)
class SubbandCurrent:
    """Subband-resolved channel emission of one solution (arrays read-only).

    Per subband (the solution's subbands of ``carrier``, in its order):
    ``valley``, ``energy_eV`` (scale of Solution.subbands), ``population_cm2``,
    ``quantization_mass`` (m0), ``impact_frequency_Hz`` (the form named by
    ``impact``), ``impact_frequency_transit_Hz`` and
    ``impact_frequency_wavefunction_Hz`` (both forms), ``transmission`` and
    ``transmission_wkb`` at E_i, ``net_factor`` (detailed-balance back-flow,
    1 far from equilibrium), ``current_A_cm2`` and ``current_wkb_A_cm2``.
    Totals: ``total_A_cm2``, ``total_wkb_A_cm2``; the 3-D Tsu–Esaki estimate
    on the same barrier: ``tsu_esaki_A_cm2``, ``tsu_esaki_wkb_A_cm2`` (NaN when
    not computed). ``barrier``: the StackBarrier (3-D channel lead);
    ``emitter_edge_eV``: the channel band edge at the interface on its scale;
    ``population_total_cm2`` the listed subbands' carriers, ``sheet_cm2`` all
    carriers of that type in the channel (Solution). Currents per area of the
    channel surface, positive for emission from the channel; estimates.
    """

    carrier: str
    impact: str
    gate_V: float
    temperature_K: float
    valley: tuple
    energy_eV: np.ndarray
    population_cm2: np.ndarray
    quantization_mass: np.ndarray
    impact_frequency_Hz: np.ndarray
    impact_frequency_transit_Hz: np.ndarray
    impact_frequency_wavefunction_Hz: np.ndarray
    transmission: np.ndarray
    transmission_wkb: np.ndarray
    net_factor: np.ndarray
    current_A_cm2: np.ndarray
    current_wkb_A_cm2: np.ndarray
    total_A_cm2: float
    total_wkb_A_cm2: float
    tsu_esaki_A_cm2: float
    tsu_esaki_wkb_A_cm2: float
    emitter_edge_eV: float
    population_total_cm2: float
    sheet_cm2: float
    barrier: object


def _channel_side(solution, flip, ef):
    """(z_nm from the interface into the channel, band edge of the carrier on the
    Barrier scale at those nodes, node indices)."""
    x = np.asarray(solution.x_nm, float)
    phi = np.asarray(solution.potential_V, float)
    ec = np.asarray(solution.conduction_band_eV, float)
    ev = np.asarray(solution.valence_band_eV, float)
    if solution.geometry == "planar":
        xi = float(solution.interfaces_nm[-1])
        idx = np.flatnonzero(x >= xi - 1e-12)
        z = x[idx] - xi
    else:  # cylinder: the channel lies inside the first interface
        xi = float(solution.interfaces_nm[0])
        idx = np.flatnonzero(x <= xi + 1e-12)[::-1]
        z = xi - x[idx]
    inner = idx[z > 1e-9][0]  # a node of the channel itself: its affinity and gap
    chi = -(ec[inner] + phi[inner])
    gap = ec[inner] - ev[inner]
    band = -chi - phi[idx] if flip > 0 else -chi - gap - phi[idx]
    return z, flip * (band - ef), idx


def channel_subband_current(case, solution, *, carrier: str = "electron", impact: str = "transit-time",
                            tsu_esaki: bool = True, rtol: float = 1e-4) -> SubbandCurrent:
    """Subband-resolved emission current of ``carrier`` from the quantized
    channel of ``solution`` (of ``case``) through its dielectric stack
    (module docstring), with the 3-D Tsu–Esaki estimate on the same barrier
    when ``tsu_esaki``. ``impact``: "transit-time" (default) or
    "wavefunction" for the impact frequency that enters the current. A
    classical solution, or one without subbands of ``carrier``, gives no
    subbands and a subband current of 0."""
    from solver.tunneling.current import current_density
    from solver.tunneling.exact import transmission
    from solver.tunneling.barrier import Barrier
    from solver.tunneling.wkb import wkb_transmission

    flip = _carrier_flip(carrier)
    if impact not in IMPACT_FORMS:
        raise ValueError(f"impact must be one of {', '.join(map(repr, IMPACT_FORMS))}, got {impact!r}")
    sb = solution_stack_barrier(case, solution, carrier)
    ef = float(solution.fermi_level_eV)
    T = float(solution.temperature_K)
    z, u, idx = _channel_side(solution, flip, ef)
    edge = float(u[0])
    ch = case.channel
    valleys = ch.material.electron_valleys(ch.orientation) if carrier == "electron" else ch.material.hole_bands
    by_label = {v.label: v for v in valleys}
    psi2 = np.asarray(solution.wavefunctions, float)
    rows = []
    for k, (label, energy, pop) in enumerate(solution.subbands):
        v = by_label.get(label)
        if v is None:
            continue
        rows.append((k, v, float(energy), float(pop)))
    n = len(rows)
    arrays = {name: np.zeros(n) for name in ("e", "N", "m", "ft", "fw", "t", "tw", "fac", "j", "jw")}
    labels = []
    for r, (k, v, energy, pop) in enumerate(rows):
        e_b = flip * (energy - ef)  # Barrier scale
        u_v = u + v.offset_eV
        col = psi2[idx, k]
        support = np.flatnonzero(col > 0)
        end = float(z[support[-1]]) if support.size else None
        ft = float(transit_impact_frequency_Hz(z, u_v, e_b, v.quantization_mass,
                                               end_nm=end if end and end > z[1] else None))
        p0, dp0 = interface_amplitude(z, col)
        fw = float(wavefunction_impact_frequency_Hz(p0, dp0, e_b, edge + v.offset_eV, v.quantization_mass))
        bar = Barrier(sb.barrier.thickness_nm, sb.barrier.u_start_eV, sb.barrier.u_end_eV, sb.barrier.mass,
                      left=(edge + v.offset_eV, v.quantization_mass), right=sb.barrier.right)
        t = float(transmission(bar, e_b))
        tw = float(wkb_transmission(bar, e_b))
        fac = float(net_emission_factor(e_b, sb.fermi_left_eV, sb.fermi_right_eV, T))
        f = ft if impact == "transit-time" else fw
        labels.append(v.label)
        for name, value in zip(("e", "N", "m", "ft", "fw", "t", "tw", "fac"),
                               (energy, pop, v.quantization_mass, ft, fw, t, tw, fac)):
            arrays[name][r] = value
        arrays["j"][r] = Q_C * pop * f * t * fac
        arrays["jw"][r] = Q_C * pop * f * tw * fac
    j3 = j3w = math.nan
    if tsu_esaki:
        j3 = current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, T, model="exact", rtol=rtol)
        j3w = current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, T, model="wkb", rtol=rtol)
    f_used = arrays["ft"] if impact == "transit-time" else arrays["fw"]
    sheet = solution.electron_sheet_cm2 if carrier == "electron" else solution.hole_sheet_cm2
    return SubbandCurrent(
        carrier=carrier, impact=impact, gate_V=float(solution.gate_V), temperature_K=T, valley=tuple(labels),
        energy_eV=_readonly(arrays["e"]), population_cm2=_readonly(arrays["N"]),
        quantization_mass=_readonly(arrays["m"]), impact_frequency_Hz=_readonly(f_used),
        impact_frequency_transit_Hz=_readonly(arrays["ft"]),
        impact_frequency_wavefunction_Hz=_readonly(arrays["fw"]),
        transmission=_readonly(arrays["t"]), transmission_wkb=_readonly(arrays["tw"]),
        net_factor=_readonly(arrays["fac"]), current_A_cm2=_readonly(arrays["j"]),
        current_wkb_A_cm2=_readonly(arrays["jw"]),
        total_A_cm2=float(math.fsum(arrays["j"])), total_wkb_A_cm2=float(math.fsum(arrays["jw"])),
        tsu_esaki_A_cm2=float(j3), tsu_esaki_wkb_A_cm2=float(j3w), emitter_edge_eV=edge,
        population_total_cm2=float(math.fsum(arrays["N"])), sheet_cm2=float(sheet), barrier=sb,
    )
