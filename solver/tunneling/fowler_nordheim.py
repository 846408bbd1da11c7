"""Fowler–Nordheim and direct-tunnelling closed forms for a single dielectric.

Conventions (physics-data sheet Sec. 3.3): barrier height Phi (eV) at the
injecting interface, tunnelling mass m (units of m0) in the dielectric, field F
in the dielectric. The prefactor keeps the m0/m factor:

    J = A F^2 exp(-B / F),
    A = q^3 m0 / (8 pi h Phi m)                      [A/V^2]
    B = 4 sqrt(2 m m0) Phi^(3/2) / (3 q hbar)        [V/cm when F is in V/cm]

Zero temperature, a triangular barrier, no image force. With the image force
(Murphy–Good) the exponent is multiplied by v(f) and the prefactor divided by
t(f)^2, f = q F / (4 pi eps0 eps_inf Phi^2) being the scaled barrier field.
The trapezoid (direct-tunnelling) form of Schuegraf and Hu replaces the
triangular exponent by the trapezoid WKB integral while q V_ox < Phi and
reduces to Fowler–Nordheim beyond.

Every routine here is a closed form (the image-force v and t as complete
elliptic integrals); the exact multilayer treatment is `transmission` +
`current_density`.

References
----------
.. [1] M. Lenzlinger and E. H. Snow, J. Appl. Phys. 40, 278 (1969).
.. [2] E. L. Murphy and R. H. Good, Phys. Rev. 102, 1464 (1956).
.. [3] R. G. Forbes, Appl. Phys. Lett. 89, 113122 (2006).
.. [4] K. F. Schuegraf and C. Hu, IEEE Trans. Electron Devices 41, 761 (1994).
.. [5] S. M. Sze and K. K. Ng, Physics of Semiconductor Devices, 3rd ed.,
       Wiley (2007), Ch. 6.
.. [6] R. G. Forbes and J. H. B. Deane, Proc. R. Soc. A 463, 2907 (2007)
       (v and t as complete elliptic integrals; from memory, checked in the
       tests against quadrature of the defining integral).
.. [7] B. C. Carlson, NIST DLMF Ch. 19 (symmetric elliptic integrals, 19.25.1);
       M. Abramowitz and I. A. Stegun, Handbook of Mathematical Functions
       (1964), 17.3.34 and 17.3.36 (K and E near m = 1).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from solver.units import EPSILON0_F_M, EV_TO_J, HBAR_J_S, M0_KG, PLANCK_J_S, Q_C

__all__ = [
    "FowlerNordheimConstants",
    "FowlerNordheimFit",
    "fowler_nordheim_constants",
    "fowler_nordheim_current",
    "fowler_nordheim_image_current",
    "direct_tunneling_current",
    "scaled_barrier_field",
    "schottky_lowering_eV",
    "murphy_good_v",
    "murphy_good_t",
    "forbes_v",
    "forbes_t",
    "fowler_nordheim_fit",
    "barrier_from_fowler_nordheim_slope",
]

_V_PER_CM_PER_MV_PER_CM = 1e6
_V_PER_M_TO_V_PER_CM = 1e-2
# q^2 / (8 pi h) in A/V^2 (1.54143e-6, physics-data sheet Sec. 1); A = this / (m Phi[eV])
_FN_PREFACTOR_A_V2 = Q_C**2 / (8.0 * math.pi * PLANCK_J_S)
# 4 sqrt(2 m0) q^(3/2) / (3 q hbar) in V/cm for m = 1, Phi = 1 eV (6.83089e7)
_FN_EXPONENT_V_CM = 4.0 * math.sqrt(2.0 * M0_KG) * EV_TO_J**1.5 / (3.0 * Q_C * HBAR_J_S) * _V_PER_M_TO_V_PER_CM
# q / (4 pi eps0) in eV nm (1.43996): image-force / Schottky term
_IMAGE_EV_NM = Q_C / (4.0 * math.pi * EPSILON0_F_M) * 1e9


@dataclass(frozen=True)
class FowlerNordheimConstants:
    """A and B of J = A F^2 exp(-B/F).

    a_A_V2 : A in A/V^2 (J in A/cm^2 with F in V/cm).
    b_MV_cm : B in MV/cm.
    """

    a_A_V2: float
    b_MV_cm: float


@dataclass(frozen=True)
class FowlerNordheimFit:
    """Straight-line fit of ln(J/F^2) against 1/F (a Fowler–Nordheim plot).

    slope_MV_cm : d ln(J/F^2) / d(1/F), F in MV/cm (= -B).
    intercept : ln(J/F^2) at 1/F = 0, J in A/cm^2 and F in MV/cm.
    a_A_V2 : the prefactor A = exp(intercept) converted to A/V^2.
    b_MV_cm : B = -slope, MV/cm.
    rms_residual : root-mean-square residual of ln(J/F^2).
    """

    slope_MV_cm: float
    intercept: float
    a_A_V2: float
    b_MV_cm: float
    rms_residual: float


def _check_barrier(barrier_eV, mass):
    for name, value in (("barrier_eV", barrier_eV), ("mass", mass)):
        if np.ndim(value) != 0:
            raise ValueError(f"{name} must be a single number, got an array of shape {np.shape(value)}")
    if not (np.isfinite(barrier_eV) and barrier_eV > 0):
        raise ValueError(f"barrier_eV must be finite and > 0, got {barrier_eV!r}")
    if not (np.isfinite(mass) and mass > 0):
        raise ValueError(f"mass must be finite and > 0 (units of m0), got {mass!r}")


def _as_field(field_MV_cm, *, allow_zero: bool) -> np.ndarray:
    f = np.asarray(field_MV_cm, dtype=np.float64)
    ok = np.isfinite(f) & ((f >= 0) if allow_zero else (f > 0))
    if not np.all(ok):
        bad = f[~ok].ravel()[0] if f.ndim else f
        rule = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"field_MV_cm must be finite and {rule}, got {float(bad)!r}")
    return f


def _scalar_or_array(values: np.ndarray, like: np.ndarray):
    return float(values) if like.ndim == 0 else values


def fowler_nordheim_constants(barrier_eV: float, mass: float) -> FowlerNordheimConstants:
    """The Fowler–Nordheim A (A/V^2) and B (MV/cm) for a barrier and tunnelling mass.

    A = q^3 m0 / (8 pi h Phi m) = 1.54143e-6 / (m Phi[eV]) A/V^2 and
    B = 4 sqrt(2 m m0) Phi^(3/2) / (3 q hbar) = 68.3089 sqrt(m) Phi[eV]^(3/2) MV/cm
    (Lenzlinger and Snow 1969; physics-data sheet Sec. 3.3).
    """
    _check_barrier(barrier_eV, mass)
    a = _FN_PREFACTOR_A_V2 / (mass * barrier_eV)
    b = _FN_EXPONENT_V_CM * math.sqrt(mass) * barrier_eV**1.5 / _V_PER_CM_PER_MV_PER_CM
    return FowlerNordheimConstants(a_A_V2=a, b_MV_cm=b)


def fowler_nordheim_current(field_MV_cm, barrier_eV, mass):
    """Fowler–Nordheim current density in A/cm^2 (triangular barrier, 0 K, no image force).

    J = q^3 F^2 m0 / (8 pi h Phi m) * exp(-4 sqrt(2 m m0) Phi^(3/2) / (3 q hbar F)).

    Parameters
    ----------
    field_MV_cm : float or array_like
        Field in the dielectric, MV/cm; >= 0 (0 gives 0).
    barrier_eV : float
        Barrier height at the injecting interface, eV; > 0.
    mass : float
        Tunnelling effective mass in the dielectric, units of m0; > 0.

    Returns
    -------
    float or numpy.ndarray
        A float for a scalar field, else an array of the field's shape.

    References
    ----------
    .. [1] M. Lenzlinger and E. H. Snow, J. Appl. Phys. 40, 278 (1969).
    """
    f = _as_field(field_MV_cm, allow_zero=True)
    c = fowler_nordheim_constants(barrier_eV, mass)
    f_v_cm = f * _V_PER_CM_PER_MV_PER_CM
    safe = np.where(f > 0, f, 1.0)
    j = np.where(f > 0, c.a_A_V2 * f_v_cm**2 * np.exp(-c.b_MV_cm / safe), 0.0)
    return _scalar_or_array(j, f)


# ---------------------------------------------------------------- image force


def scaled_barrier_field(field_MV_cm, barrier_eV, optical_permittivity):
    """Scaled barrier field f = q F / (4 pi eps0 eps_inf Phi^2) (Forbes 2006).

    f = 1.43996 F[V/nm] / (eps_inf Phi[eV]^2); the image-force barrier vanishes at
    f = 1. Float for a scalar field, else an array.
    """
    f = _as_field(field_MV_cm, allow_zero=True)
    _check_barrier(barrier_eV, 1.0)
    if not (np.isfinite(optical_permittivity) and optical_permittivity > 0):
        raise ValueError(f"optical_permittivity must be finite and > 0, got {optical_permittivity!r}")
    # 1 MV/cm = 0.1 V/nm
    return _scalar_or_array(_IMAGE_EV_NM * 0.1 * f / (optical_permittivity * barrier_eV**2), f)


def schottky_lowering_eV(field_MV_cm, optical_permittivity):
    """Image-force (Schottky) barrier lowering sqrt(q F / (4 pi eps0 eps_inf)), eV.

    0.822 eV in SiO2 (eps_inf 2.13) at 10 MV/cm (physics-data sheet Sec. 7).
    """
    f = _as_field(field_MV_cm, allow_zero=True)
    if not (np.isfinite(optical_permittivity) and optical_permittivity > 0):
        raise ValueError(f"optical_permittivity must be finite and > 0, got {optical_permittivity!r}")
    return _scalar_or_array(np.sqrt(_IMAGE_EV_NM * 0.1 * f / optical_permittivity), f)


def _check_f(f) -> np.ndarray:
    arr = np.asarray(f, dtype=np.float64)
    ok = np.isfinite(arr) & (arr >= 0) & (arr <= 1)
    if not np.all(ok):
        bad = arr[~ok].ravel()[0] if arr.ndim else arr
        raise ValueError(
            f"scaled barrier field f must be in [0, 1] (the image-force barrier vanishes at f = 1), got {float(bad)!r}"
        )
    return arr


# Below this scaled field the two-term expansion of v and t is exact to rounding: its
# remainder is ~1e-3 f^2 ln^2(f) (measured against the closed form), < 1e-17 here.
_SERIES_F = 1e-8


def _barrier_functions(f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """v(f) and t(f) for 0 <= f <= 1, elementwise, in closed form.

    Murphy and Good's v and t are complete elliptic integrals (Forbes and Deane,
    Proc. R. Soc. A 463, 2907 (2007)): with y = sqrt(f) and the parameter
    m = (1 - y)/(1 + y),

        v = sqrt(1 + y) [E(m) - y K(m)],   t = [(1 + y) E(m) - y K(m)] / sqrt(1 + y).

    Written with Carlson's symmetric integrals, K = R_F(0, p, 1) and
    E = R_F(0, p, 1) - (m/3) R_D(0, p, 1), p = 1 - m = 2y/(1 + y) (DLMF 19.25.1),
    they become

        v = (1 - y)/sqrt(1 + y) [(1 + y) R_F - R_D/3],   t = [R_F - (1 - y) R_D/3] / sqrt(1 + y),

    free of the cancellation of E - yK near f = 1 (v ~ 0.83 (1 - f) there) and
    with p formed without rounding 1 - m; 1 - y = (1 - f)/(1 + y). Near f = 0
    R_F and R_D grow like ln(1/f) and their difference loses about that factor
    in relative accuracy, so for f <= _SERIES_F the small-f expansion

        v = 1 - (3/16) f [1 + ln(64/f)],   t = 1 - (3/16) f + (f/16) ln(64/f)

    is used, from the expansions of K and E about m = 1 (Abramowitz and Stegun
    17.3.34, 17.3.36) to first order in f. (Forbes's 1 - f + (f/6) ln f is a fit
    over 0 <= f <= 1, not this limit.) No quadrature: exact for any array of f
    at the cost of two special-function calls.
    """
    f = np.asarray(f, dtype=np.float64)
    y = np.sqrt(f)
    p = 2.0 * y / (1.0 + y)
    one_minus_y = (1.0 - f) / (1.0 + y)
    series = f <= _SERIES_F
    with np.errstate(divide="ignore", invalid="ignore"):
        # R_F(0, 0, 1) is infinite: f = 0 takes the series branch below
        rf = special.elliprf(0.0, np.where(series, 1.0, p), 1.0)
        rd = special.elliprd(0.0, np.where(series, 1.0, p), 1.0)
        log_term = np.log(64.0 / np.where(f > 0.0, f, 1.0))
    root = np.sqrt(1.0 + y)
    v = np.where(series, 1.0 - 0.1875 * f * (1.0 + log_term), one_minus_y / root * ((1.0 + y) * rf - rd / 3.0))
    t = np.where(series, 1.0 - 0.1875 * f + 0.0625 * f * log_term, (rf - one_minus_y * rd / 3.0) / root)
    return v, t


def murphy_good_v(f):
    """Barrier function v(f) of the image-rounded barrier, exact (closed form).

    v = (3/2) int sqrt(1 - x - f/(4x)) dx between the turning points
    (Murphy and Good 1956), evaluated as complete elliptic integrals
    (see `_barrier_functions`); vectorised, accurate to ~1e-15 for every f in [0, 1].
    v(0) = 1, v(1) = 0. Check values: v(0.05/0.1/0.2/0.3/0.5) =
    0.92336/0.85944/0.74399/0.63769/0.44095 (physics-data sheet Sec. 7).
    Float for scalar `f`, else an array.

    References: Murphy and Good 1956; Forbes 2006; Forbes and Deane 2007.
    """
    arr = _check_f(f)
    return _scalar_or_array(_barrier_functions(arr)[0], arr)


def murphy_good_t(f):
    """Barrier function t(f) = v - (4/3) f dv/df, exact (closed form, see `murphy_good_v`).

    t(0) = 1, t(1) = pi/(2 sqrt 2). Check values: t(0.05/0.1/0.2/0.3/0.5) =
    1.01325/1.02252/1.03746/1.04989/1.07068 (physics-data sheet Sec. 7).
    Float for scalar `f`, else an array.
    """
    arr = _check_f(f)
    return _scalar_or_array(_barrier_functions(arr)[1], arr)


def forbes_v(f):
    """Forbes (2006) approximation v(f) ~ 1 - f + (f/6) ln f (0 <= f <= 1)."""
    arr = _check_f(f)
    logf = np.log(np.where(arr > 0, arr, 1.0))
    return _scalar_or_array(1.0 - arr + arr * logf / 6.0, arr)


def forbes_t(f):
    """Forbes (2006) approximation t(f) ~ 1 + f/9 - (f/18) ln f (0 <= f <= 1)."""
    arr = _check_f(f)
    logf = np.log(np.where(arr > 0, arr, 1.0))
    return _scalar_or_array(1.0 + arr / 9.0 - arr * logf / 18.0, arr)


def fowler_nordheim_image_current(field_MV_cm, barrier_eV, mass, optical_permittivity, approximation="exact"):
    """Fowler–Nordheim current with image-force rounding (Murphy–Good form), A/cm^2.

    J = A F^2 / t(f)^2 * exp(-v(f) B / F), f = scaled_barrier_field(F, Phi, eps_inf).

    Parameters
    ----------
    field_MV_cm : float or array_like
        Field in the dielectric, MV/cm; > 0 and below the field where the
        barrier vanishes (f < 1).
    barrier_eV, mass : float
        Unlowered barrier height (eV) and tunnelling mass (m0).
    optical_permittivity : float
        eps_inf of the dielectric (image charges follow the electron at optical
        frequencies; 2.13 for SiO2, physics-data sheet Sec. 3.1).
    approximation : {"exact", "forbes"}
        v and t exact (closed form in elliptic integrals, vectorised; see
        `murphy_good_v`), or Forbes's approximations (within ~0.4 % for f <= 0.5).
    """
    fld = _as_field(field_MV_cm, allow_zero=False)
    c = fowler_nordheim_constants(barrier_eV, mass)
    f = np.asarray(scaled_barrier_field(fld, barrier_eV, optical_permittivity), dtype=np.float64)
    if np.any(f >= 1.0):
        bad = float(fld[f >= 1.0].ravel()[0]) if fld.ndim else float(fld)
        raise ValueError(f"field_MV_cm = {bad}: the image-force barrier vanishes (scaled field f >= 1)")
    if approximation == "exact":
        v, t = _barrier_functions(f)
    elif approximation == "forbes":
        v, t = np.asarray(forbes_v(f)), np.asarray(forbes_t(f))
    else:
        raise ValueError(f"approximation must be 'exact' or 'forbes', got {approximation!r}")
    j = c.a_A_V2 * (fld * _V_PER_CM_PER_MV_PER_CM) ** 2 / t**2 * np.exp(-v * c.b_MV_cm / fld)
    return _scalar_or_array(j, fld)


# ---------------------------------------------------------------- direct tunnelling


def direct_tunneling_current(field_MV_cm, thickness_nm, barrier_eV, mass):
    """Trapezoid-barrier (direct) tunnelling current, Schuegraf–Hu form, A/cm^2.

    With r = q V_ox / Phi = F d / Phi:

        J = A F^2 [1 - sqrt(1 - r)]^-2 exp(-B [1 - (1 - r)^(3/2)] / F)   (r < 1)
        J = A F^2 exp(-B / F)                                           (r >= 1, Fowler–Nordheim)

    The exponent is the WKB integral through the trapezoid at the injecting
    band edge; the two branches join continuously at r = 1. Zero temperature,
    one-way emission (no back flow), so it is meaningful only for q V_ox >> kT.

    Parameters
    ----------
    field_MV_cm : float or array_like
        Oxide field, MV/cm; > 0.
    thickness_nm : float
        Oxide thickness, nm; > 0.
    barrier_eV, mass : float
        Barrier height at the injecting interface (eV) and tunnelling mass (m0).

    References
    ----------
    .. [1] K. F. Schuegraf and C. Hu, IEEE Trans. Electron Devices 41, 761 (1994)
           (form as in physics-data sheet Sec. 6 item 6).
    """
    fld = _as_field(field_MV_cm, allow_zero=False)
    if not (np.isfinite(thickness_nm) and thickness_nm > 0):
        raise ValueError(f"thickness_nm must be finite and > 0, got {thickness_nm!r}")
    c = fowler_nordheim_constants(barrier_eV, mass)
    # F [MV/cm] * d [nm] = 0.1 * F d volts
    r = 0.1 * fld * thickness_nm / barrier_eV
    rc = np.minimum(r, 1.0)
    root = np.sqrt(1.0 - rc)
    # 1 - sqrt(1 - r) = r / (1 + sqrt(1 - r)); 1 - (1 - r)^1.5 without cancellation
    gap = rc / (1.0 + root)
    with np.errstate(divide="ignore"):
        shape = np.where(rc < 1.0, -np.expm1(1.5 * np.log1p(-np.where(rc < 1.0, rc, 0.0))), 1.0)
    j = c.a_A_V2 * (fld * _V_PER_CM_PER_MV_PER_CM) ** 2 / gap**2 * np.exp(-c.b_MV_cm * shape / fld)
    return _scalar_or_array(j, fld)


# ---------------------------------------------------------------- FN plots


def fowler_nordheim_fit(field_MV_cm, current_A_cm2) -> FowlerNordheimFit:
    """Least-squares line through ln(J/F^2) against 1/F (F in MV/cm, J in A/cm^2).

    Returns slope (-B, MV/cm), intercept, and the A (A/V^2) and B (MV/cm)
    they imply. Needs at least two distinct fields, every J > 0 and F > 0.
    """
    f = _as_field(field_MV_cm, allow_zero=False).ravel()
    j = np.asarray(current_A_cm2, dtype=np.float64).ravel()
    if j.shape != f.shape:
        raise ValueError(f"current_A_cm2 must have one value per field, got {j.size} for {f.size}")
    if np.unique(f).size < 2:
        raise ValueError(f"fowler_nordheim_fit needs at least two distinct fields, got {f.size} point(s) "
                         f"at {np.unique(f).size} field(s)")
    if not np.all(np.isfinite(j) & (j > 0)):
        raise ValueError("current_A_cm2 must be finite and > 0 for a Fowler–Nordheim plot")
    x = 1.0 / f
    y = np.log(j / f**2)
    slope, intercept = np.polyfit(x, y, 1)
    resid = y - (slope * x + intercept)
    a = math.exp(intercept) / _V_PER_CM_PER_MV_PER_CM**2
    return FowlerNordheimFit(
        slope_MV_cm=float(slope),
        intercept=float(intercept),
        a_A_V2=float(a),
        b_MV_cm=float(-slope),
        rms_residual=float(np.sqrt(np.mean(resid**2))),
    )


def barrier_from_fowler_nordheim_slope(b_MV_cm: float, mass: float) -> float:
    """Barrier height (eV) implied by an FN exponent constant B (MV/cm) and a mass (m0).

    Inverts B = 68.3089 sqrt(m) Phi^(3/2) MV/cm; only m Phi^3 is fixed by B.
    """
    if not (np.isfinite(b_MV_cm) and b_MV_cm > 0):
        raise ValueError(f"b_MV_cm must be finite and > 0, got {b_MV_cm!r}")
    _check_barrier(1.0, mass)
    unit = _FN_EXPONENT_V_CM / _V_PER_CM_PER_MV_PER_CM
    return float((b_MV_cm / (unit * math.sqrt(mass))) ** (2.0 / 3.0))
