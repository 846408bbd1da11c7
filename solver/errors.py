"""Exceptions of the public surface.

CaseError      bad input (exit code 2 at the command line)
ConvergenceError  a solve that did not converge; carries its record (exit code 1)
ComputationError  any other failed computation (exit code 1)
"""
from __future__ import annotations

from dataclasses import dataclass, field


class CaseError(ValueError):
    """A case file or a case parameter is invalid. The message is one line:
    the key path, the value, what is allowed, and the closest valid name."""


class ComputationError(RuntimeError):
    """A computation failed for a reason other than bad input."""


@dataclass(frozen=True)
class ConvergenceRecord:
    """What an iterative solve did: whether it converged and why."""

    converged: bool
    iterations: int
    residual_history: tuple[float, ...] = ()
    message: str = ""
    residual_unit: str = "V"
    extra: dict = field(default_factory=dict)

    @property
    def residual(self) -> float:
        return self.residual_history[-1] if self.residual_history else float("nan")


class ConvergenceError(ComputationError):
    """A self-consistent or Newton solve did not converge. Never a result."""

    def __init__(self, message: str, record: ConvergenceRecord | None = None):
        super().__init__(message)
        self.record = record

    @property
    def residual_history(self) -> tuple[float, ...]:
        return self.record.residual_history if self.record else ()
