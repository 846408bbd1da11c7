"""The one-dimensional barrier profile seen by a tunnelling electron.

`Barrier` is the input of every transmission and current routine: a stack of
layers with linear potential-energy profiles between two flat, semi-infinite
leads. It is a frozen dataclass checked once on the way in; the SI arrays the
numba kernels need are built once per instance (`layer_data_si`) and cached.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from solver.units import EV_TO_J, M0_KG, NM_TO_M

__all__ = ["Barrier", "LayerDataSI", "as_energy_eV", "check_lead", "require_barrier"]


@dataclass(frozen=True)
class LayerDataSI:
    """SI arrays of a `Barrier`, one entry per layer, for the kernels.

    All arrays are read-only float64. Lead arrays hold (left, right).
    """

    thickness_m: np.ndarray
    u_start_J: np.ndarray
    u_end_J: np.ndarray
    mass_kg: np.ndarray
    lead_edge_J: np.ndarray
    lead_mass_kg: np.ndarray


def _short(value) -> str:
    """repr of `value` for a one-line message (long or multi-line reprs summarised)."""
    text = repr(value)
    if len(text) <= 60 and "\n" not in text:
        return text
    if hasattr(value, "shape"):
        return f"an array of shape {tuple(value.shape)}"
    size = f" of {len(value)} entries" if hasattr(value, "__len__") else ""
    return f"a {type(value).__name__}{size}"


def check_lead(lead, side: str, where: str) -> tuple[float, float]:
    """A lead as a (band_edge_eV, mass) pair of floats; ValueError naming `where` and `side` otherwise."""
    try:
        edge, m = (float(v) for v in lead)
    except (TypeError, ValueError):
        raise ValueError(f"{where} {side}: lead must be a (band_edge_eV, mass) pair, got {_short(lead)}") from None
    if not math.isfinite(edge):
        raise ValueError(f"{where} {side}: band_edge_eV must be finite, got {edge}")
    if not (m > 0 and math.isfinite(m)):
        raise ValueError(f"{where} {side}: mass must be finite and > 0 (units of m0), got {m}")
    return edge, m


def require_barrier(barrier, where: str) -> None:
    """ValueError unless `barrier` is a Barrier (the first argument of every routine here)."""
    if not isinstance(barrier, Barrier):
        raise ValueError(f"{where}: barrier must be a solver.tunneling.Barrier, got {type(barrier).__name__}")


def as_energy_eV(energy_eV, where) -> np.ndarray:
    """`energy_eV` as a float64 array; ValueError naming `where` if it does not hold real numbers."""
    try:
        return np.asarray(energy_eV, dtype=np.float64)
    except (TypeError, ValueError):
        raise ValueError(f"{where}: energy_eV must be a real number or an array of them, got {_short(energy_eV)}") \
            from None


def _readonly(values) -> np.ndarray:
    arr = np.array(values, dtype=np.float64)
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True)
class Barrier:
    """Potential-energy profile U(x) of a multilayer barrier between two leads.

    Parameters
    ----------
    thickness_nm : sequence of float
        Layer thicknesses in nm, listed along x; each > 0.
    u_start_eV, u_end_eV : sequence of float
        Potential energy at the start and at the end of each layer, eV. U goes
        linearly in between (equal values: a flat layer).
    mass : sequence of float
        Effective mass of each layer, units of m0; each > 0.
    left, right : (band_edge_eV, mass)
        The flat semi-infinite leads at x < 0 and beyond the last layer.

    Raises
    ------
    ValueError
        Naming the field and the layer index (or "left"/"right") for a
        non-positive or NaN thickness or mass, a non-finite energy, unequal
        lengths or an empty layer list.
    """

    thickness_nm: tuple[float, ...]
    u_start_eV: tuple[float, ...]
    u_end_eV: tuple[float, ...]
    mass: tuple[float, ...]
    left: tuple[float, float]
    right: tuple[float, float]

    def __post_init__(self):
        names = ("thickness_nm", "u_start_eV", "u_end_eV", "mass")
        for name in names:
            raw = getattr(self, name)
            try:
                flat = np.ndim(raw) == 1
            except ValueError:               # ragged nesting
                flat = False
            if not flat:
                raise ValueError(f"Barrier: {name} must be a flat sequence (one entry per layer), got {_short(raw)}")
            try:
                values = tuple(float(v) for v in raw)
            except (TypeError, ValueError):
                raise ValueError(f"Barrier: {name} must hold numbers, got {_short(raw)}") from None
            object.__setattr__(self, name, values)
        lengths = {name: len(getattr(self, name)) for name in names}
        if len(set(lengths.values())) != 1:
            detail = ", ".join(f"{k}={v}" for k, v in lengths.items())
            raise ValueError(f"Barrier: thickness_nm, u_start_eV, u_end_eV and mass must have equal lengths, got {detail}")
        if lengths["thickness_nm"] == 0:
            raise ValueError("Barrier: thickness_nm is empty; a barrier needs at least one layer")
        for i in range(lengths["thickness_nm"]):
            t = self.thickness_nm[i]
            if not (t > 0 and math.isfinite(t)):
                raise ValueError(f"Barrier layer {i}: thickness_nm must be finite and > 0, got {t}")
            m = self.mass[i]
            if not (m > 0 and math.isfinite(m)):
                raise ValueError(f"Barrier layer {i}: mass must be finite and > 0 (units of m0), got {m}")
            for name in ("u_start_eV", "u_end_eV"):
                u = getattr(self, name)[i]
                if not math.isfinite(u):
                    raise ValueError(f"Barrier layer {i}: {name} must be finite, got {u}")
        for side in ("left", "right"):
            object.__setattr__(self, side, check_lead(getattr(self, side), side, "Barrier"))

    @property
    def n_layers(self) -> int:
        """Number of layers."""
        return len(self.thickness_nm)

    @property
    def total_thickness_nm(self) -> float:
        """Sum of the layer thicknesses, nm."""
        return math.fsum(self.thickness_nm)

    @property
    def max_energy_eV(self) -> float:
        """Highest potential energy anywhere in the profile (layers and leads), eV."""
        return max(max(self.u_start_eV), max(self.u_end_eV), self.left[0], self.right[0])

    @property
    def min_energy_eV(self) -> float:
        """Lowest potential energy anywhere in the profile (layers and leads), eV."""
        return min(min(self.u_start_eV), min(self.u_end_eV), self.left[0], self.right[0])

    def reversed(self) -> Barrier:
        """The same profile end for end (x -> total thickness - x), leads swapped."""
        return Barrier(
            thickness_nm=self.thickness_nm[::-1],
            u_start_eV=self.u_end_eV[::-1],
            u_end_eV=self.u_start_eV[::-1],
            mass=self.mass[::-1],
            left=self.right,
            right=self.left,
        )

    def interfaces_nm(self) -> np.ndarray:
        """Positions of the n_layers + 1 layer boundaries, nm, starting at 0."""
        return np.concatenate(([0.0], np.cumsum(self.thickness_nm)))

    def __getstate__(self):
        # pickles (process executors) carry the fields only; the SI cache is rebuilt
        state = self.__dict__.copy()
        state.pop("layer_data_si", None)
        return state

    @cached_property
    def layer_data_si(self) -> LayerDataSI:
        """SI arrays for the kernels, built once per Barrier."""
        return LayerDataSI(
            thickness_m=_readonly(np.array(self.thickness_nm) * NM_TO_M),
            u_start_J=_readonly(np.array(self.u_start_eV) * EV_TO_J),
            u_end_J=_readonly(np.array(self.u_end_eV) * EV_TO_J),
            mass_kg=_readonly(np.array(self.mass) * M0_KG),
            lead_edge_J=_readonly(np.array([self.left[0], self.right[0]]) * EV_TO_J),
            lead_mass_kg=_readonly(np.array([self.left[1], self.right[1]]) * M0_KG),
        )
