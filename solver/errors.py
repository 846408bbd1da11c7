"""Exceptions of the public surface.

CaseError      bad input (exit code 2 at the command line)
ConvergenceError  a solve that did not converge; carries its record (exit code 1)
ComputationError  any other failed computation (exit code 1)
"""
from __future__ import annotations

from dataclasses import dataclass, field


def closest(name, options) -> str | None:
    """The option most like `name` (for "did you mean" hints), or None."""
    import difflib

    name = str(name)
    best, best_key = None, None
    for i, opt in enumerate(options):
        opt = str(opt)
        ratio = difflib.SequenceMatcher(None, name.lower(), opt.lower()).ratio()
        if ratio < 0.5:
            continue
        same_place = sum(a == b for a, b in zip(name, opt)) if len(name) == len(opt) else 0
        key = (ratio, same_place, -i)
        if best_key is None or key > best_key:
            best, best_key = opt, key
    return best


def did_you_mean(name, options) -> str:
    """' Did you mean 'x'?' or ''."""
    c = closest(name, options)
    return f" Did you mean {c!r}?" if c else ""


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
