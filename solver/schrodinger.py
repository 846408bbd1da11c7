"""Bound states of the effective-mass Schrödinger equation with a
position-dependent mass (BenDaniel–Duke form), planar and cylindrical-radial.

Planar operator, on a possibly non-uniform grid x_0 < ... < x_{n-1}:

    -hbar^2/2 d/dx (1/m(x) d psi/dx) + U(x) psi = E psi,   psi(x_0) = psi(x_{n-1}) = 0.

Discretisation (box / finite-volume method): the flux (1/m) psi' is constant
along the link [x_i, x_{i+1}] of length h_i, so psi_{i+1} - psi_i = flux * h_i
<m>_i with <m>_i the mass averaged along the link. With nodal masses the
average is the arithmetic mean (m_i + m_{i+1})/2, which is exact for a mass
step placed midway between two nodes; the link coefficient is
c_i = hbar^2 / (2 <m>_i h_i). Integrating over the box of node i (width
w_i = (h_{i-1} + h_i)/2) gives the generalized symmetric problem

    (c_{i-1} + c_i + w_i U_i) psi_i - c_{i-1} psi_{i-1} - c_i psi_{i+1} = E w_i psi_i,

which the substitution phi = W^{1/2} psi turns into an ordinary symmetric
tridiagonal problem solved by `scipy.linalg.eigh_tridiagonal` for only the
lowest `count` states (bisection + inverse iteration). sum_i w_i psi_i^2 = 1
is exactly the trapezoid integral of psi^2 (psi vanishes at both ends).
Eigenvalues converge at second order in the spacing on uniform grids and on
smoothly graded ones. A mass step on a node (nodal averages would be first
order there): `link_mass` gives each link its own material's mass, and with
the box average of U on the step node the scheme stays second order.

Cylindrical-radial operator for a state psi(r, theta) = R(r) exp(i l theta) / sqrt(2 pi):

    -hbar^2/2 [ (1/r) d/dr (r/m dR/dr) - l^2/(m r^2) R ] + U R = E R,

discretised the same way with r-weighted boxes (A_i = integral of r dr over the
box) and link coefficients hbar^2 r_{i+1/2} / (2 <m>_i h_i); the centrifugal
term is lumped like the potential, hbar^2 l^2 A_i / (2 m_i r_i^2).

Public functions
----------------
eigenstates(x_nm, u_eV, mass, count)            contract function (trade units)
eigenstates_si(x_m, u_J, mass, count)           the same in SI
radial_eigenstates(r_nm, u_eV, mass, count, angular_momentum=0)
radial_eigenstates_si(r_m, u_J, mass, count, angular_momentum=0)
Hamiltonian.planar(x_m, mass, link_mass=None) / Hamiltonian.radial(r_m, mass, l, link_mass=None)
                                                 operator prepared once on a fixed
                                                 grid and mass; `.solve(u_J, count)`
                                                 changes only the diagonal (for the
                                                 self-consistent loop)
"""
from __future__ import annotations

import operator

import numpy as np
from scipy.linalg import eigh_tridiagonal

from solver.units import EV_TO_J, HBAR_J_S, M0_KG, NM_TO_M

# hbar^2 / (2 m0) in eV nm^2 (0.0380998, physics-data sheet Sec. 1). The
# tridiagonal problem is assembled in eV and nm so its entries are O(1).
_KINETIC_EV_NM2 = HBAR_J_S**2 / (2.0 * M0_KG) / EV_TO_J / NM_TO_M**2

__all__ = [
    "eigenstates",
    "eigenstates_si",
    "radial_eigenstates",
    "radial_eigenstates_si",
    "Hamiltonian",
]


# --------------------------------------------------------------------------- input checks
def _as_grid(values, name: str, *, minimum: float | None = None) -> np.ndarray:
    arr = np.asarray(values, dtype=float)
    if arr.ndim != 1:
        raise ValueError(f"{name} must be a 1-D array, got shape {arr.shape}")
    if arr.size < 3:
        raise ValueError(f"{name} must have at least 3 nodes, got {arr.size}")
    bad = ~np.isfinite(arr)
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueError(f"{name} must be finite, got {arr[i]} at index {i}")
    steps = np.diff(arr)
    if not np.all(steps > 0):
        i = int(np.argmax(~(steps > 0)))
        raise ValueError(
            f"{name} must be strictly increasing, got {arr[i]} then {arr[i + 1]} "
            f"at indices {i}, {i + 1}"
        )
    if minimum is not None and arr[0] < minimum:
        raise ValueError(f"{name} must be >= {minimum}, got {arr[0]} at index 0")
    return arr


def _as_nodal(values, name: str, n: int, *, positive: bool = False) -> np.ndarray:
    arr = np.asarray(values, dtype=float)
    if arr.ndim == 0 and positive:  # a uniform mass given as a scalar
        arr = np.full(n, float(arr))
    if arr.shape != (n,):
        raise ValueError(f"{name} must have the grid's length {n}, got shape {arr.shape}")
    bad = ~np.isfinite(arr)
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueError(f"{name} must be finite, got {arr[i]} at index {i}")
    if positive and not np.all(arr > 0):
        i = int(np.argmax(~(arr > 0)))
        raise ValueError(f"{name} must be > 0 (units of m0), got {arr[i]} at index {i}")
    return arr


def _link_masses(mass, link_mass, n: int) -> np.ndarray:
    """Mass on every link: `link_mass` (one per link, m0) when given, else the
    arithmetic mean of the nodal masses (exact for a step midway)."""
    if link_mass is None:
        return 0.5 * (mass[:-1] + mass[1:])
    arr = np.asarray(link_mass, dtype=float)
    if arr.shape != (n - 1,):
        raise ValueError(f"link_mass must have one value per link ({n - 1}), got shape {arr.shape}")
    if not np.all(np.isfinite(arr) & (arr > 0)):
        i = int(np.argmax(~(np.isfinite(arr) & (arr > 0))))
        raise ValueError(f"link_mass must be finite and > 0 (units of m0), got {arr[i]} at index {i}")
    return arr


def _as_count(count, unknowns: int) -> int:
    try:
        k = operator.index(count)
    except TypeError:
        raise ValueError(f"count must be an integer, got {count!r}") from None
    if not 1 <= k <= unknowns:
        raise ValueError(
            f"count must be between 1 and {unknowns} (the number of interior nodes), got {k}"
        )
    return k


def _fix_signs(psi: np.ndarray) -> None:
    """Make the first significant lobe of each column positive (in place): the
    sign of the first node where |psi| exceeds 1 % of its maximum, a node where
    the sign cannot flip under round-off."""
    if psi.size == 0:
        return
    mag = np.abs(psi)
    first = np.argmax(mag >= 0.01 * mag.max(axis=0), axis=0)
    signs = np.sign(psi[first, np.arange(psi.shape[1])])
    signs[signs == 0] = 1.0
    psi *= signs


# --------------------------------------------------------------------------- operator
class Hamiltonian:
    """Box-method Hamiltonian prepared once on a fixed grid and mass.

    Only the potential changes between calls of `solve`, so a self-consistent
    loop pays the assembly once. Build it with `Hamiltonian.planar(x_m, mass)`
    or `Hamiltonian.radial(r_m, mass, angular_momentum)`.

    Attributes
    ----------
    x_m : ndarray
        Node positions (planar depth or radius), m, read-only.
    weights_m : ndarray
        Box measure of every node: width in m (planar) or integral of r dr in
        m^2 (radial); zero at Dirichlet nodes. sum(weights_m * psi**2) == 1 for
        every returned state, and the carrier density of a state is
        psi**2 (planar, per m^3 per m^-2 of sheet density) or psi**2 / (2 pi)
        (radial, per m^3 per unit of charge per length).
    unknowns : ndarray of int
        Indices of the nodes solved for (the others hold psi = 0).
    geometry : "planar" | "radial"
    angular_momentum : int
    """

    def __init__(self, x_m, coupling_eV, kinetic_diag_eV, weights_nm, unknowns, geometry, l):
        # Internal: use the `planar` / `radial` constructors.
        self.x_m = x_m
        self.geometry = geometry
        self.angular_momentum = l
        self.unknowns = unknowns
        w = weights_nm[unknowns]
        self._inv_sqrt_w = 1.0 / np.sqrt(w)
        self._kinetic = kinetic_diag_eV[unknowns] / w  # eV
        # Off-diagonal between consecutive unknowns, symmetrised.
        self._offdiag = -coupling_eV * self._inv_sqrt_w[:-1] * self._inv_sqrt_w[1:]
        self._n = x_m.size
        # Normalisation in SI: psi_nm * scale -> per m^(1/2) (planar) or per m (radial).
        self._psi_scale = NM_TO_M ** (-0.5 if geometry == "planar" else -1.0)
        weights_m = weights_nm * (NM_TO_M if geometry == "planar" else NM_TO_M**2)
        self.weights_m = weights_m
        for arr in (self.x_m, self.weights_m, self.unknowns):
            arr.flags.writeable = False

    # -- constructors
    @classmethod
    def planar(cls, x_m, mass, link_mass=None) -> "Hamiltonian":
        """Planar operator on nodes `x_m` (m, strictly increasing) with nodal
        masses `mass` (units of m0, scalar or one per node); psi = 0 at both ends.
        `link_mass` (one per link) replaces the link averages of the nodal
        masses, e.g. for a mass step on a node: the links on either side then
        carry their own material's mass (give that node the box-averaged
        potential as well, and the scheme stays second order)."""
        x = _as_grid(x_m, "x_m")
        m = _as_nodal(mass, "mass", x.size, positive=True)
        x_nm = x / NM_TO_M
        h = np.diff(x_nm)
        m_link = _link_masses(m, link_mass, x.size)
        c = _KINETIC_EV_NM2 / (m_link * h)  # eV per link
        diag = np.zeros(x.size)
        diag[1:-1] = c[:-1] + c[1:]
        weights = np.zeros(x.size)
        weights[1:-1] = 0.5 * (h[:-1] + h[1:])
        unknowns = np.arange(1, x.size - 1)
        # Couplings between consecutive unknowns are the interior links c[1:-1].
        return cls(x.copy(), c[1:-1], diag, weights, unknowns, "planar", 0)

    @classmethod
    def radial(cls, r_m, mass, angular_momentum: int = 0, link_mass=None) -> "Hamiltonian":
        """Cylindrical-radial operator for angular momentum l = `angular_momentum`
        on radii `r_m` (m, strictly increasing, r_m[0] >= 0); `link_mass` as in
        `planar`.

        Boundaries: R = 0 at the outer radius. At the inner end R = 0 too,
        except for l = 0 with r_m[0] == 0 (the axis), where regularity
        (dR/dr = 0) holds and the axis node is solved for. Channels +l and -l
        are degenerate; the caller counts them twice for l >= 1.
        """
        r = _as_grid(r_m, "r_m", minimum=0.0)
        m = _as_nodal(mass, "mass", r.size, positive=True)
        try:
            l = operator.index(angular_momentum)
        except TypeError:
            raise ValueError(
                f"angular_momentum must be an integer, got {angular_momentum!r}"
            ) from None
        if l < 0:
            raise ValueError(f"angular_momentum must be >= 0 (|l|), got {l}")
        r_nm = r / NM_TO_M
        h = np.diff(r_nm)
        r_mid = 0.5 * (r_nm[:-1] + r_nm[1:])
        m_link = _link_masses(m, link_mass, r.size)
        c = _KINETIC_EV_NM2 * r_mid / (m_link * h)
        n = r.size
        # Box edges: the node itself at both ends, link midpoints inside.
        lo = np.empty(n)
        hi = np.empty(n)
        lo[0], lo[1:] = r_nm[0], r_mid
        hi[-1], hi[:-1] = r_nm[-1], r_mid
        weights = 0.5 * (hi**2 - lo**2)
        diag = np.zeros(n)
        diag[1:] += c
        diag[:-1] += c
        axis_free = l == 0 and r_nm[0] == 0.0
        if l:
            # Centrifugal term lumped like U: (l^2 / m_i r_i^2) * A_i. Integrating
            # 1/r over the box instead (ln of the edge ratio) leaves an h^2 ln h
            # error from the nodes next to the axis, where R ~ r^l.
            diag[1:-1] += _KINETIC_EV_NM2 * l * l / m[1:-1] * weights[1:-1] / r_nm[1:-1] ** 2
        start = 0 if axis_free else 1
        unknowns = np.arange(start, n - 1)
        weights[n - 1] = 0.0
        if not axis_free:
            weights[0] = 0.0
        coupling = c[start:-1]
        return cls(r.copy(), coupling, diag, weights, unknowns, "radial", l)

    # -- solve
    def solve(self, u_J, count: int):
        """Lowest `count` eigenstates for the nodal potential energy `u_J` (J).

        Returns (energies_J ascending shape (count,), psi shape (n, count)) with
        psi real, normalised so that sum(weights_m * psi**2) = 1 (m^-1/2 planar,
        m^-1 radial), zero at Dirichlet nodes, first significant lobe positive.
        """
        u = _as_nodal(u_J, "u_J", self._n)
        energies_eV, psi = self._solve_eV(u * (1.0 / EV_TO_J), count)
        return energies_eV * EV_TO_J, psi * self._psi_scale

    def _solve_eV(self, u_eV: np.ndarray, count: int):
        idx = self.unknowns
        k = _as_count(count, idx.size)
        d = self._kinetic + u_eV[idx]
        w, v = eigh_tridiagonal(
            d, self._offdiag, select="i", select_range=(0, k - 1), check_finite=False
        )
        psi = np.zeros((self._n, k))
        psi[idx] = v * self._inv_sqrt_w[:, None]
        _fix_signs(psi)
        return w, psi


# --------------------------------------------------------------------------- functions
def eigenstates(x_nm, u_eV, mass, count):
    """Lowest bound states of -hbar^2/2 d/dx (1/m d psi/dx) + U psi = E psi.

    Parameters
    ----------
    x_nm : array_like, shape (n,)
        Node positions, nm, strictly increasing (non-uniform allowed).
    u_eV : array_like, shape (n,)
        Potential energy at the nodes, eV.
    mass : array_like, shape (n,)
        Effective mass at the nodes, units of m0 (> 0).
    count : int
        Number of states, 1 <= count <= n - 2.

    Returns
    -------
    energies_eV : ndarray, shape (count,)
        Ascending eigenvalues, eV (same scale as `u_eV`).
    psi : ndarray, shape (n, count)
        Real eigenfunctions, nm^-1/2, psi = 0 at both ends, trapezoid integral
        of psi**2 over x_nm equal to 1, first significant lobe positive.

    Raises
    ------
    ValueError
        Naming the argument: non-increasing or non-finite x_nm, length
        mismatch, non-positive mass, NaN, count out of range.

    References
    ----------
    .. [1] D. J. BenDaniel and C. B. Duke, Phys. Rev. 152, 683 (1966).
    """
    x = _as_grid(x_nm, "x_nm")
    u = _as_nodal(u_eV, "u_eV", x.size)
    m = _as_nodal(mass, "mass", x.size, positive=True)
    _as_count(count, x.size - 2)
    ham = Hamiltonian.planar(x * NM_TO_M, m)
    return ham._solve_eV(u, count)


def eigenstates_si(x_m, u_J, mass, count):
    """`eigenstates` in SI: x in m, U and E in J, psi in m^-1/2 (trapezoid
    integral of psi**2 over x_m equal to 1). For repeated solves on one grid,
    prepare `Hamiltonian.planar(x_m, mass)` once and call its `solve`."""
    ham = Hamiltonian.planar(x_m, mass)
    return ham.solve(u_J, count)


def radial_eigenstates(r_nm, u_eV, mass, count, angular_momentum=0):
    """Lowest bound states of the cylindrical-radial operator (gate-all-around
    channel) for one angular-momentum channel l = `angular_momentum` >= 0:

        -hbar^2/2 [(1/r) d/dr (r/m dR/dr) - l^2 R/(m r^2)] + U R = E R.

    Parameters
    ----------
    r_nm : array_like, shape (n,)
        Radii, nm, strictly increasing, r_nm[0] >= 0 (0 = the axis; > 0 an
        annular channel around a core, with R(r_nm[0]) = 0).
    u_eV, mass : array_like, shape (n,)
        Potential energy (eV) and effective mass (m0) at the nodes.
    count : int
        Number of states.
    angular_momentum : int
        |l|. The 2-D state is R(r) exp(i l theta)/sqrt(2 pi); l and -l are
        degenerate, so for l >= 1 each level holds twice the carriers.

    Returns
    -------
    energies_eV : ndarray (count,), ascending
    R : ndarray (n, count), nm^-1, real, R = 0 at the outer radius (and at
        the inner radius unless l = 0 on the axis), normalised with the box
        (finite-volume) quadrature sum_i A_i R_i^2 = 1, A_i = integral of r dr
        over the box of node i; the density of one carrier in the state is
        R^2 / (2 pi) per nm^2 of cross-section.
    """
    r = _as_grid(r_nm, "r_nm", minimum=0.0)
    u = _as_nodal(u_eV, "u_eV", r.size)
    m = _as_nodal(mass, "mass", r.size, positive=True)
    ham = Hamiltonian.radial(r * NM_TO_M, m, angular_momentum)
    energies, psi = ham._solve_eV(u, count)
    return energies, psi  # psi from the eV-nm assembly is already in nm^-1


def radial_eigenstates_si(r_m, u_J, mass, count, angular_momentum=0):
    """`radial_eigenstates` in SI: r in m, U and E in J, R in m^-1."""
    return Hamiltonian.radial(r_m, mass, angular_momentum).solve(u_J, count)
