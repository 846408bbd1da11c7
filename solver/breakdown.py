"""Where WKB and Fowler–Nordheim break down: exact vs approximate currents of a
case's stack, the regimes, and thickness x field maps.

For a case, a carrier (electron or hole) and an emitting side (the channel or
the gate electrode), every bias point gives one Barrier of the stack
(`solver.tunneling.stack`) oriented along the carrier flow, and four current
densities in A/cm^2:

    exact       Tsu–Esaki with the exact (Airy transfer-matrix) transmission
    wkb         the same Tsu–Esaki integral with the WKB transmission
    fn          the Fowler–Nordheim closed form of the injecting layer
                (triangular barrier, 0 K; Murphy–Good image-force form when the
                image force is on) with the field at the emitter side
    trapezoid   the Schuegraf–Hu trapezoid (direct-tunneling) hand formula of
                the injecting layer

Regimes (per bias point; "injecting layer" = the dielectric at the emitter):

    direct          the band edge at the far side of the injecting layer is
                    still above the emitter's reference energy (q V_layer < Phi_B):
                    trapezoidal barrier, direct tunneling
    fowler-nordheim q V_layer >= Phi_B: triangular barrier, Fowler–Nordheim
    interference    Fowler–Nordheim points, from the onset up to the last
                    resolved swing, where ln(J_exact / J_wkb) oscillates with
                    field by more than 10 % peak to valley: waves reflected at the
                    far side of the injecting layer interfere (oscillations of
                    the FN current; Gundlach, Solid-State Electron. 9, 949 (1966)).
                    WKB has no reflected wave and cannot show them.
    none            the field drives the carrier back into the emitter
                    (wrong polarity for this emitter); currents are NaN

The reference energy of the emitter is its Fermi level for a metal gate and its
band edge for a semiconductor (the barrier height is then the band offset).

The electrostatics behind the bias points is the stack builder's
(`solver.tunneling.stack`: displacement continuity, sheet charges, classical
channel surface charge), planar or coaxial. In a cylindrical (gate-all-around)
cell the field goes as 1/r inside each layer; the field of the FN and
trapezoid forms and of every "field" axis is the one at the injecting
interface (the channel-side edge of the tunnel layer for channel emission, the
gate-side edge of the blocking layer for gate emission), the exact and WKB
currents use the full ln r profile (linear pieces, 1-D transmission along the
radius, planar Tsu–Esaki supply; see tunneling.stack), and the thickness map
varies the injecting layer at the fixed channel radius. Currents are per area
of the emitting surface. Results are estimates for comparing the
approximations, not a device qualification.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from solver.errors import ConvergenceError
from solver.tunneling.stack import (
    CARRIERS,
    EMITTERS,
    THROUGH,
    StackData,
    emission_sign,
    stack_barrier,
    stack_data,
    stack_state,
)

REGIMES = ("direct", "fowler-nordheim", "interference", "none")
REGIME_LABELS = {
    "direct": "direct tunneling",
    "fowler-nordheim": "Fowler–Nordheim",
    "interference": "FN, interference",
    "none": "no emission",
}
APPROXIMATIONS = ("wkb", "fn", "trapezoid")
FACTOR = 2.0  # "stays within a factor 2 of exact"
INTERFERENCE_SWING = math.log(1.1)  # peak-to-valley of ln(J_exact/J_wkb) that counts as an oscillation


def _readonly(values, dtype=float) -> np.ndarray:
    arr = np.array(values, dtype=dtype)
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True)
class BreakdownSettings:
    """What is compared: the carrier, the emitting side, the path and options.

    carrier : "electron" | "hole"
    emitter : "channel" (program-type injection from the channel) | "gate"
    through : "stack" (to the far electrode) | "injecting-layer" (into the next layer's band)
    image_force : image-force lowering of the profile (staircase) and in the FN form
    emitter_mass : emitting lead's mass, m0 (None: the material's default)
    rtol : relative accuracy of the Tsu–Esaki energy integrals
    curvature_tol_eV : cylinders: chord tolerance of the linear pieces of the
        ln r profile (None: 3 eV x rtol, at most 1e-3 eV, which keeps the piece
        error of J at or below rtol; see tunneling.stack)
    """

    carrier: str = "electron"
    emitter: str = "channel"
    through: str = "stack"
    image_force: bool = False
    emitter_mass: float | None = None
    rtol: float = 1e-4
    curvature_tol_eV: float | None = None

    def __post_init__(self):
        for name, allowed in (("carrier", CARRIERS), ("emitter", EMITTERS), ("through", THROUGH)):
            if getattr(self, name) not in allowed:
                raise ValueError(f"{name} must be one of {', '.join(map(repr, allowed))}, "
                                 f"got {getattr(self, name)!r}")
        if not (1e-8 <= self.rtol <= 0.1):
            raise ValueError(f"rtol must be in [1e-8, 0.1], got {self.rtol!r}")
        if self.emitter_mass is not None and not self.emitter_mass > 0:
            raise ValueError(f"emitter_mass must be > 0 (units of m0), got {self.emitter_mass!r}")
        if self.curvature_tol_eV is not None and not (0 < self.curvature_tol_eV <= 0.1):
            raise ValueError(f"curvature_tol_eV must be in (0, 0.1] eV, got {self.curvature_tol_eV!r}")

    @property
    def piece_tolerance_eV(self) -> float:
        return self.curvature_tol_eV if self.curvature_tol_eV is not None else min(3.0 * self.rtol, 1e-3)

    @property
    def injecting_layer_side(self) -> str:
        return "channel" if self.emitter == "channel" else "gate"


def _data(case_or_data) -> StackData:
    return case_or_data if isinstance(case_or_data, StackData) else stack_data(case_or_data)


def injecting_layer_index(data: StackData, emitter: str) -> int:
    """Index (gate first) of the dielectric layer at the emitter."""
    return data.count - 1 if emitter == "channel" else 0


def _state_for_field(data: StackData, settings: BreakdownSettings, field_MV_cm: float):
    sign = emission_sign(settings.carrier, settings.emitter)
    return stack_state(data, field_MV_cm=sign * float(field_MV_cm),
                       field_layer=injecting_layer_index(data, settings.emitter),
                       field_side=settings.injecting_layer_side)


def _barrier_at(data, settings, state):
    return stack_barrier(data, state, carrier=settings.carrier, emitter=settings.emitter,
                         through=settings.through, image_force=settings.image_force,
                         emitter_mass=settings.emitter_mass, curvature_tol_eV=settings.piece_tolerance_eV)


def _emits(data, settings, state) -> bool:
    sign = emission_sign(settings.carrier, settings.emitter)
    return sign * state.interface_field_MV_cm(settings.emitter) > 0.0


def _tsu_esaki(sb, model: str, rtol: float) -> float:
    """The Tsu–Esaki current at ``rtol`` (and current_density's absolute floor, which
    accepts negligible currents whose quasi-bound states are too sharp to resolve);
    NaN, counted in ``failed_points``, if the integral does not converge."""
    from solver.tunneling.current import current_density

    try:
        return current_density(sb.barrier, sb.fermi_left_eV, sb.fermi_right_eV, sb.temperature_K,
                               model=model, rtol=rtol)
    except ConvergenceError:
        return math.nan


def _hand_currents(field_MV_cm, height_eV, mass, thickness_nm, eps_inf, image_force):
    """FN and trapezoid hand formulas (A/cm^2); NaN where they do not apply."""
    from solver.tunneling.fowler_nordheim import (direct_tunneling_current, fowler_nordheim_current,
                                                  fowler_nordheim_image_current, scaled_barrier_field)

    f = np.asarray(field_MV_cm, float)
    fn = np.full(f.shape, np.nan)
    dt = np.full(f.shape, np.nan)
    ok = np.isfinite(f) & (f > 0) & (height_eV > 0)
    if not np.any(ok):
        return fn, dt
    if image_force and np.isfinite(eps_inf):
        scaled = np.asarray(scaled_barrier_field(f[ok], height_eV, eps_inf))
        sub = np.where(ok)[0][scaled < 1.0]
        if sub.size:
            fn[sub] = fowler_nordheim_image_current(f[sub], height_eV, mass, eps_inf)
    else:
        fn[ok] = fowler_nordheim_current(f[ok], height_eV, mass)
    dt[ok] = direct_tunneling_current(f[ok], thickness_nm, height_eV, mass)
    return fn, dt


def interference_mask(field_MV_cm, current_exact, current_wkb, fn_mask, swing=INTERFERENCE_SWING):
    """Points of the FN regime that show interference (see the module docstring).

    Fields must be increasing. Returns a boolean array.
    """
    f = np.asarray(field_MV_cm, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.log(np.asarray(current_exact, float) / np.asarray(current_wkb, float))
    fnm = np.asarray(fn_mask, bool) & np.isfinite(y)
    out = np.zeros(f.shape, bool)
    idx = np.where(fnm)[0]
    if idx.size < 3:
        return out
    yy = y[idx]
    d = np.diff(yy)
    turns = [k for k in range(1, d.size) if d[k - 1] * d[k] < 0]  # local extrema of yy
    last = None
    for a, b in zip(turns[:-1], turns[1:]):
        if abs(yy[b] - yy[a]) > swing:
            last = b
    if last is None:
        return out
    # oscillations still resolved at the last turning point: they go on to the sweep's end
    end = idx.size if last == turns[-1] else last + 1
    out[idx[:end]] = True
    return out


@dataclass(frozen=True)
class BreakdownCurve:
    """Exact vs approximate currents along a sweep of one case (arrays read-only).

    field_MV_cm : field magnitude in the injecting layer at the emitter side
    gate_V, stack_V : gate voltage (against the channel bulk) and voltage across the stack
    injecting_drop_V : fall of the carrier's band edge across the injecting layer / q
    surface_potential_V : channel band bending
    layer_fields_MV_cm : (points, layers) signed field along x in each layer, gate first
    current_*_A_cm2 : exact, wkb, fn, trapezoid (see the module docstring)
    regime : one name of REGIMES per point
    barrier_height_eV : Phi_B at the emitter interface (from the emitter reference)
    onset_field_MV_cm : field where q V_layer = Phi_B (FN onset)
    failed_points : points whose exact or WKB integration did not converge (NaN there)
    """

    settings: BreakdownSettings
    layer_names: tuple[str, ...]
    injecting_layer: int
    injecting_thickness_nm: float
    injecting_mass: float
    barrier_height_eV: float
    onset_field_MV_cm: float
    field_MV_cm: np.ndarray
    gate_V: np.ndarray
    stack_V: np.ndarray
    injecting_drop_V: np.ndarray
    surface_potential_V: np.ndarray
    layer_fields_MV_cm: np.ndarray
    current_exact_A_cm2: np.ndarray
    current_wkb_A_cm2: np.ndarray
    current_fn_A_cm2: np.ndarray
    current_trapezoid_A_cm2: np.ndarray
    regime: tuple[str, ...]
    temperature_K: float
    failed_points: int = 0

    def ratio(self, approximation: str) -> np.ndarray:
        """J_exact / J_approximation for "wkb", "fn" or "trapezoid"."""
        if approximation not in APPROXIMATIONS:
            raise ValueError(f"approximation must be one of {APPROXIMATIONS}, got {approximation!r}")
        approx = getattr(self, f"current_{approximation}_A_cm2")
        with np.errstate(divide="ignore", invalid="ignore"):
            return self.current_exact_A_cm2 / approx

    @property
    def regime_codes(self) -> np.ndarray:
        return np.array([REGIMES.index(r) for r in self.regime], dtype=np.int8)

    def interference_range_MV_cm(self) -> tuple[float, float] | None:
        f = [fi for fi, r in zip(self.field_MV_cm, self.regime) if r == "interference"]
        return (min(f), max(f)) if f else None


def _onset(data: StackData, settings: BreakdownSettings, height: float) -> float:
    """Field (MV/cm, emitter side) where the injecting layer's band-edge drop equals Phi_B."""
    s1 = _state_for_field(data, settings, 1.0)
    s2 = _state_for_field(data, settings, 2.0)
    d1 = _barrier_at(data, replace_settings(settings, image_force=False), s1).injecting_drop_eV
    d2 = _barrier_at(data, replace_settings(settings, image_force=False), s2).injecting_drop_eV
    slope = d2 - d1  # the drop is linear in the field
    return 1.0 + (height - d1) / slope if slope > 0 else math.inf


def replace_settings(settings: BreakdownSettings, **changes) -> BreakdownSettings:
    from dataclasses import replace

    return replace(settings, **changes)


def breakdown_curve(case, *, field_MV_cm: Sequence[float] | None = None,
                    gate_V: Sequence[float] | None = None,
                    settings: BreakdownSettings | None = None, **options) -> BreakdownCurve:
    """Exact, WKB, FN and trapezoid currents along a field or gate-voltage sweep.

    ``case`` is a Case (or a StackData). Give ``field_MV_cm`` (magnitudes of the
    field in the injecting layer at the emitter side; the sign follows the
    carrier and emitter) or ``gate_V`` (signed gate voltages; points of the wrong
    polarity get regime "none"). ``settings`` or keyword ``options`` as in
    `BreakdownSettings` (carrier, emitter, through, image_force, emitter_mass, rtol).
    """
    settings = settings or BreakdownSettings(**options)
    if (field_MV_cm is None) == (gate_V is None):
        raise ValueError("breakdown_curve: give exactly one of field_MV_cm and gate_V")
    data = _data(case)
    if field_MV_cm is not None:
        fields = np.asarray(field_MV_cm, float).ravel()
        if fields.size == 0 or not np.all(np.isfinite(fields) & (fields > 0)):
            raise ValueError("field_MV_cm must hold finite values > 0 (magnitudes, MV/cm)")
        states = [_state_for_field(data, settings, f) for f in fields]
    else:
        gates = np.asarray(gate_V, float).ravel()
        if gates.size == 0 or not np.all(np.isfinite(gates)):
            raise ValueError("gate_V must hold finite values (V)")
        states = [stack_state(data, gate_V=g) for g in gates]
    inj = injecting_layer_index(data, settings.emitter)
    n = len(states)
    emits = np.array([_emits(data, settings, s) for s in states])
    sbs = [_barrier_at(data, settings, s) if e else None for s, e in zip(states, emits)]
    probe = _barrier_at(data, settings, _state_for_field(data, settings, 1.0))
    height = probe.barrier_height_eV
    exact = np.full(n, np.nan)
    wkb = np.full(n, np.nan)
    failed = 0
    for i, sb in enumerate(sbs):
        if sb is None:
            continue
        exact[i] = _tsu_esaki(sb, "exact", settings.rtol)
        wkb[i] = _tsu_esaki(sb, "wkb", settings.rtol)
        failed += int(not (np.isfinite(exact[i]) and np.isfinite(wkb[i])))
    fld = np.array([sb.injecting_field_MV_cm if sb is not None else np.nan for sb in sbs])
    drop = np.array([sb.injecting_drop_eV if sb is not None else np.nan for sb in sbs])
    fn, dt = _hand_currents(np.where(emits, fld, np.nan), height, probe.injecting_mass,
                            data.thickness_nm[inj], probe.injecting_optical_permittivity,
                            settings.image_force)
    regime = np.where(~emits, "none", np.where(drop >= height, "fowler-nordheim", "direct")).astype(object)
    order = np.argsort(np.where(emits, fld, np.inf), kind="stable")
    inter = np.zeros(n, bool)
    inter[order] = interference_mask(fld[order], exact[order], wkb[order], (regime == "fowler-nordheim")[order])
    regime[inter] = "interference"
    if field_MV_cm is None:
        fld = np.array([abs(s.interface_field_MV_cm(settings.emitter)) for s in states])
    return BreakdownCurve(
        settings=settings, layer_names=data.names, injecting_layer=inj,
        injecting_thickness_nm=data.thickness_nm[inj], injecting_mass=probe.injecting_mass,
        barrier_height_eV=height, onset_field_MV_cm=_onset(data, settings, height),
        field_MV_cm=_readonly(fld),
        gate_V=_readonly([s.gate_V for s in states]),
        stack_V=_readonly([s.stack_V for s in states]),
        injecting_drop_V=_readonly(drop),
        surface_potential_V=_readonly([s.surface_potential_V for s in states]),
        layer_fields_MV_cm=_readonly([s.layer_fields_MV_cm for s in states]),
        current_exact_A_cm2=_readonly(exact), current_wkb_A_cm2=_readonly(wkb),
        current_fn_A_cm2=_readonly(fn), current_trapezoid_A_cm2=_readonly(dt),
        regime=tuple(str(r) for r in regime), temperature_K=data.temperature_K,
        failed_points=failed,
    )


@dataclass(frozen=True)
class TransmissionSpectra:
    """T(E), exact and WKB, at a few fields (arrays read-only).

    energy_eV : carrier energy above the emitter reference (Fermi level of a
        metal, band edge of a semiconductor), shape (energies,)
    field_MV_cm : the fields, shape (fields,)
    transmission_exact, transmission_wkb : shape (fields, energies)
    emitter_fermi_eV : emitter Fermi level above its reference, per field
    barrier_height_eV : Phi_B (the same scale as energy_eV)
    """

    settings: BreakdownSettings
    energy_eV: np.ndarray
    field_MV_cm: np.ndarray
    transmission_exact: np.ndarray
    transmission_wkb: np.ndarray
    emitter_fermi_eV: np.ndarray
    barrier_height_eV: float


def transmission_spectra(case, field_MV_cm: Sequence[float], *, energy_eV: Sequence[float] | None = None,
                         settings: BreakdownSettings | None = None, **options) -> TransmissionSpectra:
    """Exact and WKB T(E) at the given field magnitudes (injecting layer).

    ``energy_eV`` is measured from the emitter reference (default: 600 points
    from -0.3 eV to Phi_B + 1.5 eV).
    """
    from solver.tunneling.exact import transmission
    from solver.tunneling.wkb import wkb_transmission

    settings = settings or BreakdownSettings(**options)
    data = _data(case)
    fields = np.asarray(field_MV_cm, float).ravel()
    if fields.size == 0 or not np.all(np.isfinite(fields) & (fields > 0)):
        raise ValueError("field_MV_cm must hold finite values > 0 (magnitudes, MV/cm)")
    sbs = [_barrier_at(data, settings, _state_for_field(data, settings, f)) for f in fields]
    height = sbs[0].barrier_height_eV
    e = (np.linspace(-0.3, height + 1.5, 600) if energy_eV is None
         else np.asarray(energy_eV, float).ravel())
    t_exact = np.empty((fields.size, e.size))
    t_wkb = np.empty_like(t_exact)
    for i, sb in enumerate(sbs):
        absolute = e + sb.emitter_reference_eV
        t_exact[i] = transmission(sb.barrier, absolute)
        t_wkb[i] = wkb_transmission(sb.barrier, absolute)
    return TransmissionSpectra(
        settings=settings, energy_eV=_readonly(e), field_MV_cm=_readonly(fields),
        transmission_exact=_readonly(t_exact), transmission_wkb=_readonly(t_wkb),
        emitter_fermi_eV=_readonly([sb.fermi_left_eV - sb.emitter_reference_eV for sb in sbs]),
        barrier_height_eV=float(height),
    )


@dataclass(frozen=True)
class BreakdownMap:
    """Exact vs approximate currents over injecting-layer thickness x field.

    Arrays have shape (thicknesses, fields) and are read-only. ``within_factor``
    is True where |ln(J_exact / J_approx)| <= ln 2, per approximation.
    ``onset_field_MV_cm`` per thickness: the FN onset (q V_layer = Phi_B).
    """

    settings: BreakdownSettings
    injecting_layer: int
    layer_name: str
    barrier_height_eV: float
    thickness_nm: np.ndarray
    field_MV_cm: np.ndarray
    current_exact_A_cm2: np.ndarray
    current_wkb_A_cm2: np.ndarray
    current_fn_A_cm2: np.ndarray
    current_trapezoid_A_cm2: np.ndarray
    regime_code: np.ndarray
    onset_field_MV_cm: np.ndarray
    failed_points: int = 0
    timing_s: dict = field(default_factory=dict, compare=False)

    def ratio(self, approximation: str) -> np.ndarray:
        if approximation not in APPROXIMATIONS:
            raise ValueError(f"approximation must be one of {APPROXIMATIONS}, got {approximation!r}")
        with np.errstate(divide="ignore", invalid="ignore"):
            return self.current_exact_A_cm2 / getattr(self, f"current_{approximation}_A_cm2")

    def within_factor(self, approximation: str, factor: float = FACTOR) -> np.ndarray:
        r = self.ratio(approximation)
        with np.errstate(invalid="ignore"):
            return np.isfinite(r) & (np.abs(np.log(np.where(r > 0, r, np.nan))) <= math.log(factor))


def breakdown_map(case, thickness_nm: Sequence[float], field_MV_cm: Sequence[float], *,
                  settings: BreakdownSettings | None = None, **options) -> BreakdownMap:
    """Exact, WKB, FN and trapezoid currents over injecting-layer thickness x field.

    Each thickness is a variant of the case's stack with only the injecting
    layer changed. ``rtol`` of the settings defaults to 1e-3 here (a factor-2
    map needs far less than 1e-4 in each current).
    """
    import time

    options.setdefault("rtol", 1e-3)
    settings = settings or BreakdownSettings(**options)
    data = _data(case)
    inj = injecting_layer_index(data, settings.emitter)
    th = np.asarray(thickness_nm, float).ravel()
    fields = np.asarray(field_MV_cm, float).ravel()
    if th.size == 0 or not np.all(np.isfinite(th) & (th > 0)):
        raise ValueError("thickness_nm must hold finite values > 0 (nm)")
    if fields.size == 0 or not np.all(np.isfinite(fields) & (fields > 0)):
        raise ValueError("field_MV_cm must hold finite values > 0 (magnitudes, MV/cm)")
    shape = (th.size, fields.size)
    exact = np.full(shape, np.nan)
    wkb = np.full(shape, np.nan)
    fn = np.full(shape, np.nan)
    dt = np.full(shape, np.nan)
    code = np.zeros(shape, np.int8)
    onset = np.empty(th.size)
    failed = 0
    t_exact = t_wkb = t_build = 0.0
    height = math.nan
    for i, t in enumerate(th):
        d = data.with_thickness(inj, t)
        t0 = time.perf_counter()
        sbs = [_barrier_at(d, settings, _state_for_field(d, settings, f)) for f in fields]
        t1 = time.perf_counter()
        t_build += t1 - t0
        for j, sb in enumerate(sbs):
            a = time.perf_counter()
            exact[i, j] = _tsu_esaki(sb, "exact", settings.rtol)
            b = time.perf_counter()
            wkb[i, j] = _tsu_esaki(sb, "wkb", settings.rtol)
            t_exact += b - a
            t_wkb += time.perf_counter() - b
            failed += int(not (np.isfinite(exact[i, j]) and np.isfinite(wkb[i, j])))
        height = sbs[0].barrier_height_eV
        fld = np.array([sb.injecting_field_MV_cm for sb in sbs])
        drop = np.array([sb.injecting_drop_eV for sb in sbs])
        fn[i], dt[i] = _hand_currents(fld, height, sbs[0].injecting_mass, t,
                                      sbs[0].injecting_optical_permittivity, settings.image_force)
        fnm = drop >= height
        order = np.argsort(fld)
        inter = np.zeros(fields.size, bool)
        inter[order] = interference_mask(fld[order], exact[i, order], wkb[i, order], fnm[order])
        code[i] = np.where(inter, REGIMES.index("interference"),
                           np.where(fnm, REGIMES.index("fowler-nordheim"), REGIMES.index("direct")))
        onset[i] = _onset(d, settings, height)
    return BreakdownMap(
        settings=settings, injecting_layer=inj, layer_name=data.names[inj],
        barrier_height_eV=float(height), thickness_nm=_readonly(th), field_MV_cm=_readonly(fields),
        current_exact_A_cm2=_readonly(exact), current_wkb_A_cm2=_readonly(wkb),
        current_fn_A_cm2=_readonly(fn), current_trapezoid_A_cm2=_readonly(dt),
        regime_code=_readonly(code, np.int8), onset_field_MV_cm=_readonly(onset),
        failed_points=failed,
        timing_s={"exact_current": t_exact, "wkb_current": t_wkb, "barriers": t_build},
    )


def default_fields_MV_cm(case, settings: BreakdownSettings | None = None, count: int = 60) -> np.ndarray:
    """A field sweep that spans direct tunneling and Fowler–Nordheim for the
    injecting layer: from 0.3 to 2.5 times the FN onset field, capped at
    0.5 .. 30 MV/cm."""
    settings = settings or BreakdownSettings()
    data = _data(case)
    probe = _barrier_at(data, replace_settings(settings, image_force=False),
                        _state_for_field(data, settings, 1.0))
    onset = _onset(data, settings, probe.barrier_height_eV)
    lo = min(max(0.3 * onset, 0.5), 25.0)
    hi = min(max(2.5 * onset, lo + 2.0), 30.0)
    return np.linspace(lo, hi, int(count))
