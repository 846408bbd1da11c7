"""tunnelstack's library: gate-stack electrostatics, channel quantization and
exact multilayer tunneling for charge-trap memory cells.

Modules in pipeline order: materials, case, mesh, statistics, electrostatics,
schrodinger, selfconsistent, tunneling, study, store, plots. Public names are
loaded lazily so that `import solver` stays cheap (no numba compile, no
matplotlib).
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

_EXPORTS = {
    "CaseError": "solver.errors",
    "ConvergenceError": "solver.errors",
    "ComputationError": "solver.errors",
    "load_case": "solver.case",
    "parse_case": "solver.case",
    "Case": "solver.case",
    "load_materials": "solver.materials",
    "solve": "solver.selfconsistent",
    "Solution": "solver.selfconsistent",
    "eigenstates": "solver.schrodinger",
    "capacitance_voltage": "solver.cv",
    "breakdown_curve": "solver.breakdown",
    "breakdown_map": "solver.breakdown",
    "BreakdownSettings": "solver.breakdown",
    "run_study": "solver.study",
    "prepare_cell": "solver.cell",
    "design_window": "solver.cell",
    "Barrier": "solver.tunneling",
    "transmission": "solver.tunneling",
    "wkb_transmission": "solver.tunneling",
    "current_density": "solver.tunneling",
    "fowler_nordheim_current": "solver.tunneling",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str):
    try:
        module = _EXPORTS[name]
    except KeyError:
        raise AttributeError(f"module 'solver' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
