"""Transmission of a piecewise-constant (staircase) approximation of a profile.

Each slice is flat at the profile's value at its midpoint, and the slices go
through the same exact flat-layer transfer matrices as `transmission`. For a
smooth profile the error is second order in the slice width. Use it for
profiles that are not piecewise linear: image-force-lowered barriers, band
profiles from a Poisson solve, or as an independent check of the Airy form.
"""
from __future__ import annotations

from collections.abc import Callable

import numpy as np

from solver.tunneling.barrier import Barrier, check_lead, require_barrier
from solver.tunneling.exact import energies_J, transmission_si
from solver.units import EV_TO_J, M0_KG, NM_TO_M

__all__ = ["staircase_transmission", "staircase_transmission_profile"]


def _solve(e_J, shape, thickness_nm, u_eV, mass, left, right, where):
    thickness_m = np.ascontiguousarray(thickness_nm, dtype=np.float64) * NM_TO_M
    u_J = np.ascontiguousarray(u_eV, dtype=np.float64) * EV_TO_J
    mass_kg = np.ascontiguousarray(mass, dtype=np.float64) * M0_KG
    lead_edge_J = np.array([left[0], right[0]]) * EV_TO_J
    lead_mass_kg = np.array([left[1], right[1]]) * M0_KG
    for arr in (thickness_m, u_J, mass_kg, lead_edge_J, lead_mass_kg):
        arr.flags.writeable = False      # same array types as Barrier.layer_data_si: one compiled kernel
    return transmission_si(e_J, shape, thickness_m, u_J, u_J, mass_kg, lead_edge_J, lead_mass_kg, where)


def staircase_transmission(
    barrier: Barrier,
    energy_eV,
    n_slices: int = 64,
    extra_potential_eV: Callable[[np.ndarray], np.ndarray] | None = None,
) -> np.ndarray:
    """Transmission of `barrier` with every layer cut into `n_slices` flat slices.

    Parameters
    ----------
    barrier : Barrier
        The profile; each layer is linear from u_start_eV to u_end_eV.
    energy_eV : float or array_like
        Longitudinal energy, eV (same scale as the band edges).
    n_slices : int
        Slices per layer (>= 1). The error falls as n_slices^-2.
    extra_potential_eV : callable, optional
        f(x_nm) -> eV added to the linear profile at the slice midpoints, x_nm
        measured from the start of the first layer (e.g. an image-force term).

    Returns
    -------
    numpy.ndarray
        T shaped like `energy_eV`, in [0, 1].
    """
    where = "staircase_transmission"
    require_barrier(barrier, where)
    if isinstance(n_slices, bool) or int(n_slices) != n_slices or n_slices < 1:
        raise ValueError(f"{where}: n_slices must be an integer >= 1, got {n_slices!r}")
    n_slices = int(n_slices)
    e_J, shape = energies_J(energy_eV, where)
    frac = (np.arange(n_slices) + 0.5) / n_slices
    d = np.asarray(barrier.thickness_nm)
    u0 = np.asarray(barrier.u_start_eV)[:, None]
    u1 = np.asarray(barrier.u_end_eV)[:, None]
    u_mid = (u0 + (u1 - u0) * frac).ravel()
    thickness = np.repeat(d / n_slices, n_slices)
    mass = np.repeat(np.asarray(barrier.mass), n_slices)
    if extra_potential_eV is not None:
        x_mid = (barrier.interfaces_nm()[:-1, None] + d[:, None] * frac).ravel()
        extra = np.asarray(extra_potential_eV(x_mid), dtype=np.float64)
        if extra.shape != x_mid.shape or not np.all(np.isfinite(extra)):
            raise ValueError(f"{where}: extra_potential_eV must return finite values of shape {x_mid.shape}")
        u_mid = u_mid + extra
    return _solve(e_J, shape, thickness, u_mid, mass, barrier.left, barrier.right, where)


def staircase_transmission_profile(x_nm, u_eV, mass, left, right, energy_eV) -> np.ndarray:
    """Transmission of a sampled profile, flat between nodes at the midpoint value.

    Parameters
    ----------
    x_nm : array_like
        Node positions, strictly increasing, nm. The leads start at x_nm[0]
        and x_nm[-1].
    u_eV : array_like
        Potential energy at the nodes, eV; slice i (x_nm[i]..x_nm[i+1]) is flat
        at (u_eV[i] + u_eV[i+1]) / 2.
    mass : float or array_like
        Effective mass, units of m0: a scalar, one per node (slice mass = mean
        of its two nodes) or one per slice (len(x_nm) - 1 values).
    left, right : (band_edge_eV, mass)
        The flat leads.
    energy_eV : float or array_like
        Longitudinal energy, eV.
    """
    where = "staircase_transmission_profile"
    x = np.asarray(x_nm, dtype=np.float64)
    u = np.asarray(u_eV, dtype=np.float64)
    if x.ndim != 1 or x.size < 2:
        raise ValueError(f"{where}: x_nm must be a 1-D array of at least 2 nodes, got shape {x.shape}")
    if u.shape != x.shape:
        raise ValueError(f"{where}: u_eV must have the shape of x_nm {x.shape}, got {u.shape}")
    for name, arr in (("x_nm", x), ("u_eV", u)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise ValueError(f"{where}: {name}[{bad[0]}] must be finite, got {arr[bad[0]]}")
    steps = np.diff(x)
    bad = np.flatnonzero(~(steps > 0))
    if bad.size:
        raise ValueError(f"{where}: x_nm must be strictly increasing, x_nm[{bad[0] + 1}] = {x[bad[0] + 1]} "
                         f"after {x[bad[0]]}")
    m = np.asarray(mass, dtype=np.float64)
    if m.ndim == 0:
        m_slice = np.full(steps.size, float(m))
    elif m.shape == x.shape:
        m_slice = 0.5 * (m[1:] + m[:-1])
    elif m.shape == steps.shape:
        m_slice = m
    else:
        raise ValueError(f"{where}: mass must be a scalar, one value per node ({x.size}) or per slice "
                         f"({steps.size}), got shape {m.shape}")
    bad = np.flatnonzero(~((m.ravel() > 0) & np.isfinite(m.ravel())))
    if bad.size:
        raise ValueError(f"{where}: mass[{bad[0]}] must be finite and > 0 (units of m0), got {m.ravel()[bad[0]]}")
    left = check_lead(left, "left", where)
    right = check_lead(right, "right", where)
    e_J, shape = energies_J(energy_eV, where)
    return _solve(e_J, shape, steps, 0.5 * (u[1:] + u[:-1]), m_slice, left, right, where)
