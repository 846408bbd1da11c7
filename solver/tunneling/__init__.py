"""Tunneling through multilayer barriers: exact transfer matrices (Airy
functions in sloped layers), piecewise-constant slicing, WKB, Fowler–Nordheim
and the Tsu–Esaki current.

The public names follow the API contract (shared/api-contract.md).
"""
from __future__ import annotations

import importlib

_EXPORTS = {
    "Barrier": "solver.tunneling.barrier",
    "transmission": "solver.tunneling.exact",
    "staircase_transmission": "solver.tunneling.staircase",
    "wkb_transmission": "solver.tunneling.wkb",
    "fowler_nordheim_current": "solver.tunneling.fowler_nordheim",
    "current_density": "solver.tunneling.current",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    try:
        module = _EXPORTS[name]
    except KeyError:
        raise AttributeError(f"module 'solver.tunneling' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
