"""Closed-form checks of the installed package, behind `tunnelstack validate`.

Each check computes a quantity with the library and compares it with a
reference that does not come from the library: a closed-form solution, a
published formula or table, a general-purpose library (scipy.special,
scipy.integrate, scipy.constants), or a check value of the project's physics
data sheet (shared/reference/physics-data.md, "computed here" values of its
author). Every row names its source.

    run_checks(groups=None) -> tuple[CheckResult, ...]
    GROUPS                              names of the check groups, in order

The relative error is |computed - reference| / |reference|, or the absolute
difference where the reference is 0. A check passes when that error is at or
below its tolerance; a check whose module is not part of this build is
skipped; an exception inside a check is a failure with the message kept.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Callable

import numpy as np

__all__ = ["CheckResult", "GROUPS", "run_checks"]

SHEET = "physics-data sheet"


@dataclass(frozen=True)
class CheckResult:
    """One row of the validation table."""

    group: str
    case: str
    computed: float
    reference: float
    relative_error: float
    tolerance: float
    source: str
    status: str  # "pass" | "fail" | "skip"
    note: str = ""

    @property
    def failed(self) -> bool:
        return self.status == "fail"

    def as_dict(self) -> dict:
        d = asdict(self)
        for key in ("computed", "reference", "relative_error"):
            v = d[key]
            d[key] = None if v is None or not math.isfinite(v) else v
        return d


def _row(group, case, computed, reference, tolerance, source, note=""):
    computed, reference = float(computed), float(reference)
    err = abs(computed - reference) / abs(reference) if reference != 0.0 else abs(computed - reference)
    status = "pass" if err <= tolerance else "fail"  # NaN fails
    return CheckResult(group, case, computed, reference, err, tolerance, source, status, note)


# ---------------------------------------------------------------- closed forms

def _kappa_per_nm():
    """sqrt(2 m0 q)/hbar in nm^-1 eV^-1/2 (5.12317, physics-data sheet Sec. 1)."""
    from solver.units import EV_TO_J, HBAR_J_S, M0_KG

    return math.sqrt(2.0 * M0_KG * EV_TO_J) / HBAR_J_S * 1e-9


def _rectangular_closed_form(E, U, d, mb, left, right):
    """T of a flat barrier with effective-mass matching, and ln T (physics-data Sec. 6 item 1).

    a = k_L/m_L, c = k_R/m_R, b = kappa/m_b:
    T = 4ac b^2 / [b^2 (a+c)^2 cosh^2(kappa d) + (b^2 - ac)^2 sinh^2(kappa d)] below the top,
    T = 4ac b'^2 / [b'^2 (a+c)^2 cos^2(k d) + (b'^2 + ac)^2 sin^2(k d)] above it.
    """
    c0 = _kappa_per_nm()
    a = c0 * math.sqrt(left[1] * (E - left[0])) / left[1]
    c = c0 * math.sqrt(right[1] * (E - right[0])) / right[1]
    if E < U:
        kappa = c0 * math.sqrt(mb * (U - E))
        b = kappa / mb
        x = kappa * d
        if x < 300:
            den = b * b * (a + c) ** 2 * math.cosh(x) ** 2 + (b * b - a * c) ** 2 * math.sinh(x) ** 2
            t = 4 * a * c * b * b / den
            return t, math.log(t)
        # cosh^2, sinh^2 -> e^{2x}/4 (relative corrections e^{-2x} < 1e-260)
        ln_t = math.log(16 * a * c * b * b) - math.log(b * b * (a + c) ** 2 + (b * b - a * c) ** 2) - 2 * x
        return math.exp(ln_t), ln_t
    k = c0 * math.sqrt(mb * (E - U))
    bp = k / mb
    x = k * d
    t = 4 * a * c * bp * bp / (bp * bp * (a + c) ** 2 * math.cos(x) ** 2 + (bp * bp + a * c) ** 2 * math.sin(x) ** 2)
    return t, math.log(t)


def _fn_exponent(barrier_eV, mass, field_MV_cm):
    """B/F = 4 sqrt(2 m m0) Phi^(3/2) / (3 q hbar F), straight from scipy.constants (Lenzlinger & Snow 1969)."""
    from scipy.constants import e, hbar, m_e

    return 4.0 * math.sqrt(2.0 * mass * m_e) * (barrier_eV * e) ** 1.5 / (3.0 * e * hbar * field_MV_cm * 1e8)


# ---------------------------------------------------------------- groups


def _transmission_checks():
    from solver.tunneling import Barrier, transmission

    g = "transmission"
    src = f"closed form, {SHEET} Sec. 6 item 1 (BenDaniel & Duke matching)"
    rows = []
    cases = [  # (E, U, d, m_b, left, right) as in the sheet's Sec. 7 rows
        (1.0, 3.1, 2.0, 0.5, (0.0, 1.0), (0.0, 1.0)),
        (0.1, 3.1, 1.5, 0.5, (0.0, 0.916), (0.0, 0.19)),
        (0.5, 2.0, 3.0, 0.4, (0.0, 0.3), (0.2, 1.0)),
        (3.5, 3.1, 2.0, 0.5, (0.0, 1.0), (0.0, 1.0)),
        (1.0, 3.1, 40.0, 0.5, (0.0, 1.0), (0.0, 1.0)),
    ]
    for E, U, d, mb, left, right in cases:
        b = Barrier((d,), (U,), (U,), (mb,), left, right)
        ref, _ = _rectangular_closed_form(E, U, d, mb, left, right)
        t = float(transmission(b, E))
        label = f"flat {d:g} nm, U {U:g} eV, m {mb:g}, E {E:g} eV"
        rows.append(_row(g, label, t, ref, 1e-6, src))
    src7 = f"{SHEET} Sec. 7 (Airy matrix vs 4000-slice staircase, computed there)"
    for (d, u0, u1, mb, left, right, E, ref) in [
        (4.0, 3.1, 0.1, 0.5, (-0.5, 0.5), (-3.0, 0.5), 0.0, 9.47309e-16),
        (3.0, 3.1, 1.1, 0.42, (0.0, 0.5), (-2.0, 1.0), 0.2, 3.027721e-12),
    ]:
        t = float(transmission(Barrier((d,), (u0,), (u1,), (mb,), left, right), E))
        rows.append(_row(g, f"linear {u0:g}->{u1:g} eV over {d:g} nm, E {E:g} eV", t, ref, 1e-6, src7))
    # a layer whose ends differ by 1e-12 eV against the flat closed form (contract: exact flat limit)
    E, U, d, mb = 1.0, 3.1, 2.0, 0.5
    ref, _ = _rectangular_closed_form(E, U, d, mb, (0.0, 1.0), (0.0, 1.0))
    t = float(transmission(Barrier((d,), (U,), (U + 1e-12,), (mb,), (0.0, 1.0), (0.0, 1.0)), E))
    rows.append(_row(g, "near-flat layer (ends 1e-12 eV apart)", t, ref, 1e-6, src))
    # reciprocity: the sheet's linear layer swapped end for end gives the same T at the same energy
    b = Barrier((4.0,), (3.1,), (0.1,), (0.5,), (-0.5, 0.5), (-3.0, 0.5)).reversed()
    rows.append(_row(g, "linear 0.1->3.1 eV over 4 nm (the above reversed), E 0 eV", float(transmission(b, 0.0)),
                     9.47309e-16, 1e-6, f"{src7}; reciprocity of the flux transmission (common practice)"))
    return rows


def _wkb_checks():
    from solver.tunneling import Barrier, wkb_transmission
    from solver.tunneling.wkb import wkb_exponent

    g = "wkb"
    src = f"{SHEET} Sec. 7 (4 digits, computed there)"
    rows = []
    for b, E, ref in [
        (Barrier((2.0,), (3.1,), (3.1,), (0.5,), (0.0, 1.0), (0.0, 1.0)), 1.0, 7.592e-10),
        (Barrier((1.5,), (3.1,), (3.1,), (0.5,), (0.0, 0.916), (0.0, 0.19)), 0.1, 6.683e-9),
        (Barrier((3.0,), (2.0,), (2.0,), (0.4,), (0.0, 0.3), (0.2, 1.0)), 0.5, 4.564e-11),
        (Barrier((4.0,), (3.1,), (0.1,), (0.5,), (-0.5, 0.5), (-3.0, 0.5)), 0.0, 6.643e-16),
        (Barrier((3.0,), (3.1,), (1.1,), (0.42,), (0.0, 0.5), (-2.0, 1.0)), 0.2, 1.660e-12),
    ]:
        label = f"{b.thickness_nm[0]:g} nm, U {b.u_start_eV[0]:g}->{b.u_end_eV[0]:g} eV, E {E:g} eV"
        rows.append(_row(g, label, float(wkb_transmission(b, E)), ref, 5e-4, src))
    # triangular barrier: the exponent is the Fowler–Nordheim B/F
    b = Barrier((5.0,), (3.2,), (-1.8,), (0.42,), (-1.0, 0.5), (-2.0, 0.5))
    rows.append(_row(g, "triangular 3.2 eV at 10 MV/cm: 2 int kappa dx", float(wkb_exponent(b, 0.0)),
                     _fn_exponent(3.2, 0.42, 10.0), 1e-10,
                     "B/F, Lenzlinger & Snow (1969) exponent from scipy.constants"))
    return rows


def _fowler_nordheim_checks():
    from solver.tunneling import Barrier
    from solver.tunneling.fowler_nordheim import (
        direct_tunneling_current,
        fowler_nordheim_constants,
        fowler_nordheim_current,
    )
    from solver.tunneling.wkb import wkb_exponent

    g = "fowler-nordheim"
    rows = [
        _row(g, "J at 10 MV/cm, 3.2 eV, m 0.42 (A/cm^2)", fowler_nordheim_current(10.0, 3.2, 0.42), 1.132e-3, 1e-3,
             f"{SHEET} Sec. 7; parameters of Lenzlinger & Snow, J. Appl. Phys. 40, 278 (1969)"),
    ]
    c = fowler_nordheim_constants(3.2, 0.42)
    rows.append(_row(g, "A for 3.2 eV, 0.42 (A/V^2)", c.a_A_V2, 1.147e-6, 5e-4, f"{SHEET} Sec. 3.3"))
    rows.append(_row(g, "B for 3.2 eV, 0.42 (MV/cm)", c.b_MV_cm, 253.4, 5e-4, f"{SHEET} Sec. 3.3"))
    c = fowler_nordheim_constants(3.15, 0.50)
    rows.append(_row(g, "B for 3.15 eV, 0.50 (MV/cm)", c.b_MV_cm, 270.0, 5e-4, f"{SHEET} Sec. 3.3 (Weinberg-type set)"))
    # trapezoid form: FN beyond q V_ox = Phi, and its exponent is the trapezoid WKB integral
    rows.append(_row(g, "trapezoid form at q V_ox > Phi (5 nm, 8 MV/cm; A/cm^2)",
                     direct_tunneling_current(8.0, 5.0, 3.2, 0.42), 1.28e-6, 5e-3,
                     f"reduces to FN (Schuegraf & Hu, IEEE TED 41, 761 (1994)); FN value at 8 MV/cm, {SHEET} Sec. 3.3"))
    d, F = 3.0, 6.0
    drop = 0.1 * F * d
    b = Barrier((d,), (3.2,), (3.2 - drop,), (0.42,), (-1.0, 0.5), (-1.0 - drop, 0.5))
    r = drop / 3.2
    rows.append(_row(g, "trapezoid exponent = WKB integral (3 nm, 6 MV/cm)", float(wkb_exponent(b, 0.0)),
                     _fn_exponent(3.2, 0.42, F) * (1 - (1 - r) ** 1.5), 1e-10,
                     "Schuegraf & Hu (1994) exponent, B/F from scipy.constants"))
    return rows


def _image_force_checks():
    from scipy.special import ellipe, ellipk

    from solver.tunneling.fowler_nordheim import (
        forbes_t,
        forbes_v,
        murphy_good_t,
        murphy_good_v,
        schottky_lowering_eV,
    )

    g = "image-force"
    src = f"{SHEET} Sec. 7 (quadrature, computed there)"
    rows = []
    fs = (0.05, 0.1, 0.2, 0.3, 0.5)
    for f, ref in zip(fs, (0.92336, 0.85944, 0.74399, 0.63769, 0.44095)):
        rows.append(_row(g, f"v(f = {f:g})", murphy_good_v(f), ref, 1e-4, src))
    for f, ref in zip(fs, (1.01325, 1.02252, 1.03746, 1.04989, 1.07068)):
        rows.append(_row(g, f"t(f = {f:g})", murphy_good_t(f), ref, 1e-4, src))
    y = math.sqrt(0.3)
    m = (1 - y) / (1 + y)
    ell = "elliptic-integral form (Forbes & Deane, Proc. R. Soc. A 463, 2907 (2007), from memory; scipy.special)"
    rows.append(_row(g, "v(0.3) vs elliptic integrals", murphy_good_v(0.3),
                     math.sqrt(1 + y) * (ellipe(m) - y * ellipk(m)), 1e-10, ell))
    rows.append(_row(g, "t(0.3) vs elliptic integrals", murphy_good_t(0.3),
                     ((1 + y) * ellipe(m) - y * ellipk(m)) / math.sqrt(1 + y), 1e-10, ell))
    forbes = f"Forbes, APL 89, 113122 (2006): within ~0.4 % for f <= 0.5; exact value {SHEET} Sec. 7"
    rows.append(_row(g, "Forbes v(0.3) approximation", forbes_v(0.3), 0.63769, 4e-3, forbes))
    rows.append(_row(g, "Forbes t(0.3) approximation", forbes_t(0.3), 1.04989, 4e-3, forbes))
    rows.append(_row(g, "Schottky lowering, SiO2 at 10 MV/cm (eV)", schottky_lowering_eV(10.0, 2.13), 0.822, 1e-3,
                     f"{SHEET} Sec. 7"))
    return rows


def _airy_checks():
    import scipy.special as sp
    from scipy.optimize import brentq

    try:
        from solver.tunneling._airy import airy, airy_scaled
    except ModuleNotFoundError:
        return [CheckResult("airy", "Airy functions", math.nan, math.nan, math.nan, 0.0, "scipy.special", "skip",
                            "solver.tunneling._airy not in this build")]
    g = "airy"
    rows = []
    zp = np.linspace(1e-3, 40.0, 4001)
    ours = airy_scaled(zp)
    ref = sp.airye(zp)  # Ai e^zeta, Ai' e^zeta, Bi e^-zeta, Bi' e^-zeta
    for name, a, r in zip(("Ai", "Ai'", "Bi", "Bi'"), ours, ref):
        err = float(np.max(np.abs(a - r) / np.abs(r)))
        rows.append(_row(g, f"{name} scaled, 0 < z <= 40 (max rel. dev.)", err, 0.0, 1e-12, "scipy.special.airye"))
    zn = np.linspace(-40.0, 0.0, 4001)
    ours = airy(zn)
    ref = sp.airy(zn)
    # oscillatory side: deviation relative to the envelope |x|^(-/+1/4)/sqrt(pi) (A&S 10.4.60)
    env = np.maximum(np.abs(zn), 1.0) ** 0.25
    for name, a, r, scale in zip(("Ai", "Ai'", "Bi", "Bi'"), ours, ref, (1 / env, env, 1 / env, env)):
        err = float(np.max(np.abs(a - r) / (scale / math.sqrt(math.pi))))
        rows.append(_row(g, f"{name}, -40 <= z <= 0 (max dev. / envelope)", err, 0.0, 1e-12, "scipy.special.airy"))
    zeros = sp.ai_zeros(3)[0]
    for n, z0 in enumerate(zeros, start=1):
        root = brentq(lambda z: float(airy(z)[0]), z0 - 0.1, z0 + 0.1, xtol=1e-15, rtol=1e-15)
        rows.append(_row(g, f"zero a_{n} of Ai", root, z0, 1e-10,
                         "scipy.special.ai_zeros; Abramowitz & Stegun Table 10.13"))
    return rows


def _triangular_well_checks():
    import scipy.special as sp

    try:
        from solver.schrodinger import eigenstates
    except ModuleNotFoundError:
        return [CheckResult("triangular-well", "triangular well E0..E2", math.nan, math.nan, math.nan, 0.0,
                            "Stern 1972", "skip", "solver.schrodinger not in this build")]
    from solver.units import EV_TO_J, HBAR_J_S, M0_KG, Q_C

    g = "triangular-well"
    m, field_V_m = 0.916, 1e8  # 1 MV/cm
    x = np.linspace(0.0, 25.0, 5001)
    energies, _ = eigenstates(x, 0.1 * x, np.full(x.size, m), 3)  # U = qFx, 0.1 eV/nm
    scale = (HBAR_J_S**2 / (2 * m * M0_KG)) ** (1 / 3) * (Q_C * field_V_m) ** (2 / 3) / EV_TO_J
    src = (f"E_n = (hbar^2/2m)^(1/3) (qF)^(2/3) |a_n+1| (Stern, Phys. Rev. B 5, 4891 (1972); zeros from "
           f"scipy.special.ai_zeros; {SHEET} Sec. 7: 0.17453/0.30515/0.41209 eV)")
    rows = []
    for n, (e_n, a_n) in enumerate(zip(energies, sp.ai_zeros(3)[0])):
        rows.append(_row(g, f"E{n}, m 0.916, 1 MV/cm, hard wall (eV)", e_n, scale * abs(a_n), 1e-4, src))
    return rows


def _current_checks():
    from scipy import integrate
    from scipy.constants import e, k

    from solver.tunneling import Barrier, current_density, transmission
    from solver.tunneling.current import TSU_ESAKI_PREFACTOR_A_CM2_EV2, with_bias

    g = "current"
    rows = [
        _row(g, "Tsu–Esaki prefactor at 300 K (A cm^-2 eV^-1)", TSU_ESAKI_PREFACTOR_A_CM2_EV2 * k * 300.0 / e, 4.1837e8,
             1e-4, f"{SHEET} Sec. 1"),
    ]
    # Richardson–Dushman: thick barrier, WKB T = 1 over the top
    a0 = 120.173  # A cm^-2 K^-2, physics-data sheet Sec. 1
    b = Barrier((200.0,), (0.5,), (0.5,), (1.0,), (0.0, 1.0), (0.0, 1.0))
    j = current_density(b, 0.0, -1.0, 300.0, model="wkb", rtol=1e-7)
    rows.append(_row(g, "thermionic limit, 0.5 eV, 300 K (A/cm^2)", j, a0 * 300.0**2 * math.exp(-0.5 * e / (k * 300.0)),
                     2e-4, f"Richardson–Dushman law (Sze & Ng 2007 Ch. 6), A0 from {SHEET} Sec. 1"))
    # 0 K integral against scipy.integrate.quad
    b = with_bias(Barrier((2.5,), (3.1,), (3.1,), (0.5,), (0.0, 0.5), (0.0, 0.5)), 1.5)
    ref = integrate.quad(lambda x: float(transmission(b, x)) * (0.3 - x), 0.0, 0.3, epsabs=0, epsrel=1e-11)[0]
    rows.append(_row(g, "0 K current, 2.5 nm at 1.5 V (A/cm^2)", current_density(b, 0.3, -1.2, 0.0),
                     ref * TSU_ESAKI_PREFACTOR_A_CM2_EV2 * 0.5, 1e-4,
                     f"Tsu & Esaki, APL 22, 562 (1973) at 0 K ({SHEET} Sec. 6 item 7); scipy.integrate.quad"))
    # symmetry
    b = Barrier((1.5, 2.0), (3.0, 2.0), (2.5, 1.2), (0.4, 0.6), (0.0, 0.5), (-1.0, 0.5))
    rows.append(_row(g, "equal Fermi levels: J (A/cm^2)", current_density(b, 0.1, 0.1, 300.0), 0.0, 0.0,
                     "no supply difference (Tsu & Esaki 1973)"))
    # reciprocity: the 0 K case above swapped end for end, Fermi levels swapped, gives -J
    b = with_bias(Barrier((2.5,), (3.1,), (3.1,), (0.5,), (0.0, 0.5), (0.0, 0.5)), 1.5).reversed()
    rows.append(_row(g, "the 0 K case reversed, Fermi levels swapped: -J (A/cm^2)",
                     -current_density(b, -1.2, 0.3, 0.0), ref * TSU_ESAKI_PREFACTOR_A_CM2_EV2 * 0.5, 1e-4,
                     "reciprocity, equal lead masses (common practice); scipy.integrate.quad as above"))
    # Fowler–Nordheim limit of the WKB Tsu–Esaki integral (metal-like emitter, supply mass 1)
    b0 = Barrier((10.0,), (3.2,), (3.2,), (0.42,), (-3.0, 1.0), (-3.0, 1.0))
    rows.append(_row(g, "WKB Tsu–Esaki vs FN, 10 nm at 10 MV/cm, 0 K", current_density(with_bias(b0, 10.0), 0.0, -10.0,
                                                                                      0.0, model="wkb"),
                     1.132e-3, 0.06,
                     f"FN closed form (Lenzlinger & Snow 1969), value of {SHEET} Sec. 7; differs by the linearised "
                     "exponent"))
    return rows


_GROUP_FUNCS: dict[str, Callable[[], list]] = {
    "transmission": _transmission_checks,
    "wkb": _wkb_checks,
    "fowler-nordheim": _fowler_nordheim_checks,
    "image-force": _image_force_checks,
    "airy": _airy_checks,
    "triangular-well": _triangular_well_checks,
    "current": _current_checks,
}
GROUPS = tuple(_GROUP_FUNCS)


def run_checks(groups=None) -> tuple[CheckResult, ...]:
    """Run the checks of `groups` (names from GROUPS, or one name; None = all), in order.

    Raises ValueError for an unknown group name.
    """
    if isinstance(groups, str):
        groups = (groups,)
    names = GROUPS if not groups else tuple(groups)
    for n in names:
        if n not in _GROUP_FUNCS:
            raise ValueError(f"validation group {n!r} is unknown; known: {', '.join(GROUPS)}")
    results = []
    for n in names:
        try:
            results.extend(_GROUP_FUNCS[n]())
        except Exception as err:  # a broken check is a failed check, reported with its message
            results.append(CheckResult(n, f"{n} checks", math.nan, math.nan, math.nan, 0.0, "-", "fail",
                                       f"{type(err).__name__}: {err}"))
    return tuple(results)
