"""Carrier statistics: Fermi–Dirac integrals, 3-D band densities, dopant
ionization and 2-D subband occupation, each with the derivative a Newton
Poisson solver needs.

Fermi–Dirac integrals use Blakemore's normalisation (J. S. Blakemore,
Solid-State Electron. 25, 1067 (1982)):

    F_j(eta) = 1/Gamma(j+1) * integral_0^inf t^j / (1 + exp(t - eta)) dt,

so that F_j -> exp(eta) for eta -> -inf and dF_j/deta = F_{j-1}. Orders -1/2,
1/2 and 3/2 are provided, each to about 1e-14 relative for every real eta:

    eta < -2        the convergent series sum_k (-1)^(k+1) exp(k eta) / k^(j+1)
                    (20 terms; the first neglected term is < exp(-42))
    -2 <= eta < 40  piecewise Chebyshev interpolants (21 pieces of width 2,
                    degree 24) of the definition itself, evaluated once on first
                    use by composite Gauss–Legendre quadrature of the smooth
                    integrand 2 u^(2j+1) / (1 + exp(u^2 - eta)) (t = u^2). The
                    integrand is analytic within pi/(2 sqrt(eta)) of the real u
                    axis, the panels are 0.2 wide, so the quadrature is exact to
                    round-off; the nearest singularities of F_j in eta are at
                    +-i pi, which makes degree 24 on a width-2 piece exact to
                    round-off as well.
    eta >= 40       the Sommerfeld expansion
                    eta^(j+1)/Gamma(j+2) * sum_k 2(1 - 2^(1-2k)) zeta(2k)
                    Gamma(j+2)/Gamma(j+2-2k) eta^(-2k), 10 terms (remainder
                    < 1e-17 relative at eta = 40; for half-integer j the
                    reflection term cos(pi j) F_j(-eta) vanishes).

Sign conventions for the densities: the electrostatic potential phi (V)
shifts every band energy by -q phi, so
    n = N_c F_1/2((E_F - E_c)/kT),  dn/dphi = (q/kT) N_c F_-1/2(.)
    p = N_v F_1/2((E_v - E_F)/kT),  dp/dphi = -(q/kT) N_v F_-1/2(.)
Energies are in J, densities per m^3 (3-D) or per m^2 (2-D), derivatives with
respect to phi per V. `statistics` is "fermi-dirac" or "boltzmann".
"""
from __future__ import annotations

import math

import numpy as np
from scipy.special import expit, gamma, zeta

from solver.units import BOLTZMANN_J_K, HBAR_J_S, M0_KG, PLANCK_J_S, Q_C

__all__ = [
    "fermi_dirac_integral",
    "fermi_dirac_half",
    "fermi_dirac_minus_half",
    "inverse_fermi_dirac_half",
    "effective_dos_m3",
    "subband_dos_m2_J",
    "electron_density",
    "hole_density",
    "ionized_donors",
    "ionized_acceptors",
    "subband_density",
    "STATISTICS",
]

STATISTICS = ("fermi-dirac", "boltzmann")
ORDERS = (-0.5, 0.5, 1.5)

_SERIES_BELOW = -2.0
_ASYMPTOTIC_FROM = 40.0
_PIECE_WIDTH = 2.0
_DEGREE = 24
_SERIES_TERMS = 20
_SOMMERFELD_TERMS = 10

_cheb_cache: dict[float, np.ndarray] = {}


# --------------------------------------------------------------------------- quadrature reference
def _quadrature(j: float, eta: np.ndarray) -> np.ndarray:
    """F_j(eta) by composite Gauss–Legendre quadrature of the definition with
    t = u^2 (smooth integrand), for moderate eta (used to build the
    interpolants; about 1e-15 relative)."""
    eta = np.asarray(eta, dtype=float)
    nodes, wts = np.polynomial.legendre.leggauss(16)
    upper = math.sqrt(max(float(eta.max()), 0.0) + 60.0)  # exp(-60) tail dropped
    panels = int(math.ceil(upper / 0.2))
    edges = np.linspace(0.0, upper, panels + 1)
    half = 0.5 * np.diff(edges)
    mid = 0.5 * (edges[:-1] + edges[1:])
    u = (mid[:, None] + half[:, None] * nodes[None, :]).ravel()
    w = (half[:, None] * wts[None, :]).ravel()
    integrand = 2.0 * u ** (2 * j + 1) * expit(eta[:, None] - u[None, :] ** 2)
    return integrand @ w / gamma(j + 1.0)


def _chebyshev_table(j: float) -> np.ndarray:
    table = _cheb_cache.get(j)
    if table is None:
        pieces = int(round((_ASYMPTOTIC_FROM - _SERIES_BELOW) / _PIECE_WIDTH))
        # Sample at 2x as many first-kind Chebyshev points as coefficients kept:
        # the truncated discrete transform then averages the quadrature's
        # round-off instead of interpolating it.
        points = 2 * (_DEGREE + 1)
        i = np.arange(points)
        theta = np.pi * (i + 0.5) / points
        s = np.cos(theta)
        lo = _SERIES_BELOW + _PIECE_WIDTH * np.arange(pieces)
        eta = (lo[:, None] + 0.5 * _PIECE_WIDTH * (s[None, :] + 1.0)).ravel()
        values = _quadrature(j, eta).reshape(pieces, points)
        T = np.cos(np.outer(np.arange(_DEGREE + 1), theta))  # T[m, i] = T_m(s_i)
        table = values @ T.T * (2.0 / points)
        table[:, 0] *= 0.5
        _cheb_cache[j] = table
    return table


def _chebyshev_eval(j: float, eta: np.ndarray) -> np.ndarray:
    table = _chebyshev_table(j)
    piece = np.clip(((eta - _SERIES_BELOW) // _PIECE_WIDTH).astype(int), 0, table.shape[0] - 1)
    s = 2.0 * (eta - (_SERIES_BELOW + _PIECE_WIDTH * piece)) / _PIECE_WIDTH - 1.0
    c = table[piece]
    b1 = np.zeros_like(eta)
    b2 = np.zeros_like(eta)
    for m in range(_DEGREE, 0, -1):  # Clenshaw recurrence
        b1, b2 = 2.0 * s * b1 - b2 + c[:, m], b1
    return s * b1 - b2 + c[:, 0]


def _series(j: float, eta: np.ndarray) -> np.ndarray:
    z = np.exp(eta)
    total = np.zeros_like(eta)
    zk = np.ones_like(eta)
    for k in range(1, _SERIES_TERMS + 1):
        zk = zk * z
        term = zk / k ** (j + 1.0)
        total = total + term if k % 2 else total - term
    return total


_SOMMERFELD = {
    j: np.array(
        [1.0]
        + [
            2.0 * (1.0 - 2.0 ** (1 - 2 * k)) * zeta(2 * k) * gamma(j + 2.0) / gamma(j + 2.0 - 2 * k)
            for k in range(1, _SOMMERFELD_TERMS + 1)
        ]
    )
    for j in ORDERS
}


def _sommerfeld(j: float, eta: np.ndarray) -> np.ndarray:
    inv2 = 1.0 / (eta * eta)
    coef = _SOMMERFELD[j]
    acc = np.zeros_like(eta)
    for c in coef[::-1]:  # Horner in eta^-2
        acc = acc * inv2 + c
    return np.exp((j + 1.0) * np.log(eta) - math.lgamma(j + 2.0)) * acc


# --------------------------------------------------------------------------- public integrals
def fermi_dirac_integral(order: float, eta):
    """Normalised Fermi–Dirac integral F_order(eta) (Blakemore convention),
    order in (-0.5, 0.5, 1.5); eta scalar or array (result of the same shape).
    NaN gives NaN; +inf gives inf; -inf gives 0."""
    j = float(order)
    if j not in ORDERS:
        raise ValueError(f"order must be one of {ORDERS}, got {order!r}")
    eta = np.asarray(eta, dtype=float)
    flat = eta.ravel()
    out = np.full(flat.shape, np.nan)
    low = flat < _SERIES_BELOW
    high = flat >= _ASYMPTOTIC_FROM
    mid = ~(low | high) & np.isfinite(flat)
    if low.any():
        out[low] = _series(j, flat[low])
    if mid.any():
        out[mid] = _chebyshev_eval(j, flat[mid])
    if high.any():
        with np.errstate(over="ignore"):
            out[high] = _sommerfeld(j, flat[high])
    return out.reshape(eta.shape)


def fermi_dirac_half(eta):
    """F_{1/2}(eta), Blakemore's normalisation: n = N_c F_{1/2}(eta)."""
    return fermi_dirac_integral(0.5, eta)


def fermi_dirac_minus_half(eta):
    """F_{-1/2}(eta) = dF_{1/2}/deta."""
    return fermi_dirac_integral(-0.5, eta)


def inverse_fermi_dirac_half(value):
    """eta such that F_{1/2}(eta) = value (value > 0, scalar or array).

    Newton's method on ln F_{1/2}, which is increasing and concave in eta, so
    after the first step the iterates rise monotonically to the root; started
    from Nilsson's approximation (N. G. Nilsson, Phys. Status Solidi A 19, K75
    (1973), from memory; within a few per cent). Relative accuracy of the
    result ~1e-14 in F."""
    y = np.asarray(value, dtype=float)
    if np.any(~(y > 0)) or np.any(~np.isfinite(y)):
        bad = y.ravel()[np.argmax(~((y > 0) & np.isfinite(y)).ravel())]
        raise ValueError(f"value must be finite and > 0 (a reduced density n/N_c), got {bad}")
    flat = y.ravel()
    r = flat
    v = (0.75 * math.sqrt(math.pi) * r) ** (2.0 / 3.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        eta = np.where(
            np.abs(r - 1.0) > 1e-6, np.log(r) / (1.0 - r * r), -0.5 + 0.0 * r
        ) + v / (1.0 + (0.24 + 1.08 * v) ** -2)
    log_target = np.log(flat)
    for _ in range(60):
        f = fermi_dirac_half(eta)
        df = fermi_dirac_minus_half(eta)
        step = (log_target - np.log(f)) * f / df
        eta = eta + step
        if np.all(np.abs(step) <= 1e-14 * np.maximum(1.0, np.abs(eta))):
            break
    return eta.reshape(y.shape)


# --------------------------------------------------------------------------- densities of states
def effective_dos_m3(dos_mass, temperature_K):
    """Effective density of states 2 (2 pi m_d m0 kT / h^2)^(3/2), per m^3
    (Sze & Ng 2007, Ch. 1). dos_mass in m0."""
    kT = BOLTZMANN_J_K * np.asarray(temperature_K, dtype=float)
    return 2.0 * (2.0 * np.pi * np.asarray(dos_mass) * M0_KG * kT / PLANCK_J_S**2) ** 1.5


def subband_dos_m2_J(degeneracy, dos_mass):
    """2-D density of states of a subband ladder, g_v m_d m0 / (pi hbar^2)
    per m^2 per J (spin included; Ando, Fowler, Stern 1982 Sec. III)."""
    return np.asarray(degeneracy) * np.asarray(dos_mass) * M0_KG / (np.pi * HBAR_J_S**2)


def _check_statistics(statistics: str) -> bool:
    if statistics not in STATISTICS:
        raise ValueError(f"statistics must be one of {STATISTICS}, got {statistics!r}")
    return statistics == "boltzmann"


def _kT(temperature_K):
    T = np.asarray(temperature_K, dtype=float)
    if np.any(~(T > 0)):
        raise ValueError(f"temperature_K must be > 0, got {temperature_K}")
    return BOLTZMANN_J_K * T


def _band_density(eta, dos_m3, kT, boltzmann):
    if boltzmann:
        with np.errstate(over="ignore"):
            f = np.exp(eta)
        return dos_m3 * f, dos_m3 * f * (Q_C / kT)
    return dos_m3 * fermi_dirac_half(eta), dos_m3 * fermi_dirac_minus_half(eta) * (Q_C / kT)


# --------------------------------------------------------------------------- 3-D carriers
def electron_density(conduction_band_J, fermi_level_J, conduction_dos_m3, temperature_K,
                     statistics="fermi-dirac"):
    """Electron density n = N_c F_{1/2}((E_F - E_c)/kT) per m^3 and dn/dphi
    per m^3 per V (phi the electrostatic potential, E_c = E_c0 - q phi).

    Returns (n_m3, dn_dphi_m3_V), arrays broadcast from the inputs."""
    boltzmann = _check_statistics(statistics)
    kT = _kT(temperature_K)
    eta = (np.asarray(fermi_level_J, dtype=float) - np.asarray(conduction_band_J, dtype=float)) / kT
    return _band_density(eta, np.asarray(conduction_dos_m3, dtype=float), kT, boltzmann)


def hole_density(valence_band_J, fermi_level_J, valence_dos_m3, temperature_K,
                 statistics="fermi-dirac"):
    """Hole density p = N_v F_{1/2}((E_v - E_F)/kT) per m^3 and dp/dphi
    per m^3 per V (negative: raising phi lowers E_v).

    Returns (p_m3, dp_dphi_m3_V)."""
    boltzmann = _check_statistics(statistics)
    kT = _kT(temperature_K)
    eta = (np.asarray(valence_band_J, dtype=float) - np.asarray(fermi_level_J, dtype=float)) / kT
    p, dp = _band_density(eta, np.asarray(valence_dos_m3, dtype=float), kT, boltzmann)
    return p, -dp


# --------------------------------------------------------------------------- dopants
DONOR_DEGENERACY = 2.0     # common practice (Sze & Ng 2007, Ch. 1)
ACCEPTOR_DEGENERACY = 4.0  # common practice for Si (two-fold degenerate valence band top)


def ionized_donors(donors_m3, conduction_band_J, fermi_level_J, ionization_J, temperature_K,
                   ionization="incomplete", degeneracy=DONOR_DEGENERACY):
    """Ionized donor density N_D+ = N_D / (1 + g_D exp((E_F - E_D)/kT)),
    E_D = E_c - ionization_J, per m^3, and dN_D+/dphi per m^3 per V.
    ionization="complete" gives N_D+ = N_D (derivative 0).

    Returns (nd_plus_m3, dnd_dphi_m3_V)."""
    nd = np.asarray(donors_m3, dtype=float)
    if ionization == "complete":
        shape = np.broadcast_shapes(nd.shape, np.shape(conduction_band_J))
        return np.broadcast_to(nd, shape).copy(), np.zeros(shape)
    if ionization != "incomplete":
        raise ValueError(f"ionization must be 'complete' or 'incomplete', got {ionization!r}")
    kT = _kT(temperature_K)
    ed = np.asarray(conduction_band_J, dtype=float) - np.asarray(ionization_J, dtype=float)
    z = (np.asarray(fermi_level_J, dtype=float) - ed) / kT + math.log(degeneracy)
    # E_D moves with -q phi: dz/dphi = q/kT
    return nd * expit(-z), -nd * expit(z) * expit(-z) * (Q_C / kT)


def ionized_acceptors(acceptors_m3, valence_band_J, fermi_level_J, ionization_J, temperature_K,
                      ionization="incomplete", degeneracy=ACCEPTOR_DEGENERACY):
    """Ionized acceptor density N_A- = N_A / (1 + g_A exp((E_A - E_F)/kT)),
    E_A = E_v + ionization_J, per m^3, and dN_A-/dphi per m^3 per V.
    ionization="complete" gives N_A- = N_A (derivative 0).

    Returns (na_minus_m3, dna_dphi_m3_V)."""
    na = np.asarray(acceptors_m3, dtype=float)
    if ionization == "complete":
        shape = np.broadcast_shapes(na.shape, np.shape(valence_band_J))
        return np.broadcast_to(na, shape).copy(), np.zeros(shape)
    if ionization != "incomplete":
        raise ValueError(f"ionization must be 'complete' or 'incomplete', got {ionization!r}")
    kT = _kT(temperature_K)
    ea = np.asarray(valence_band_J, dtype=float) + np.asarray(ionization_J, dtype=float)
    z = (ea - np.asarray(fermi_level_J, dtype=float)) / kT + math.log(degeneracy)
    # E_A moves with -q phi: dz/dphi = -q/kT
    return na * expit(-z), na * expit(z) * expit(-z) * (Q_C / kT)


# --------------------------------------------------------------------------- 2-D subbands
def subband_density(subband_J, fermi_level_J, degeneracy, dos_mass, temperature_K,
                    statistics="fermi-dirac"):
    """Sheet density of a 2-D subband at E_i,
    N_i = g_v m_d m0 kT/(pi hbar^2) ln(1 + exp((E_F - E_i)/kT))  per m^2
    (Ando, Fowler, Stern 1982, Sec. III), computed as logaddexp(0, x) so it
    neither overflows nor loses digits for x << 0; "boltzmann" uses exp(x).

    Returns (N_m2, dN_dE_F_m2_J); dN/dE_i = -dN/dE_F, and a potential change
    dphi that lowers E_i by q dphi changes N by q dphi dN/dE_F."""
    boltzmann = _check_statistics(statistics)
    kT = _kT(temperature_K)
    dos = subband_dos_m2_J(degeneracy, dos_mass)
    x = (np.asarray(fermi_level_J, dtype=float) - np.asarray(subband_J, dtype=float)) / kT
    if boltzmann:
        with np.errstate(over="ignore"):
            f = np.exp(x)
        return dos * kT * f, dos * f
    return dos * kT * np.logaddexp(0.0, x), dos * expit(x)
