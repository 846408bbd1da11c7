"""The cell stage: program, erase, ISPP and retention of a charge-trap cell.

The tunneling currents of the stack (exact Tsu–Esaki, `solver.tunneling`) are
turned into the time evolution of the charge stored in the trap layer and of
the threshold voltage. A first, deliberately simple model; every assumption is
listed here.

Stored charge and threshold shift
---------------------------------
1. The stored charge is one sheet in the trap layer (the layer named "trap",
   else the only layer whose material has a trap depth, normally Si3N4), at
   that layer's ``charge_position`` (0 gate side .. 1 channel side, default
   0.5, mid-layer). Q_t is its net density in q/cm^2 (negative for electrons).
   The case's ``charge_cm2`` of the trap layer is the stored charge at the
   start (0 = neutral cell); fixed charges of the other layers stay as given.
2. Threshold shift (physics-data Sec. 6 item 13; Sze & Ng 2007, Sec. 4.3):
   Delta V_T = -Q X / eps0, X the electrical distance from the gate to the
   sheet, planar sum t/eps, coaxial r_c sum ln(r_out/r_in)/eps (r_c the
   sheet's radius). V_T = V_T0 + Delta V_T, with V_T0 the threshold of the
   neutral cell: the gate voltage that bends the channel surface by 2 psi_B
   (classical, Sze & Ng Sec. 4.2), from the same surface-charge estimate as
   `tunneling.stack.stack_state`.
3. The stack must be blocking layer / trap layer / tunnel layer: one layer on
   each side of the trap layer (the currents below cross one layer).

Electrostatics
--------------
4. The fields follow from the stack electrostatics of `stack_state` with the
   stored charge as the trap layer's sheet (Gauss's law), the channel in the
   classical surface-charge estimate of `stack_state` (inversion under a
   positive gate for a p-type channel, accumulation under a negative one).
   With D_L the displacement at the channel, the gate voltage is
   V_G = V_G0(D_L) + Delta V_T(Q_t) exactly, V_G0 the relation of the neutral
   cell; so the tunnel-layer field is F_t = V_G0^-1(V_G - Delta V_T), and the
   blocking-layer field (at its gate side) is linear in F_t and Q_t. Stored
   electrons lower the tunnel field: injection limits itself, and steady-state
   ISPP gives Delta V_T / Delta V_pgm = 1 (Suh et al., IEEE JSSC 30, 1149
   (1995), from memory; common practice).

Charge balance (all fluxes as current densities, magnitudes in A/cm^2)
-----------------------------------------------------------------------
    q dQ_t/dt = - J_ce - J_ge + J_uc + J_ch + J_tc + J_tg + J_th

5. J_ce: electrons from the channel conduction band through the tunnel layer
   into the trap layer's conduction band (F_t > 0), `stack_barrier(carrier=
   "electron", emitter="channel", through="injecting-layer")`, exact
   Tsu–Esaki; every electron is captured (efficiency 1, assumed). Option
   ``capture="cross-section"``: the capture probability on the way across the
   layer is eta = 1 - exp(-sigma_c (N_T t - n)) (a straight crossing of the
   empty traps, sigma_c and N_T of the material, n the trapped electrons per
   area; common practice), the rest, J_uc = (1 - eta) J, crosses on to the far
   electrode (through the blocking layer in program: the gate-side "J_out").
6. J_ge: electrons from the gate through the blocking layer into the trap
   layer's conduction band (F_b < 0, erase), exact Tsu–Esaki, captured as in
   item 5 (it opposes erase).
7. J_ch: holes from the channel valence band through the tunnel layer into
   the trap layer's valence band (F_t < 0, erase), exact Tsu–Esaki
   (`carrier="hole"`); every hole is captured and recombines with a trapped
   electron (efficiency 1); with no electrons left it stays as a trapped hole
   (over-erase, Q_t > 0). Trapped holes do not escape.
8. J_tc, J_tg: trap-to-band tunneling of trapped electrons from the trap
   level E_c(sheet) - E_T through the rest of the trap layer and the tunnel
   (blocking) layer into the channel conduction band (the gate), rate
   nu exp(-2 int kappa dx) per electron (WKB at the trap energy over the
   forbidden parts, attempt frequency nu of the material;
   `tunneling.wkb.wkb_exponent`), times the empty fraction of the collecting
   states (Fermi–Dirac at the case temperature); zero where the trap level
   faces the channel's gap. Only the direct path counts: where the field
   tilts the trap layer's own conduction band below the trap level before
   the layer's face, the electron is emitted into that band and captured
   again (assumption 5), no net loss, and the rate is set to 0. This is the
   "J_out" of program (toward the gate) and a loss in erase and retention
   (toward the channel). A sheet at mid-layer keeps it small: the rest of
   the trap layer is part of the barrier.
9. J_th: thermal emission of trapped electrons at rate nu exp(-E_T/kT)
   (physics-data Sec. 3.4); optionally lowered by Poole–Frenkel,
   E_T - beta sqrt(F) with beta = sqrt(q^3/(pi eps0 eps_inf)) and F the
   larger trap-layer field next to the sheet (Sec. 6 item 14; off by
   default: the full lowering of an isolated Coulomb centre overstates it in
   a charged nitride). Emitted electrons are taken as lost to the electrodes
   (no re-capture), the usual first-order retention model.
10. Neglected: hole injection from the gate, trap filling with the default
   complete capture (the stored density is reported against N_T t; item 5
   gives the option), lateral migration, hole detrapping, stress-induced
   leakage, cycling damage.
11. Trap-depth distribution (retention): a Gaussian of width sigma around
   E_T, integrated by Gauss–Hermite quadrature (``spread_points`` nodes); each
   node a population with its own thermal and tunneling rates, all filled in
   proportion at the start of the retention run. Program and erase use the
   single depth E_T.
12. Recombination switch: an injected hole recombines with a trapped electron
   with weight n/(n + n_s) and is trapped with weight n_s/(n + n_s), n_s =
   1e9 q/cm^2 (about 0.3 mV of V_T) keeping the balance smooth for the implicit
   integrator; electrons injected into a trap layer holding holes recombine
   the same way.
13. Temperature: the tables (tunneling currents, trap-to-band rates with
   their Fermi factors, the channel electrostatics) are those of the case
   temperature; a retention run at another temperature changes the thermal
   emission only (elastic tunneling depends weakly on T).

Numerics
--------
All current densities are tabulated once per cell on a grid of the field in
the injecting layer (0.25 MV/cm steps up to ``field_limit_MV_cm``; exact
Tsu–Esaki per point through `current_sweep`, WKB for the trap-to-band rates)
and interpolated in log space (cubic spline of ln J resampled on a fine grid,
then linear interpolation) inside the time integration, which runs
`scipy.integrate.solve_ivp` (Radau, implicit, for the stiff self-limiting
balance) over ln t with rtol 1e-6. A transient starts at t = 1e-15 s: the
charge any current below 1e4 A/cm^2 moves before that is < 1e8 q/cm^2 (< 0.03 mV on
the demo cells).
An operation whose fields leave the table raises CaseError naming the
voltage (the table limit is far above dielectric breakdown, ~15-20 MV/cm).
The exact current oscillates slightly with the field above the
Fowler–Nordheim onset (interference in the tunnel layer, collected in the
trap layer's band); V_T(t) shows it as faint changes of slope.

Arrhenius acceleration (JESD218 bake equivalences, physics-data Sec. 5.4):
AF = exp[(E_a/k)(1/T_use - 1/T_bake)].

Simulated program/erase speed, retention and endurance are estimates;
qualification follows the applicable standards (JEDEC JESD47, JESD22-A117,
JESD218) and lab practice, not this tool.
"""
from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field, replace
from types import MappingProxyType

import numpy as np

from solver.errors import CaseError, ConvergenceError, ConvergenceRecord
from solver.units import BOLTZMANN_EV_K, EPSILON0_F_M, NM_TO_M, PER_CM2_TO_PER_M2, Q_C

__all__ = [
    "CAUTION",
    "SECONDS_PER_YEAR",
    "BREAKDOWN_FIELD_MV_CM",
    "CellSettings",
    "Cell",
    "CellTransient",
    "IsppResult",
    "CellSummary",
    "prepare_cell",
    "trap_layer_index",
    "threshold_shift_V",
    "cell_threshold_shift_V",
    "thermal_emission_rate_Hz",
    "thermal_emission_time_s",
    "acceleration_factor",
    "equivalent_time_s",
    "program",
    "erase",
    "ispp",
    "retention",
    "design_window",
]

from solver.caution import CAUTION  # noqa: E402  (the one caution text of the project)

SECONDS_PER_YEAR = 365.25 * 86400.0  # Julian year
# Fields above this in a thin SiO2-like layer are beyond intrinsic breakdown (~10-20 MV/cm,
# common practice, from memory); the command line notes operations that reach it.
BREAKDOWN_FIELD_MV_CM = 20.0
START_S = 1e-15  # transients start here (see the module docstring)
RECOMBINATION_SCALE_CM2 = 1e9  # n_s of item 12
CHARGE_UNIT_CM2 = 1e12  # the integrator works in units of 1e12 q/cm^2
CAPTURE_MODELS = ("complete", "cross-section")
FLUX_NAMES = ("channel_electrons", "gate_electrons", "uncaptured_electrons", "channel_holes", "trap_to_channel",
              "trap_to_gate", "thermal_emission")
FLUX_SIGNS = MappingProxyType({"channel_electrons": -1, "gate_electrons": -1, "uncaptured_electrons": +1,
                               "channel_holes": +1, "trap_to_channel": +1, "trap_to_gate": +1,
                               "thermal_emission": +1})
FLUX_DESCRIPTIONS = MappingProxyType({
    "channel_electrons": "electrons injected from the channel through the tunnel layer",
    "gate_electrons": "electrons injected from the gate through the blocking layer",
    "uncaptured_electrons": "injected electrons crossing the trap layer uncaptured, on to the far electrode",
    "channel_holes": "holes injected from the channel through the tunnel layer (recombine or trapped)",
    "trap_to_channel": "trap-to-band tunneling of trapped electrons into the channel",
    "trap_to_gate": "trap-to-band tunneling of trapped electrons into the gate",
    "thermal_emission": "thermal emission of trapped electrons (lost to the electrodes)",
})
_LN_FLOOR = -700.0  # ln of a current too small to matter (A/cm^2)


def _bad(message: str) -> CaseError:
    return CaseError(message)


def _readonly(a) -> np.ndarray:
    arr = np.array(a, dtype=float)
    arr.flags.writeable = False
    return arr


# ------------------------------------------------------------------ closed forms


def threshold_shift_V(charge_cm2, thickness_nm, permittivity, layer: int, position: float = 0.5, *,
                      channel_radius_nm: float | None = None):
    """Threshold shift (V) by a sheet of ``charge_cm2`` (q/cm^2, negative for
    electrons) in layer ``layer`` of a stack listed gate first, at
    ``position`` (0 gate side .. 1 channel side) of that layer.

    Planar: -Q X/eps0, X = sum t/eps from the gate to the sheet; coaxial
    (``channel_radius_nm`` given, layers outward from the channel):
    -Q r_c sum ln(r_out/r_in)/eps / eps0 (physics-data Sec. 6 item 13).
    """
    t = np.asarray(thickness_nm, float)
    eps = np.asarray(permittivity, float)
    if not 0 <= layer < t.size:
        raise ValueError(f"layer must be in 0..{t.size - 1}, got {layer!r}")
    if not 0.0 <= position <= 1.0:
        raise ValueError(f"position must lie in [0, 1], got {position!r}")
    if channel_radius_nm is None:
        x_nm = float(np.sum(t[:layer] / eps[:layer]) + position * t[layer] / eps[layer])
    else:
        # boundaries gate first: r_gate ... r_0
        r = float(channel_radius_nm) + np.concatenate(([0.0], np.cumsum(t[::-1])))[::-1]
        r_out, r_in = r[layer], r[layer + 1]
        r_c = r_out - position * (r_out - r_in)
        x_nm = r_c * (float(np.sum(np.log(r[:layer] / r[1:layer + 1]) / eps[:layer]))
                      + math.log(r_out / r_c) / eps[layer])
    q = np.asarray(charge_cm2, float) * PER_CM2_TO_PER_M2 * Q_C
    return -q * x_nm * NM_TO_M / EPSILON0_F_M


def trap_layer_index(case) -> int:
    """Index of the trap layer: the layer named "trap", else the only layer whose
    material has a trap depth. CaseError if there is none (or several)."""
    names = [layer.name for layer in case.layers]
    if "trap" in names:
        i = names.index("trap")
        if case.layers[i].material.trap_depth_eV is None:
            raise _bad(f"layers.trap.material: {case.layers[i].material.name!r} has no trap_depth_eV; "
                       "give it as a material override ([materials.NAME] trap_depth_eV = ...)")
        return i
    with_traps = [i for i, layer in enumerate(case.layers) if layer.material.trap_depth_eV is not None]
    if len(with_traps) == 1:
        return with_traps[0]
    if not with_traps:
        raise _bad(f"layers: no trap layer among {names}; name one layer \"trap\" or use a material "
                   "with trap_depth_eV (e.g. 'Si3N4')")
    raise _bad(f"layers: several layers have trap parameters ({', '.join(names[i] for i in with_traps)}); "
               "name the storage layer \"trap\"")


def cell_threshold_shift_V(case, charge_cm2):
    """Delta V_T (V) of ``charge_cm2`` (q/cm^2) stored in the case's trap layer."""
    i = trap_layer_index(case)
    radius = case.geometry.channel_radius_nm if case.geometry.kind == "cylindrical" else None
    return threshold_shift_V(charge_cm2, [layer.thickness_nm for layer in case.layers],
                             [layer.material.relative_permittivity for layer in case.layers], i,
                             case.layers[i].charge_position, channel_radius_nm=radius)


def _poole_frenkel_beta_eV(optical_permittivity: float) -> float:
    """beta_PF in eV per sqrt(V/m): sqrt(q^3/(pi eps0 eps_inf)) / q (Sze & Ng 2007, Ch. 6)."""
    return math.sqrt(Q_C / (math.pi * EPSILON0_F_M * optical_permittivity))


def thermal_emission_rate_Hz(trap_depth_eV, temperature_K, attempt_frequency_Hz=1e13, *,
                             field_MV_cm=0.0, optical_permittivity=None):
    """nu exp(-E/kT) (1/s), E = trap_depth_eV, lowered by Poole–Frenkel
    beta sqrt(F) (not below 0) when ``optical_permittivity`` is given
    (physics-data Sec. 3.4, Sec. 6 item 14)."""
    depth = np.asarray(trap_depth_eV, float)
    if optical_permittivity is not None:
        f = np.abs(np.asarray(field_MV_cm, float)) * 1e8
        # a barrier lowered to nothing leaves the attempt frequency: rate <= nu
        depth = np.maximum(depth - _poole_frenkel_beta_eV(optical_permittivity) * np.sqrt(f), 0.0)
    return attempt_frequency_Hz * np.exp(-depth / (BOLTZMANN_EV_K * np.asarray(temperature_K, float)))


def thermal_emission_time_s(trap_depth_eV, temperature_K, attempt_frequency_Hz=1e13):
    """tau = exp(E_T/kT) / nu (s)."""
    return 1.0 / thermal_emission_rate_Hz(trap_depth_eV, temperature_K, attempt_frequency_Hz)


def acceleration_factor(activation_eV, use_K, stress_K):
    """Arrhenius AF = exp[(E_a/k)(1/T_use - 1/T_stress)] (JESD218 / JESD47 practice)."""
    return np.exp(np.asarray(activation_eV, float) / BOLTZMANN_EV_K
                  * (1.0 / np.asarray(use_K, float) - 1.0 / np.asarray(stress_K, float)))


def equivalent_time_s(time_s, activation_eV, use_K, stress_K):
    """Time at ``stress_K`` equivalent to ``time_s`` at ``use_K`` (time / AF)."""
    return np.asarray(time_s, float) / acceleration_factor(activation_eV, use_K, stress_K)


# ------------------------------------------------------------------ settings and tables


@dataclass(frozen=True)
class CellSettings:
    """Model switches and numerical settings of the cell stage (see module docstring).

    field_limit_MV_cm : largest |field| tabulated in the injecting layers
    field_step_MV_cm : table spacing
    rtol : relative tolerance of the time integration (solve_ivp)
    current_rtol : relative tolerance of each Tsu–Esaki integral
    trap_spread_eV : Gaussian width sigma of the trap depths (retention; 0 = one depth)
    spread_points : Gauss–Hermite nodes for the spread
    poole_frenkel : Poole–Frenkel lowering of the thermal emission
    capture : "complete" (every injected electron is captured, the default) or
        "cross-section" (capture probability 1 - exp(-sigma_c (N_T t - n)) on the way
        across the trap layer, from the material's capture cross-section and trap
        density; the rest crosses on: trap filling slows programming)
    holes, gate_injection, trap_tunneling, thermal_emission : include these fluxes
    """

    field_limit_MV_cm: float = 25.0
    field_step_MV_cm: float = 0.25
    rtol: float = 1e-6
    current_rtol: float = 1e-4
    trap_spread_eV: float = 0.0
    spread_points: int = 31
    poole_frenkel: bool = False
    capture: str = "complete"
    holes: bool = True
    gate_injection: bool = True
    trap_tunneling: bool = True
    thermal_emission: bool = True

    def __post_init__(self):
        checks = (
            ("field_limit_MV_cm", self.field_limit_MV_cm, 2.0, 60.0),
            ("field_step_MV_cm", self.field_step_MV_cm, 0.01, 2.0),
            ("rtol", self.rtol, 1e-12, 1e-2),
            ("current_rtol", self.current_rtol, 1e-8, 1e-2),
            ("trap_spread_eV", self.trap_spread_eV, 0.0, 1.0),
        )
        for name, v, lo, hi in checks:
            if not (isinstance(v, numbers.Real) and math.isfinite(v) and lo <= v <= hi):
                raise _bad(f"cell.{name}: {v!r} is out of range; allowed {lo:g} .. {hi:g}")
        if self.field_limit_MV_cm < 4.0 * self.field_step_MV_cm:
            raise _bad(f"cell.field_step_MV_cm: {self.field_step_MV_cm!r} leaves fewer than 4 table fields up to "
                       f"field_limit_MV_cm = {self.field_limit_MV_cm!r}; allowed step <= limit / 4")
        if self.capture not in CAPTURE_MODELS:
            raise _bad(f"cell.capture: {self.capture!r}; allowed {', '.join(map(repr, CAPTURE_MODELS))}")
        if not (isinstance(self.spread_points, numbers.Integral) and 1 <= self.spread_points <= 64):
            raise _bad(f"cell.spread_points: {self.spread_points!r}; allowed an integer 1 .. 64")


class _LogTable:
    """ln J(F) on a coarse grid -> cubic spline -> fine grid, linear interpolation.

    Fields up to the last non-positive entry of the grid give 0. Outside the
    grid the value is 0: below its first field the injection
    currents are negligible (< 1e-40 A/cm^2 on the demo cells), beyond its end
    the callers have raised already (`Cell.check_fields`)."""

    def __init__(self, field, value, refine=8):
        from scipy.interpolate import CubicSpline

        f = np.asarray(field, float)
        v = np.asarray(value, float)
        lnv = np.maximum(np.log(np.maximum(v, 1e-300)), _LN_FLOOR)
        fine = np.linspace(f[0], f[-1], (f.size - 1) * refine + 1)
        ln = np.full(fine.size, _LN_FLOOR)
        # the spline runs over the positive tail only: a zero or negative entry (net
        # back-flow at a low field) is a jump of hundreds in ln J that a cubic spline
        # would carry as ringing into the fields beyond it
        bad = np.flatnonzero(~(v > 1e-300))
        first = 0 if bad.size == 0 else bad[-1] + 1
        if f.size - first >= 2:
            spline = CubicSpline(f[first:], lnv[first:])
            tail = fine >= f[first]
            ln[tail] = spline(fine[tail])
        self.field = fine
        self.ln = np.maximum(ln, _LN_FLOOR)
        self.coarse_field = f
        self.coarse_value = v

    def __call__(self, f):
        ln = np.interp(f, self.field, self.ln, left=_LN_FLOOR, right=_LN_FLOOR)
        return np.where(ln <= _LN_FLOOR + 1.0, 0.0, np.exp(ln))


@dataclass(frozen=True, eq=False)
class Cell:
    """A prepared cell: the case's numbers and the tabulated fluxes.

    Built by `prepare_cell`; used by `program`, `erase`, `ispp`, `retention`.
    ``shift_V_per_cm2``: Delta V_T per stored q/cm^2 (V cm^2; negative charge
    raises V_T). Fields: ``tunnel`` at the tunnel layer's channel side,
    ``blocking`` at the blocking layer's gate side (signed along gate ->
    channel, positive for a positive gate).
    """

    title: str
    layer_names: tuple[str, ...]
    trap_layer: int
    tunnel_layer: int
    blocking_layer: int
    geometry: str
    temperature_K: float
    trap_depth_eV: float
    attempt_frequency_Hz: float
    trap_density_cm3: float | None
    trap_sheet_capacity_cm2: float | None
    capture_cross_section_cm2: float | None
    optical_permittivity: float | None
    initial_charge_cm2: float
    neutral_threshold_V: float
    shift_V_per_cm2: float
    settings: CellSettings
    table_field_MV_cm: np.ndarray  # the grid (both signs)
    table_gate_V: np.ndarray  # V_G0(F_t) of the neutral cell on the grid
    blocking_coefficients: tuple[float, float, float]  # F_b = c1 F_t + c2 Q + c0 (MV/cm, Q in q/cm^2)
    trap_field_coefficients: tuple[float, float]  # trap-layer field next to the sheet: a F_t (channel side), b F_b (gate side)
    tables: dict = field(repr=False)
    trap_tables: dict = field(repr=False)  # side -> (field grid, ln-rate per depth offset)
    depth_offsets_eV: np.ndarray = field(repr=False)
    build_seconds: float = 0.0

    # --- electrostatics
    def threshold_V(self, charge_cm2):
        return self.neutral_threshold_V + self.shift_V_per_cm2 * np.asarray(charge_cm2, float)

    def tunnel_field_MV_cm(self, gate_V, charge_cm2):
        u = np.asarray(gate_V, float) - self.shift_V_per_cm2 * np.asarray(charge_cm2, float)
        return np.interp(u, self.table_gate_V, self.table_field_MV_cm, left=-np.inf, right=np.inf)

    def blocking_field_MV_cm(self, tunnel_field_MV_cm, charge_cm2):
        c1, c2, c0 = self.blocking_coefficients
        return c1 * np.asarray(tunnel_field_MV_cm, float) + c2 * np.asarray(charge_cm2, float) + c0

    def fields_MV_cm(self, gate_V, charge_cm2):
        ft = self.tunnel_field_MV_cm(gate_V, charge_cm2)
        return ft, self.blocking_field_MV_cm(ft, charge_cm2)

    def check_fields(self, gate_V, charge_cm2, what: str):
        ft, fb = self.fields_MV_cm(gate_V, charge_cm2)
        lim = self.settings.field_limit_MV_cm
        if not (abs(ft) <= lim and abs(fb) <= lim):
            raise _bad(f"{what}: {gate_V:g} V with {charge_cm2:.3g} q/cm^2 stored puts "
                       f"{ft:.1f} MV/cm across the tunnel layer and {fb:.1f} MV/cm across the blocking layer, "
                       f"beyond the {lim:g} MV/cm table (far above dielectric breakdown); lower the voltage")

    # --- fluxes (A/cm^2 magnitudes) for one state
    def _trap_rates(self, side, field_MV_cm, idx):
        """Trap-to-band rates (1/s) of the depths ``idx`` (rows of depth_offsets_eV)."""
        grid, ln_rates = self.trap_tables[side]  # ln_rates: (depths, fields)
        out = np.array([np.interp(field_MV_cm, grid, ln_rates[i]) for i in idx])
        return np.where(out <= _LN_FLOOR + 1.0, 0.0, np.exp(out))

    def _thermal_rates(self, ft, fb, temperature_K, idx):
        # a node of a wide spread above the band edge is taken as a level at the band edge
        depths = np.maximum(self.trap_depth_eV + self.depth_offsets_eV[idx], 0.0)
        if self.settings.poole_frenkel and self.optical_permittivity:
            a, b = self.trap_field_coefficients[0], self.trap_field_coefficients[1]
            f = max(abs(a * ft), abs(b * fb))
            return thermal_emission_rate_Hz(depths, temperature_K, self.attempt_frequency_Hz,
                                            field_MV_cm=f, optical_permittivity=self.optical_permittivity)
        return thermal_emission_rate_Hz(depths, temperature_K, self.attempt_frequency_Hz)


def _trap_data(case):
    from solver.tunneling.stack import stack_data

    i = trap_layer_index(case)
    n = len(case.layers)
    if not 1 <= i <= n - 2:
        raise _bad(f"layers.{case.layers[i].name}: the trap layer is layer {i} of {n}; the cell model needs "
                   "one blocking layer before it (gate side) and one tunnel layer after it (channel side)")
    if n != 3:
        raise _bad(f"layers: {n} layers ({', '.join(l.name for l in case.layers)}); the cell model takes "
                   "exactly blocking / trap / tunnel (one layer on each side of the trap layer)")
    for j in (0, 2):
        if case.layers[j].charge_cm2 and 0.0 < case.layers[j].charge_position < 1.0:
            raise _bad(f"layers.{case.layers[j].name}.charge_cm2: a fixed sheet inside the "
                       f"{'blocking' if j == 0 else 'tunnel'} layer is not supported by the cell model; "
                       "put it at charge_position 0 or 1")
    mat = case.layers[i].material
    if mat.attempt_frequency_Hz is None:
        raise _bad(f"layers.{case.layers[i].name}.material: {mat.name!r} has no attempt_frequency_Hz; "
                   "give it as a material override")
    data = stack_data(case)
    q0 = float(data.charge_cm2[i])
    charges = list(data.charge_cm2)
    charges[i] = 0.0
    return i, replace(data, charge_cm2=tuple(charges)), q0


def _vacuum_at(state, k, frac):
    """Vacuum level inside segment k at fraction ``frac`` (0 gate side .. 1 channel side)."""
    v0, v1 = state.vacuum_level_eV[k], state.vacuum_level_eV[k + 1]
    if not state.cylindrical:
        return v0 + frac * (v1 - v0)
    r_out, r_in = state.segment_radius_nm[k], state.segment_radius_nm[k + 1]
    r = r_out - frac * (r_out - r_in)
    return v0 + (v1 - v0) * math.log(r_out / r) / math.log(r_out / r_in)


def _path_barrier(data, state, trap, position, side, pieces):
    """Barrier of the trap-to-band path from the sheet to the ``side`` electrode
    (listed along the flow); the trap layer's conduction band at the sheet, the
    collector's band edge and Fermi level, and the trap layer's conduction band
    at its face toward ``side`` (eV)."""
    from solver.tunneling.barrier import Barrier

    seg = list(state.segment_layer)
    ks = [k for k, li in enumerate(seg) if li == trap]
    if len(ks) != 1:
        raise ValueError("cell: the trap layer must be one segment in the table states")
    kt = ks[0]
    t_seg = state.segment_thickness_nm
    # (segment, frac_start, frac_end) pieces from the sheet toward the electrode
    if side == "channel":
        spans = [(kt, position, 1.0)] + [(k, 0.0, 1.0) for k in range(kt + 1, len(seg))]
    else:
        spans = [(kt, position, 0.0)] + [(k, 1.0, 0.0) for k in range(kt - 1, -1, -1)]
    thick, u0, u1, mass = [], [], [], []
    for k, fa, fb in spans:
        if fa == fb:
            continue
        li = seg[k]
        chi, m = data.affinity_eV[li], data.electron_mass[li]
        n_sub = pieces if state.cylindrical else 1
        fr = np.linspace(fa, fb, n_sub + 1)
        vals = [_vacuum_at(state, k, f) - chi for f in fr]
        for j in range(n_sub):
            thick.append(abs(fr[j + 1] - fr[j]) * t_seg[k])
            u0.append(vals[j])
            u1.append(vals[j + 1])
            mass.append(m)
    e_sheet = _vacuum_at(state, kt, position) - data.affinity_eV[trap]
    e_face = _vacuum_at(state, kt, 1.0 if side == "channel" else 0.0) - data.affinity_eV[trap]
    if side == "channel":
        right = (state.channel_conduction_eV, data.channel_electron_mass)
        fermi = 0.0
    else:
        fermi = -state.gate_V
        if data.gate_kind == "metal":
            right = (fermi - 5.0, 1.0)
        else:
            right = (state.vacuum_level_eV[0] - data.gate_affinity_eV, data.gate_electron_mass)
    left = (e_sheet - 10.0, data.electron_mass[trap])
    barrier = Barrier(tuple(thick), tuple(u0), tuple(u1), tuple(mass), left=left, right=right)
    return barrier, e_sheet, right[0], fermi, e_face


def _trap_ln_rates(data, state, trap, position, side, depths_eV, nu, kT, pieces=12):
    """ln(rate/Hz) of trap-to-band tunneling per trap depth at one state."""
    from solver.tunneling.wkb import wkb_exponent

    barrier, e_sheet, edge, fermi, e_face = _path_barrier(data, state, trap, position, side, pieces)
    energy = e_sheet - np.asarray(depths_eV, float)
    expo = np.atleast_1d(wkb_exponent(barrier, energy))
    # empty collector states: 1 - f = 1 / (1 + exp(-(E - E_F)/kT))
    ln_empty = -np.logaddexp(0.0, -(energy - fermi) / kT)
    ln = math.log(nu) - expo + ln_empty
    # direct tunneling only: the trap level must stay below the trap layer's own
    # conduction band up to its face (else the electron is emitted into that band
    # and captured again, assumption 5: no net loss)
    direct = (energy > edge) & (energy < e_face)
    return np.where(direct, np.maximum(ln, _LN_FLOOR), _LN_FLOOR)


def _gauss_hermite(sigma, points):
    """Offsets (eV) and weights (sum 1) of a Gaussian of width sigma."""
    if sigma == 0.0 or points == 1:
        return np.zeros(1), np.ones(1)
    x, w = np.polynomial.hermite_e.hermegauss(points)  # weight exp(-x^2/2)
    return sigma * x, w / w.sum()


def _neutral_threshold_V(data0):
    """Gate voltage at psi_s = 2 psi_B (n-type channel: -2 psi_B) of the neutral cell."""
    from scipy.optimize import brentq

    from solver.tunneling.stack import stack_state

    kT = BOLTZMANN_EV_K * data0.temperature_K
    ni = math.sqrt(data0.channel_conduction_dos_cm3 * data0.channel_valence_dos_cm3) * math.exp(
        -data0.channel_band_gap_eV / (2 * kT))
    net = data0.channel_acceptors_cm3 - data0.channel_donors_cm3
    if abs(net) <= ni:
        target = 0.0
    else:
        target = math.copysign(2.0 * kT * math.log(abs(net) / ni), net)

    def f(v):
        return stack_state(data0, gate_V=v).surface_potential_V - target

    lo, hi = -5.0, 5.0
    f_lo, f_hi = f(lo), f(hi)
    for _ in range(40):  # out to +-205 V, far beyond any threshold
        if f_lo <= 0.0 <= f_hi:
            return float(brentq(f, lo, hi, xtol=1e-9))
        if f_lo > 0.0:
            lo -= 5.0
            f_lo = f(lo)
        else:
            hi += 5.0
            f_hi = f(hi)
    raise ConvergenceError(f"cell: no gate voltage in {lo:g} .. {hi:g} V bends the channel by {target:.3f} V "
                           "(neutral threshold)", ConvergenceRecord(False, 40, (), "threshold bracket", "V"))


def prepare_cell(case, settings: CellSettings | None = None) -> Cell:
    """Tabulate the fluxes of ``case``'s cell once (see the module docstring)."""
    import time

    from solver.tunneling.current import current_sweep
    from solver.tunneling.stack import stack_barrier, stack_state

    t_start = time.perf_counter()
    s = settings or CellSettings()
    trap, data0, q0 = _trap_data(case)
    tunnel, block = trap + 1, trap - 1
    layer = case.layers[trap]
    mat = layer.material
    position = float(data0.charge_position[trap])
    kT = BOLTZMANN_EV_K * data0.temperature_K
    radius = data0.channel_radius_nm if data0.cylindrical else None

    shift = float(threshold_shift_V(1.0, data0.thickness_nm, data0.permittivity, trap, position,
                                    channel_radius_nm=radius))
    # linear relations, from the stack electrostatics itself
    def fields_of(d, v):
        st = stack_state(d, stack_V=v)
        return st.segment_field_MV_cm[-1], st.segment_field_gate_side_MV_cm[0]

    ft0, fb0 = fields_of(data0, 0.0)
    ft1, fb1 = fields_of(data0, 1.0)
    c1 = (fb1 - fb0) / (ft1 - ft0)
    c0 = fb0 - c1 * ft0
    probe = 1e12
    charged = list(data0.charge_cm2)
    charged[trap] = probe
    ftq, fbq = fields_of(replace(data0, charge_cm2=tuple(charged)), 0.0)
    c2 = (fbq - c1 * ftq - c0) / probe
    # trap-layer field next to the sheet per tunnel / blocking field (D continuous there)
    eps = data0.permittivity
    a_ch = eps[tunnel] / eps[trap]
    b_g = eps[block] / eps[trap]
    if data0.cylindrical:
        radii = data0.radii_nm
        r_sheet = radii[trap] - position * (radii[trap] - radii[trap + 1])
        a_ch *= radii[tunnel + 1] / r_sheet  # D r constant
        b_g *= radii[0] / r_sheet

    lim, step = s.field_limit_MV_cm, s.field_step_MV_cm
    pos_grid = np.arange(step, lim + 0.5 * step, step)
    grid = np.concatenate((-pos_grid[::-1], [0.0], pos_grid))

    # V_G0(F_t): the neutral cell's gate voltage for each tunnel field
    ch_states = [stack_state(data0, field_MV_cm=float(f), field_layer=tunnel, field_side="channel") for f in grid]
    gate_V = np.array([st.gate_V for st in ch_states])
    if not np.all(np.diff(gate_V) > 0):
        raise ConvergenceError("cell: the gate voltage of the neutral cell is not monotonic in the tunnel field",
                               ConvergenceRecord(False, 0, (), "V_G0(F_t) table", "V"))
    g_states = [stack_state(data0, field_MV_cm=float(f), field_layer=block, field_side="gate") for f in grid]

    def sweep(states, carrier, emitter):
        bars = [stack_barrier(data0, st, carrier=carrier, emitter=emitter, through="injecting-layer")
                for st in states]
        return current_sweep([b.barrier for b in bars], [b.fermi_left_eV for b in bars],
                             [b.fermi_right_eV for b in bars], data0.temperature_K, rtol=s.current_rtol)

    n0 = pos_grid.size + 1  # index of the first positive field (grid[pos_grid.size] = 0)
    tables = {"channel_electrons": _LogTable(pos_grid, sweep(ch_states[n0:], "electron", "channel"))}
    tables["channel_holes"] = _LogTable(pos_grid, sweep(ch_states[:n0 - 1][::-1], "hole", "channel")
                                        if s.holes else np.zeros(pos_grid.size))
    tables["gate_electrons"] = _LogTable(pos_grid, sweep(g_states[:n0 - 1][::-1], "electron", "gate")
                                         if s.gate_injection else np.zeros(pos_grid.size))

    # row 0: the single depth E_T (program, erase); rows 1..: the spread's nodes
    offsets = np.concatenate(([0.0], _gauss_hermite(s.trap_spread_eV, s.spread_points)[0]))
    depths = mat.trap_depth_eV + offsets
    nu = float(mat.attempt_frequency_Hz)
    trap_tables = {}
    for side, states in (("channel", ch_states), ("gate", g_states)):
        ln = np.array([_trap_ln_rates(data0, st, trap, position, side, depths, nu, kT) for st in states]).T
        trap_tables[side] = (grid, ln)

    capacity = None if mat.trap_density_cm3 is None else mat.trap_density_cm3 * layer.thickness_nm * 1e-7
    if s.capture == "cross-section" and (capacity is None or mat.capture_cross_section_cm2 is None):
        raise _bad(f"layers.{layer.name}.material: {mat.name!r} needs trap_density_cm3 and "
                   "capture_cross_section_cm2 for capture = 'cross-section'; give them as material overrides")
    return Cell(
        title=case.title, layer_names=tuple(data0.names), trap_layer=trap, tunnel_layer=tunnel,
        blocking_layer=block, geometry=data0.geometry, temperature_K=data0.temperature_K,
        trap_depth_eV=float(mat.trap_depth_eV), attempt_frequency_Hz=nu,
        trap_density_cm3=mat.trap_density_cm3, trap_sheet_capacity_cm2=capacity,
        capture_cross_section_cm2=mat.capture_cross_section_cm2,
        optical_permittivity=mat.optical_permittivity, initial_charge_cm2=q0,
        neutral_threshold_V=_neutral_threshold_V(data0), shift_V_per_cm2=shift, settings=s,
        table_field_MV_cm=_readonly(grid), table_gate_V=_readonly(gate_V),
        blocking_coefficients=(float(c1), float(c2), float(c0)),
        trap_field_coefficients=(float(a_ch), float(b_g)),
        tables=tables, trap_tables=trap_tables, depth_offsets_eV=_readonly(offsets),
        build_seconds=time.perf_counter() - t_start,
    )


# ------------------------------------------------------------------ transients


@dataclass(frozen=True, eq=False)
class CellTransient:
    """V_T(t) of one operation at a fixed gate voltage.

    time_s : output times (s); charge_cm2 : net stored charge (q/cm^2);
    threshold_V : V_T; tunnel_field_MV_cm, blocking_field_MV_cm : signed fields;
    currents_A_cm2 : {flux name: A/cm^2 magnitudes at the output times}
    (see FLUX_SIGNS for the direction); start_charge_cm2 / start_threshold_V :
    the state at t = 0; record : the integrator's record.
    """

    operation: str
    gate_V: float
    temperature_K: float
    time_s: np.ndarray
    charge_cm2: np.ndarray
    threshold_V: np.ndarray
    tunnel_field_MV_cm: np.ndarray
    blocking_field_MV_cm: np.ndarray
    currents_A_cm2: dict
    start_charge_cm2: float
    start_threshold_V: float
    record: ConvergenceRecord
    seconds: float = 0.0

    @property
    def final_charge_cm2(self) -> float:
        return float(self.charge_cm2[-1])

    @property
    def final_threshold_V(self) -> float:
        return float(self.threshold_V[-1])


def _times(duration_s, first_s, per_decade=10):
    if duration_s <= first_s:
        return np.array([float(duration_s)])
    n = max(2, int(round(per_decade * math.log10(duration_s / first_s))) + 1)
    t = np.geomspace(first_s, duration_s, n)
    t[-1] = duration_s
    return t


def _integrate(cell: Cell, operation, gate_V, duration_s, start_charge_cm2, temperature_K, times_s,
               weights=None, first_s=1e-9, spread=False):
    """Integrate the charge balance over ln t; the state is (electron populations
    per depth, trapped holes) in units of CHARGE_UNIT_CM2."""
    import time

    from scipy.integrate import solve_ivp

    t0 = time.perf_counter()
    if not (isinstance(duration_s, numbers.Real) and math.isfinite(duration_s) and duration_s > 0):
        raise _bad(f"{operation}.pulse_s: {duration_s!r}; allowed a duration > 0 s")
    if not math.isfinite(gate_V):
        raise _bad(f"{operation}.gate_V: {gate_V!r}; allowed a finite voltage")
    duration_s = float(duration_s)
    if not (math.isfinite(temperature_K) and 1.0 <= temperature_K <= 1000.0):
        raise _bad(f"{operation}.temperature_K: {temperature_K!r}; allowed 1 .. 1000 K")
    q_start = float(start_charge_cm2)
    cell.check_fields(gate_V, q_start, f"{operation}.gate_V")
    if times_s is None:
        first = min(first_s, duration_s)
        times_s = _times(duration_s, first)
    times_s = np.asarray(times_s, float)
    if np.any(times_s <= 0) or np.any(np.diff(times_s) <= 0) or times_s[-1] > duration_s * (1 + 1e-12):
        raise _bad(f"{operation}.times_s: must increase, > 0 and <= the duration")
    if times_s[-1] < duration_s * (1 - 1e-12):  # the transient always ends at the end of the pulse
        times_s = np.append(times_s, duration_s)
    if spread:
        offsets_w = _gauss_hermite(cell.settings.trap_spread_eV, cell.settings.spread_points)[1]
        idx = np.arange(1, cell.depth_offsets_eV.size)
    else:
        offsets_w = np.ones(1)
        idx = np.array([0])
    m = offsets_w.size
    unit = CHARGE_UNIT_CM2
    n_e = max(-q_start, 0.0) / unit
    p_h = max(q_start, 0.0) / unit
    y0 = np.concatenate((n_e * offsets_w, [p_h]))
    s = cell.settings
    per_unit = 1.0 / (Q_C * unit)  # A/cm^2 -> units of 1e12 q/cm^2 per s
    ns = RECOMBINATION_SCALE_CM2 / unit
    t_ = cell.tables
    if s.capture == "cross-section":
        sig_cap = cell.capture_cross_section_cm2 * cell.trap_sheet_capacity_cm2  # sigma_c N_T t
        cap_units = cell.trap_sheet_capacity_cm2 / unit

        def captured(ne):
            return -math.expm1(-sig_cap * max(1.0 - ne / cap_units, 0.0))
    else:
        def captured(ne):
            return 1.0

    def rates(y):
        n = np.maximum(y[:m], 0.0)
        p = max(y[m], 0.0)
        ne = float(n.sum())
        q = (p - ne) * unit
        ft, fb = cell.fields_MV_cm(gate_V, q)
        je = (float(t_["channel_electrons"](ft)) if ft > 0 else 0.0)
        jg = (float(t_["gate_electrons"](-fb)) if (fb < 0 and s.gate_injection) else 0.0)
        jh = (float(t_["channel_holes"](-ft)) if (ft < 0 and s.holes) else 0.0)
        esc_ch = cell._trap_rates("channel", ft, idx) if s.trap_tunneling else np.zeros(m)
        esc_g = cell._trap_rates("gate", fb, idx) if s.trap_tunneling else np.zeros(m)
        esc_th = cell._thermal_rates(ft, fb, temperature_K, idx) if s.thermal_emission else np.zeros(m)
        return n, p, ne, ft, fb, je, jg, jh, esc_ch, esc_g, esc_th

    def rhs(tau, y):
        t = math.exp(tau)
        n, p, ne, ft, fb, je, jg, jh, e1, e2, e3 = rates(y)
        inj_e = (je + jg) * per_unit * captured(ne)
        inj_h = jh * per_unit
        fe = ne / (ne + ns)  # share of holes recombining with electrons (item 12)
        fp = p / (p + ns)  # share of electrons recombining with holes
        share = n / ne if ne > 0 else offsets_w
        dn = inj_e * (1.0 - fp) * offsets_w - inj_h * fe * share - n * (e1 + e2 + e3)
        dp = inj_h * (1.0 - fe) - inj_e * fp
        return t * np.concatenate((dn, [dp]))

    tau = np.log(times_s)
    tau0 = math.log(min(START_S, times_s[0] * 0.5))
    sol = solve_ivp(rhs, (tau0, tau[-1]), y0, method="Radau", t_eval=tau, rtol=s.rtol,
                    atol=1e-9, dense_output=False)
    if not sol.success:
        record = ConvergenceRecord(False, int(sol.nfev), (), f"solve_ivp: {sol.message}", "1")
        raise ConvergenceError(f"{operation}: time integration failed at {gate_V:g} V: {sol.message}", record)
    y = sol.y
    charge = (np.maximum(y[m], 0.0) - np.maximum(y[:m], 0.0).sum(axis=0)) * unit
    ft_all, fb_all = cell.fields_MV_cm(gate_V, charge)
    lim = s.field_limit_MV_cm
    if not (np.all(np.abs(ft_all) <= lim) and np.all(np.abs(fb_all) <= lim)):
        raise _bad(f"{operation}.gate_V: {gate_V:g} V drives up to {np.max(np.abs(ft_all)):.2f} MV/cm across the "
                   f"tunnel layer and {np.max(np.abs(fb_all)):.2f} MV/cm across the blocking layer during the pulse, "
                   f"beyond the {lim:g} MV/cm table (far above dielectric breakdown); lower the voltage")
    currents = {k: np.empty(times_s.size) for k in FLUX_NAMES}
    for i in range(times_s.size):
        n, p, ne, ft, fb, je, jg, jh, e1, e2, e3 = rates(y[:, i])
        currents["channel_electrons"][i] = je
        currents["gate_electrons"][i] = jg
        currents["uncaptured_electrons"][i] = (je + jg) * (1.0 - captured(ne))
        currents["channel_holes"][i] = jh
        nq = n * unit * Q_C
        currents["trap_to_channel"][i] = float(np.sum(nq * e1))
        currents["trap_to_gate"][i] = float(np.sum(nq * e2))
        currents["thermal_emission"][i] = float(np.sum(nq * e3))
    record = ConvergenceRecord(True, int(sol.nfev), (), f"solve_ivp Radau over ln t, rtol {s.rtol:g}: "
                               f"{sol.message}", "1", {"nfev": int(sol.nfev), "njev": int(sol.njev),
                                                       "nlu": int(sol.nlu)})
    return CellTransient(
        operation=operation, gate_V=float(gate_V), temperature_K=float(temperature_K),
        time_s=_readonly(times_s), charge_cm2=_readonly(charge), threshold_V=_readonly(cell.threshold_V(charge)),
        tunnel_field_MV_cm=_readonly(ft_all), blocking_field_MV_cm=_readonly(fb_all),
        currents_A_cm2=MappingProxyType({k: _readonly(v) for k, v in currents.items()}),
        start_charge_cm2=q_start, start_threshold_V=float(cell.threshold_V(q_start)), record=record,
        seconds=time.perf_counter() - t0,
    )


def _start(cell, start_charge_cm2):
    q = cell.initial_charge_cm2 if start_charge_cm2 is None else float(start_charge_cm2)
    if not math.isfinite(q):
        raise _bad(f"start_charge_cm2: {start_charge_cm2!r}; allowed a finite charge (q/cm^2)")
    return q


def program(cell: Cell, gate_V: float, pulse_s: float = 1e-2, *, start_charge_cm2=None, times_s=None,
            temperature_K=None) -> CellTransient:
    """V_T(t) during a gate pulse of ``gate_V`` (V) lasting ``pulse_s``, from the
    case's stored charge (or ``start_charge_cm2``). Output times from 1e-9 s (or
    ``times_s``, to which the end of the pulse is added when it stops short)."""
    if not (isinstance(gate_V, numbers.Real) and gate_V > 0):
        raise _bad(f"program.gate_V: {gate_V!r}; a program pulse needs a positive gate voltage")
    return _integrate(cell, "program", float(gate_V), pulse_s, _start(cell, start_charge_cm2),
                      cell.temperature_K if temperature_K is None else float(temperature_K), times_s)


def erase(cell: Cell, gate_V: float, pulse_s: float = 1e-3, *, start_charge_cm2=None, times_s=None,
          temperature_K=None) -> CellTransient:
    """V_T(t) during an erase pulse (negative ``gate_V``, V) from ``start_charge_cm2``."""
    if not (isinstance(gate_V, numbers.Real) and gate_V < 0):
        raise _bad(f"erase.gate_V: {gate_V!r}; an erase pulse needs a negative gate voltage")
    return _integrate(cell, "erase", float(gate_V), pulse_s, _start(cell, start_charge_cm2),
                      cell.temperature_K if temperature_K is None else float(temperature_K), times_s)


def retention(cell: Cell, temperature_K: float, start_charge_cm2: float, *, duration_s=10 * SECONDS_PER_YEAR,
              gate_V: float = 0.0, times_s=None) -> CellTransient:
    """V_T(t) with the gate at ``gate_V`` (0 V: unbiased storage) at ``temperature_K``
    out to ``duration_s`` (10 years), trap depths spread as the settings say.
    The electrostatics and tunneling tables are those of the case temperature;
    the thermal emission uses ``temperature_K``."""
    if not (isinstance(temperature_K, numbers.Real) and 1.0 <= temperature_K <= 1000.0):
        raise _bad(f"retention.temperature_K: {temperature_K!r}; allowed 1 .. 1000 K")
    return _integrate(cell, "retention", float(gate_V), duration_s, float(start_charge_cm2),
                      float(temperature_K), times_s, first_s=1.0, spread=True)


@dataclass(frozen=True, eq=False)
class IsppResult:
    """Incremental step pulse programming: V_T after each pulse.

    gate_V : pulse voltages; threshold_V, charge_cm2 : after each pulse;
    max_tunnel_field_MV_cm : field at the start of each pulse;
    slope_V_per_V : least-squares slope of V_T against V over the last
    ``fit_steps`` pulses (steady state); start_threshold_V : before the first.
    """

    gate_V: np.ndarray
    pulse_s: float
    threshold_V: np.ndarray
    charge_cm2: np.ndarray
    max_tunnel_field_MV_cm: np.ndarray
    slope_V_per_V: float
    fit_steps: int
    start_threshold_V: float
    seconds: float = 0.0


def ispp(cell: Cell, start_V: float, step_V: float, pulse_s: float, count: int, *, start_charge_cm2=None,
         fit_steps: int | None = None) -> IsppResult:
    """A staircase of ``count`` pulses start_V, start_V + step_V, ... each ``pulse_s`` long."""
    import time

    t0 = time.perf_counter()
    if not (isinstance(count, numbers.Integral) and 2 <= count <= 1000):
        raise _bad(f"ispp.count: {count!r}; allowed an integer 2 .. 1000")
    if not (isinstance(step_V, numbers.Real) and 0 < step_V <= 5):
        raise _bad(f"ispp.step_V: {step_V!r}; allowed 0 < step <= 5 V")
    if not (isinstance(start_V, numbers.Real) and start_V > 0):
        raise _bad(f"ispp.start_V: {start_V!r}; allowed a positive gate voltage")
    if not (isinstance(pulse_s, numbers.Real) and math.isfinite(pulse_s) and pulse_s > 0):
        raise _bad(f"ispp.pulse_s: {pulse_s!r}; allowed a duration > 0 s")
    fit = fit_steps or min(int(count), max(3, count // 2))
    if not 2 <= fit <= count:
        raise _bad(f"ispp.fit_steps: {fit!r}; allowed 2 .. count ({count})")
    q = _start(cell, start_charge_cm2)
    q_first = q
    count = int(count)
    volts = float(start_V) + float(step_V) * np.arange(count)
    vt, qs, fmax = [], [], []
    for v in volts:
        fmax.append(float(cell.tunnel_field_MV_cm(v, q)))
        tr = _integrate(cell, "ispp", float(v), pulse_s, q, cell.temperature_K, np.array([pulse_s]))
        q = tr.final_charge_cm2
        qs.append(q)
        vt.append(tr.final_threshold_V)
    vt = np.array(vt)
    slope = float(np.polyfit(volts[-fit:], vt[-fit:], 1)[0])
    return IsppResult(_readonly(volts), float(pulse_s), _readonly(vt), _readonly(qs), _readonly(fmax), slope,
                      int(fit), float(cell.threshold_V(q_first)), time.perf_counter() - t0)


@dataclass(frozen=True, eq=False)
class CellSummary:
    """Design summary: programmed and erased V_T, the window, and what is left
    after ``retention_s`` at ``retention_K``."""

    program_V: float
    program_s: float
    erase_V: float
    erase_s: float
    neutral_threshold_V: float
    programmed_threshold_V: float
    erased_threshold_V: float
    window_V: float
    retention_K: float
    retention_s: float
    programmed_after_V: float
    erased_after_V: float
    window_after_V: float
    programmed_charge_cm2: float
    erased_charge_cm2: float
    trap_fill_fraction: float | None
    max_tunnel_field_MV_cm: float
    max_blocking_field_MV_cm: float
    caution: str = CAUTION


def design_window(cell: Cell, *, program_V: float, program_s: float, erase_V: float, erase_s: float,
                  retention_K: float, retention_s: float = 10 * SECONDS_PER_YEAR):
    """Program from the case's charge, erase from the programmed state, and keep
    both states for ``retention_s`` at ``retention_K``.

    Returns (CellSummary, program transient, erase transient, programmed-state
    retention, erased-state retention)."""
    prog = program(cell, program_V, program_s)
    ers = erase(cell, erase_V, erase_s, start_charge_cm2=prog.final_charge_cm2)
    keep_p = retention(cell, retention_K, prog.final_charge_cm2, duration_s=retention_s)
    keep_e = retention(cell, retention_K, ers.final_charge_cm2, duration_s=retention_s)
    fill = (None if not cell.trap_sheet_capacity_cm2 else
            abs(min(prog.final_charge_cm2, 0.0)) / cell.trap_sheet_capacity_cm2)
    fmax_t = float(max(np.max(np.abs(prog.tunnel_field_MV_cm)), np.max(np.abs(ers.tunnel_field_MV_cm))))
    fmax_b = float(max(np.max(np.abs(prog.blocking_field_MV_cm)), np.max(np.abs(ers.blocking_field_MV_cm))))
    summary = CellSummary(
        program_V=float(program_V), program_s=float(program_s), erase_V=float(erase_V), erase_s=float(erase_s),
        neutral_threshold_V=cell.neutral_threshold_V,
        programmed_threshold_V=prog.final_threshold_V, erased_threshold_V=ers.final_threshold_V,
        window_V=prog.final_threshold_V - ers.final_threshold_V,
        retention_K=float(retention_K), retention_s=float(retention_s),
        programmed_after_V=keep_p.final_threshold_V, erased_after_V=keep_e.final_threshold_V,
        window_after_V=keep_p.final_threshold_V - keep_e.final_threshold_V,
        programmed_charge_cm2=prog.final_charge_cm2, erased_charge_cm2=ers.final_charge_cm2,
        trap_fill_fraction=fill, max_tunnel_field_MV_cm=fmax_t, max_blocking_field_MV_cm=fmax_b,
    )
    return summary, prog, ers, keep_p, keep_e
