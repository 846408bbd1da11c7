"""Exact transmission through a multilayer barrier (transfer matrices).

Flat layers use exponentials or plane waves, linear layers Airy functions
(Gundlach's exact solution of the trapezoidal barrier); psi and psi'/m are
continuous at every interface (BenDaniel-Duke). The real 2x2 transfer
matrices, the logarithmic bookkeeping of the exponential scales and the
Airy functions live in the numba kernels of `_kernels` and `_airy`.

References
----------
.. [1] K. H. Gundlach, Solid-State Electron. 9, 949 (1966).
.. [2] D. J. BenDaniel and C. B. Duke, Phys. Rev. 152, 683 (1966).
"""
from __future__ import annotations

import numpy as np

from solver.errors import ComputationError
from solver.tunneling._airy import anchors_and_coefficients
from solver.tunneling._kernels import transfer_product, transmission_kernel
from solver.tunneling.barrier import Barrier, as_energy_eV, require_barrier
from solver.units import EV_TO_J

__all__ = ["transmission", "transfer_matrix"]


def energies_J(energy_eV, where="transmission") -> tuple[np.ndarray, tuple]:
    """Energies (eV, any shape) as a contiguous 1-D SI array, and the input shape."""
    e = as_energy_eV(energy_eV, where)
    return np.ascontiguousarray(e.ravel()) * EV_TO_J, e.shape


def _raise_bad_energy(e_J, j, where="transmission"):
    raise ValueError(f"{where}: energy_eV must be finite, got energy_eV[{j}] = {e_J[j] / EV_TO_J}")


def transmission_si(e_J, shape, thickness_m, u_start_J, u_end_J, mass_kg, lead_edge_J, lead_mass_kg,
                    where="transmission", detail=""):
    """T from SI layer arrays (as in `Barrier.layer_data_si`), reshaped to `shape`.

    ValueError for a non-finite energy; ComputationError if a T outside [0, 1]
    came out (never returned).
    """
    anchors, u, v = anchors_and_coefficients()
    t, status, j = transmission_kernel(e_J, thickness_m, u_start_J, u_end_J, mass_kg, lead_edge_J, lead_mass_kg,
                                       anchors, u, v)
    if status == 1:
        _raise_bad_energy(e_J, j, where)
    if status == 2:
        raise ComputationError(f"{where}: T = {t[j]} outside [0, 1] at energy_eV={e_J[j] / EV_TO_J!r}{detail}")
    return t.reshape(shape)


def transfer_matrix(barrier: Barrier, energy_eV):
    """Real transfer matrix of the stack on (psi, psi'/m) in reduced units.

    Returns (p11, p12, p21, p22, log_scale): the matrix is
    exp(log_scale) * [[p11, p12], [p21, p22]], arrays shaped like `energy_eV`.
    Lengths are in nm, psi'/m in nm^-1 per m0 (see `_kernels`).
    """
    require_barrier(barrier, "transfer_matrix")
    e_J, shape = energies_J(energy_eV, "transfer_matrix")
    if not np.isfinite(e_J).all():
        _raise_bad_energy(e_J, int(np.flatnonzero(~np.isfinite(e_J))[0]), "transfer_matrix")
    d = barrier.layer_data_si
    anchors, u, v = anchors_and_coefficients()
    parts = transfer_product(e_J, d.thickness_m, d.u_start_J, d.u_end_J, d.mass_kg, anchors, u, v)
    return tuple(p.reshape(shape) for p in parts)


def transmission(barrier: Barrier, energy_eV) -> np.ndarray:
    """Exact transmission probability T(E) through `barrier`.

    Parameters
    ----------
    barrier : Barrier
        The potential-energy profile (flat and linear layers, two flat leads).
    energy_eV : float or array_like
        Longitudinal energy on the same absolute scale as the band edges, eV.

    Returns
    -------
    numpy.ndarray
        T = (k_R/m_R)/(k_L/m_L) |t|^2, same shape as `energy_eV` (a scalar gives
        shape ()). 0 where either lead has no propagating state; always finite
        and in [0, 1]; relative accuracy about 1e-10 or better down to 1e-300
        away from sharp resonances.

    Raises
    ------
    ValueError
        If `barrier` is not a Barrier or an energy is not a finite real number.
    ComputationError
        If a T outside [0, 1] or non-finite were produced (never returned silently).
    """
    require_barrier(barrier, "transmission")
    e_J, shape = energies_J(energy_eV)
    d = barrier.layer_data_si
    return transmission_si(e_J, shape, d.thickness_m, d.u_start_J, d.u_end_J, d.mass_kg, d.lead_edge_J,
                           d.lead_mass_kg, detail=f" for {barrier!r}")
