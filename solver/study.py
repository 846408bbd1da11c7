"""Parameter studies: sweeps over case key paths, run point by point on an executor.

A study is described in the case file (parsed and validated by solver.case):

    [study]
    mode = "grid"              # "grid": every combination; "zip": i-th values together
    compute = "bands"          # the point computation, a name in the registry below
    keep_profiles = false      # true: keep every profile output of the computation
    outputs = []               # names of profile outputs to keep (scalars are always kept)
    [[study.axis]]
    key = "layers.tunnel.thickness_nm"
    values = [3.0, 4.0, 5.0]   # or start = 3.0, stop = 6.0, count = 7, spacing = "linear" | "log"

Pieces, each usable on its own:

    plan_study(case, compute=None) -> StudyPlan     checks the axes, expands the points
    run_study(plan, sink, executor=None, ...) -> StudySummary
                                                    computes the sink's pending points
    register_computation(name, function, outputs, warm_up=(), sizes=None)
                                                    plugs in a new point computation

The sink is normally a solver.store.StudyStore (the HDF5 study file, which
holds the results, the completion mask and the per-point errors):

    plan = plan_study(case)
    with store.open_study("out.h5", plan, case_text=case.text, command="...") as sink:
        summary = run_study(plan, sink, executor=ProcessExecutor())

A point that raises is recorded with its exception type and message, and the
study goes on. Ctrl-C (SIGINT) stops submitting and cancels what has not
started; the running points finish and are saved (a second Ctrl-C abandons
them); then StudyInterrupted (a KeyboardInterrupt) is raised carrying the
summary. Running the same study on the same file again resumes it.
"""
from __future__ import annotations

import hashlib
import itertools
import json
import math
import os
import pickle
import signal
import sys
import threading
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Callable, Mapping, Sequence

import numpy as np

from solver.errors import CaseError, ComputationError
from solver.executors import Executor, SerialExecutor

__all__ = [
    "Output",
    "Computation",
    "register_computation",
    "get_computation",
    "computation_names",
    "key_units",
    "AxisPlan",
    "StudyPlan",
    "plan_study",
    "PointOutcome",
    "evaluate_point",
    "StudySummary",
    "StudyInterrupted",
    "Progress",
    "run_study",
]


# ---------------------------------------------------------------------------
# registry of point computations


@dataclass(frozen=True)
class Output:
    """One output of a point computation.

    units : e.g. "V", "A/cm^2", "1"
    dims : names of the output's own axes (() for a scalar), e.g. ("node",)
    profile : True for outputs kept only on request (keep_profiles / outputs)
    log : plot on a logarithmic scale (currents, densities, transmission)
    """

    units: str
    description: str = ""
    dims: tuple[str, ...] = ()
    profile: bool = False
    log: bool = False

    def __post_init__(self):
        object.__setattr__(self, "dims", tuple(self.dims))


@dataclass(frozen=True)
class Computation:
    """A named point computation: `function(case) -> {output name: number or array}`.

    function, warm_up hooks and sizes must be top-level functions (picklable by
    reference) so process pools and Dask workers can run them.
    sizes(case) -> {axis name: length} gives the length of the outputs' own
    axes for one point, so the store can reserve room up front (optional:
    without it the file grows when a longer profile arrives).
    """

    name: str
    function: Callable
    outputs: Mapping[str, Output]
    warm_up: tuple[Callable[[], object], ...] = ()
    sizes: Callable | None = None
    description: str = ""


_REGISTRY: dict[str, Computation] = {}


def register_computation(
    name: str,
    function: Callable,
    outputs: Mapping[str, Output],
    *,
    warm_up: Sequence[Callable[[], object]] | Callable[[], object] = (),
    sizes: Callable | None = None,
    description: str = "",
    replace: bool = False,
) -> Computation:
    """Add a point computation to the registry and return it.

    Raises ValueError for a name already taken (unless replace=True) or
    outputs that are not Output instances.
    """
    if not isinstance(name, str) or not name:
        raise ValueError(f"computation name must be a non-empty string, got {name!r}")
    if name in _REGISTRY and not replace:
        raise ValueError(f"computation {name!r} is already registered")
    if not callable(function):
        raise ValueError(f"computation {name!r}: function must be callable")
    reserved = {"completed", "failed", "error_type", "error_message", "elapsed_s", "point"}
    for out_name, out in outputs.items():
        if not isinstance(out, Output):
            raise ValueError(f"computation {name!r}: output {out_name!r} must be a study.Output")
        if out_name in reserved or "/" in out_name or "." in out_name:
            raise ValueError(f"computation {name!r}: output name {out_name!r} is reserved or invalid")
    if callable(warm_up):
        warm_up = (warm_up,)
    comp = Computation(
        name=name,
        function=function,
        outputs=MappingProxyType(dict(outputs)),
        warm_up=tuple(warm_up),
        sizes=sizes,
        description=description,
    )
    _REGISTRY[name] = comp
    return comp


def get_computation(name: str) -> Computation:
    """The registered computation `name`; CaseError naming the closest one otherwise."""
    try:
        return _REGISTRY[name]
    except KeyError:
        import difflib

        close = difflib.get_close_matches(str(name), list(_REGISTRY), n=1)
        hint = f" Did you mean {close[0]!r}?" if close else ""
        raise CaseError(
            f"study.compute: unknown computation {name!r}; known: "
            f"{', '.join(sorted(_REGISTRY))}.{hint}"
        ) from None


def computation_names() -> tuple[str, ...]:
    return tuple(sorted(_REGISTRY))


# ---------------------------------------------------------------------------
# plans

# unit of a key path from its suffix (the unit is in the name, DEVELOPERS.md)
_SUFFIX_UNITS = (
    ("_A_cm2", "A/cm^2"),
    ("_MV_cm", "MV/cm"),
    ("_C_cm2", "C/cm^2"),
    ("_F_cm2", "F/cm^2"),
    ("_cm2_eV", "cm^-2 eV^-1"),
    ("_cm3", "cm^-3"),
    ("_cm2", "cm^-2"),
    ("_nm", "nm"),
    ("_eV", "eV"),
    ("_mV", "mV"),
    ("_V", "V"),
    ("_K", "K"),
    ("_s", "s"),
)


def key_units(key: str) -> str:
    """The unit a key path carries in its name ("layers.tunnel.thickness_nm" -> "nm");
    "m0" for effective masses, "1" for dimensionless parameters."""
    last = key.rsplit(".", 1)[-1]
    for suffix, unit in _SUFFIX_UNITS:
        if last.endswith(suffix):
            return unit
    if last.endswith("mass"):
        return "m0"
    return "1"


@dataclass(frozen=True)
class AxisPlan:
    key: str
    values: tuple[float, ...]
    units: str
    spacing: str = "list"


@dataclass(frozen=True)
class StudyPlan:
    """A checked study: what to compute at which points, and what to keep."""

    case: object
    compute: Computation
    mode: str
    axes: tuple[AxisPlan, ...]
    outputs: Mapping[str, Output]          # kept outputs, in order
    profile_reserves: Mapping[str, int]    # room per profile axis (0 = grow on demand)
    spec_json: str
    spec_hash: str

    @property
    def shape(self) -> tuple[int, ...]:
        if self.mode == "zip":
            return (len(self.axes[0].values),)
        return tuple(len(a.values) for a in self.axes)

    @property
    def dims(self) -> tuple[str, ...]:
        return ("point",) if self.mode == "zip" else tuple(a.key for a in self.axes)

    @property
    def n_points(self) -> int:
        return int(math.prod(self.shape))

    def assignments(self, index: int) -> tuple[tuple[str, float], ...]:
        """The (key path, value) pairs of flat point `index` (C order over the axes)."""
        if not 0 <= index < self.n_points:
            raise IndexError(f"point {index} outside 0..{self.n_points - 1}")
        if self.mode == "zip":
            return tuple((a.key, a.values[index]) for a in self.axes)
        pos = np.unravel_index(index, self.shape)
        return tuple((a.key, a.values[int(i)]) for a, i in zip(self.axes, pos))


def plan_study(
    case,
    *,
    compute: str | None = None,
    keep_profiles: bool | None = None,
    outputs: Sequence[str] | None = None,
    check_values: bool = True,
) -> StudyPlan:
    """Check `case.study` and expand it into a plan.

    compute, keep_profiles, outputs override the case's [study] settings.
    check_values : re-validate every axis value through `case.with_value`
        (one axis at a time), so a bad value is refused before anything runs.

    Raises CaseError (one line naming the axis, the value and the rule).
    """
    study = getattr(case, "study", None)
    if study is None:
        raise CaseError(
            "study: the case has no [study] section; add one with at least one "
            "[[study.axis]] (key and values, or start/stop/count)"
        )
    compute_name = compute or getattr(study, "compute", None) or "bands"
    comp = get_computation(compute_name)
    mode = getattr(study, "mode", "grid")
    if mode not in ("grid", "zip"):
        raise CaseError(f"study.mode: {mode!r} is not allowed; use \"grid\" or \"zip\"")
    if not study.axes:
        raise CaseError("study.axis: at least one axis is needed")
    axes = []
    seen = set()
    for i, axis in enumerate(study.axes):
        where = f"study.axis[{i}]"
        key = axis.key
        if key in seen:
            raise CaseError(f"{where}.key: {key!r} appears twice")
        seen.add(key)
        values = tuple(float(v) for v in axis.values)
        if not values:
            raise CaseError(f"{where} ({key}): no values (empty range)")
        for v in values:
            if not math.isfinite(v):
                raise CaseError(f"{where} ({key}): value {v!r} is not a finite number")
        try:
            case.value_at(key)
        except CaseError as err:
            raise CaseError(f"{where}.key: {err}") from None
        if check_values:
            for v in values:
                try:
                    case.with_value(key, v)
                except CaseError as err:
                    raise CaseError(f"{where} ({key} = {v:g}): {err}") from None
        axes.append(AxisPlan(key, values, key_units(key), getattr(axis, "spacing", "list")))
    if mode == "zip" and len({len(a.values) for a in axes}) != 1:
        raise CaseError(
            'study.mode: "zip" needs axes of equal length, got '
            + ", ".join(f"{a.key}: {len(a.values)}" for a in axes)
        )

    keep_all = bool(getattr(study, "keep_profiles", False) if keep_profiles is None else keep_profiles)
    wanted = tuple(getattr(study, "outputs", ()) if outputs is None else outputs)
    for name in wanted:
        if name not in comp.outputs:
            import difflib

            close = difflib.get_close_matches(name, list(comp.outputs), n=1)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            raise CaseError(
                f"study.outputs: {name!r} is not an output of {comp.name!r} "
                f"(outputs: {', '.join(comp.outputs)}).{hint}"
            )
    kept = {
        name: out
        for name, out in comp.outputs.items()
        if not out.profile or keep_all or name in wanted
    }
    reserves: dict[str, int] = {}
    for out in kept.values():
        for d in out.dims:
            reserves.setdefault(d, 0)

    plan = StudyPlan(
        case=case,
        compute=comp,
        mode=mode,
        axes=tuple(axes),
        outputs=MappingProxyType(kept),
        profile_reserves=MappingProxyType({}),
        spec_json="",
        spec_hash="",
    )
    if reserves:
        reserves = _profile_reserves(plan, reserves)
    spec = {
        "compute": comp.name,
        "mode": mode,
        "axes": [{"key": a.key, "values": list(a.values)} for a in axes],
        "outputs": {n: [o.units, list(o.dims)] for n, o in kept.items()},
    }
    spec_json = json.dumps(spec, sort_keys=True)
    digest = hashlib.sha256()
    digest.update(str(getattr(case, "text", "")).encode("utf-8"))
    digest.update(b"\0")
    digest.update(_materials_file_bytes(case))
    digest.update(b"\0")
    digest.update(repr(tuple(getattr(case, "overrides", ()))).encode("utf-8"))
    digest.update(b"\0")
    digest.update(spec_json.encode("utf-8"))
    return StudyPlan(
        case=case,
        compute=comp,
        mode=mode,
        axes=tuple(axes),
        outputs=MappingProxyType(kept),
        profile_reserves=MappingProxyType(reserves),
        spec_json=spec_json,
        spec_hash=digest.hexdigest(),
    )


def _materials_file_bytes(case) -> bytes:
    """The contents of the case's own materials file (``materials_file``), so that
    editing it counts as a different study; b"" when the case has none."""
    raw = getattr(case, "raw", None) or {}
    name = raw.get("materials_file") if isinstance(raw, Mapping) else None
    if not isinstance(name, str):
        return b""
    path = Path(name)
    if not path.is_absolute():
        source = str(getattr(case, "source", "") or "")
        base = Path(source).resolve().parent if source and not source.startswith("<") else Path.cwd()
        path = base / path
    try:
        return path.read_bytes()
    except OSError:
        return b""


def _profile_reserves(plan: StudyPlan, reserves: dict[str, int]) -> dict[str, int]:
    """Room for each profile axis: the largest size over the points if the
    computation can tell it, else a start that grows on demand."""
    sizes = plan.compute.sizes
    out = dict(reserves)
    if sizes is not None:
        for index in _sample_points(plan):
            try:
                case = _apply(plan.case, plan.assignments(index))
                for d, n in sizes(case).items():
                    if d in out:
                        out[d] = max(out[d], int(n))
            except Exception:  # noqa: BLE001 - a bad point is reported when it runs
                continue
    return {d: max(n, 1) for d, n in out.items()}


def _sample_points(plan: StudyPlan, limit: int = 64) -> list[int]:
    """All points of a small study; else the corners of the grid and evenly
    spaced points (a size missed here only makes the file grow later)."""
    n = plan.n_points
    if n <= limit:
        return list(range(n))
    picks = set(np.linspace(0, n - 1, limit // 2).astype(int).tolist())
    if plan.mode == "grid":
        for corner in itertools.product(*[(0, len(a.values) - 1) for a in plan.axes]):
            if len(picks) >= 2 * limit:
                break
            picks.add(int(np.ravel_multi_index(corner, plan.shape)))
    return sorted(picks)


# ---------------------------------------------------------------------------
# one point (runs in a worker)


@dataclass(frozen=True)
class PointOutcome:
    index: int
    values: dict = field(default_factory=dict)
    error_type: str = ""
    error_message: str = ""
    elapsed_s: float = 0.0

    @property
    def ok(self) -> bool:
        return not self.error_type


_BASE_CACHE: dict[tuple, object] = {}


def _case_payload(case):
    """What a worker needs to rebuild the base case: the object itself if it
    pickles, else its text, source and overrides (parsed once per worker)."""
    try:
        pickle.dumps(case)
        return ("object", case)
    except Exception:  # noqa: BLE001 - any pickling failure means: send the text
        return ("text", case.text, case.source, tuple(getattr(case, "overrides", ())))


def _base_case(payload):
    if payload[0] == "object":
        return payload[1]
    key = payload[1:]
    case = _BASE_CACHE.get(key)
    if case is None:
        from solver.case import parse_case

        case = parse_case(payload[1], payload[2])
        for k, v in payload[3]:
            case = case.with_value(k, v)
        _BASE_CACHE.clear()
        _BASE_CACHE[key] = case
    return case


def _apply(case, assignments):
    for key, value in assignments:
        case = case.with_value(key, value)
    return case


def _clean_value(name, value, out: Output):
    if out.dims:
        arr = np.array(value, dtype=float)
        if arr.ndim != len(out.dims):
            raise ComputationError(
                f"output {name!r}: expected {len(out.dims)}-D values over {out.dims}, got shape {arr.shape}"
            )
        return arr
    arr = np.asarray(value, dtype=float)
    if arr.ndim != 0:
        raise ComputationError(f"output {name!r}: expected a scalar, got shape {arr.shape}")
    return float(arr)


def evaluate_point(function, payload, index, assignments, outputs) -> PointOutcome:
    """Compute one point; any exception becomes a recorded error, not a crash.

    outputs : {name: Output} of the outputs to keep
    """
    start = time.perf_counter()
    try:
        case = _apply(_base_case(payload), assignments)
        result = function(case)
        if not isinstance(result, Mapping):
            raise ComputationError(
                f"point function returned {type(result).__name__}, expected a dict of outputs"
            )
        values = {}
        for name, out in outputs.items():
            if name not in result:
                raise ComputationError(f"point function returned no output {name!r}")
            values[name] = _clean_value(name, result[name], out)
        return PointOutcome(index, values, "", "", time.perf_counter() - start)
    except Exception as err:  # noqa: BLE001 - every failure of a point is recorded
        message = str(err).strip().splitlines()[0] if str(err).strip() else ""
        if not message:
            frame = traceback.extract_tb(err.__traceback__)[-1:]
            message = f"(no message) at {frame[0].filename}:{frame[0].lineno}" if frame else "(no message)"
        return PointOutcome(index, {}, type(err).__name__, message, time.perf_counter() - start)


# ---------------------------------------------------------------------------
# progress


def _fmt_duration(seconds: float) -> str:
    if not math.isfinite(seconds):
        return "--:--"
    seconds = int(round(seconds))
    h, rem = divmod(seconds, 3600)
    m, s = divmod(rem, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m:02d}:{s:02d}"


class Progress:
    """A one-line progress report on a terminal: done/total, failures, rate, ETA.

    Silent when the stream is not a terminal, when CI is set, or when quiet.
    """

    def __init__(self, total: int, done_before: int = 0, stream=None, quiet: bool = False,
                 min_interval_s: float = 0.2):
        self.stream = stream if stream is not None else sys.stderr
        isatty = getattr(self.stream, "isatty", lambda: False)()
        self.enabled = bool(isatty and not quiet and not os.environ.get("CI"))
        self.total = total
        self.done_before = done_before
        self.start = time.monotonic()
        self.min_interval_s = min_interval_s
        self._last = 0.0
        self._width = 0
        self._first = None

    def line(self, done_now: int, failed: int) -> str:
        now = time.monotonic()
        elapsed = now - self.start
        if done_now and self._first is None:
            self._first = (now, done_now)
        # rate from the first finished point on: worker start-up is not a point's cost
        if self._first is not None and done_now > self._first[1] and now > self._first[0]:
            rate = (done_now - self._first[1]) / (now - self._first[0])
        else:
            rate = done_now / elapsed if elapsed > 0 and done_now else 0.0
        remaining = self.total - self.done_before - done_now
        eta = remaining / rate if rate > 0 else float("inf")
        done = self.done_before + done_now
        fail = f", {failed} failed" if failed else ""
        return (f"{done}/{self.total} points{fail}  {rate:.2f} points/s  "
                f"elapsed {_fmt_duration(elapsed)}  ETA {_fmt_duration(eta)}")

    def update(self, done_now: int, failed: int, force: bool = False) -> None:
        if not self.enabled:
            return
        now = time.monotonic()
        if not force and now - self._last < self.min_interval_s:
            return
        self._last = now
        text = self.line(done_now, failed)
        pad = max(0, self._width - len(text))
        self._width = len(text)
        self.stream.write("\r" + text + " " * pad)
        self.stream.flush()

    def close(self, done_now: int, failed: int) -> None:
        if self.enabled:
            self.update(done_now, failed, force=True)
            self.stream.write("\n")
            self.stream.flush()


# ---------------------------------------------------------------------------
# running


@dataclass
class StudySummary:
    total: int
    finished: int          # finished points in the sink, this run and before
    failed: int            # of those, points that raised
    computed: int          # points computed in this run
    skipped: int           # points already finished before this run
    elapsed_s: float
    executor: str
    interrupted: bool = False

    @property
    def pending(self) -> int:
        return self.total - self.finished


class StudyInterrupted(KeyboardInterrupt):
    """Ctrl-C during a study: what was finished is saved; `summary` says how much."""

    def __init__(self, summary: StudySummary):
        super().__init__("study interrupted")
        self.summary = summary


def _is_point_fatal(err: BaseException) -> bool:
    """An executor error that belongs to the point (its worker died on it)."""
    return type(err).__name__ == "KilledWorker"


def run_study(
    plan: StudyPlan,
    sink,
    *,
    executor: Executor | None = None,
    retry_failed: bool = False,
    progress: Progress | None = None,
    quiet: bool = True,
    notice: Callable[[str], None] | None = None,
) -> StudySummary:
    """Compute the sink's pending points of `plan` on `executor` and write each as it finishes.

    sink : has pending(retry_failed) -> list of flat indices, write(PointOutcome),
        counts() -> (finished, failed, total); normally a store.StudyStore
    executor : default SerialExecutor with the computation's warm-up hooks
    retry_failed : compute points that failed before again
    progress : a Progress; default one on stderr unless `quiet`
    notice : called with one-line notes (e.g. on Ctrl-C); default stderr

    Raises StudyInterrupted on Ctrl-C (after saving what finished) and
    ComputationError when the executor itself breaks (finished points kept).
    """
    notice = notice or (lambda text: print(text, file=sys.stderr))
    pending = sink.pending(retry_failed)
    finished0, _failed0, total = sink.counts()
    skipped = total - len(pending)
    own = executor is None
    if own:
        executor = SerialExecutor(warm_ups=plan.compute.warm_up)
    if progress is None:
        progress = Progress(total, done_before=total - len(pending), quiet=quiet)
    else:
        progress.done_before = total - len(pending)
    payload = _case_payload(plan.case)
    function = plan.compute.function
    outputs = dict(plan.outputs)
    workers = max(1, int(getattr(executor, "workers", 1)))
    max_in_flight = 1 if isinstance(executor, SerialExecutor) else 2 * workers
    todo = iter(pending)
    in_flight: dict = {}
    computed = 0
    failed_now = 0
    start = time.monotonic()
    failed_base = 0 if retry_failed else _failed0
    interrupted = False
    stop = {"requests": 0}

    def submit_more():
        while len(in_flight) < max_in_flight and not stop["requests"]:
            index = next(todo, None)
            if index is None:
                return
            future = executor.submit(evaluate_point, function, payload, index,
                                     plan.assignments(index), outputs)
            in_flight[future] = index

    def collect(futures):
        nonlocal computed, failed_now
        for future in futures:
            index = in_flight.pop(future)
            if future.cancelled():
                continue
            err = future.exception()
            if err is not None:
                if not _is_point_fatal(err):
                    raise ComputationError(
                        f"executor failed at point {index} ({type(err).__name__}: {err}); "
                        "finished points are saved, run the study again to resume"
                    ) from err
                outcome = PointOutcome(index, {}, type(err).__name__, str(err).splitlines()[0] if str(err) else "")
            else:
                outcome = future.result()
            sink.write(outcome)
            computed += 1
            failed_now += 0 if outcome.ok else 1
        progress.update(computed, failed_base + failed_now)

    def on_sigint(signum, frame):
        # first Ctrl-C: stop submitting, let running points finish and be saved;
        # second: abandon them (KeyboardInterrupt from wherever the loop is)
        stop["requests"] += 1
        if stop["requests"] > 1:
            raise KeyboardInterrupt
        progress.close(computed, failed_base + failed_now)
        notice("stopping: no new points; finishing the running ones "
               "(press Ctrl-C again to abandon them)")

    installed, previous = False, None
    if threading.current_thread() is threading.main_thread():
        previous = signal.signal(signal.SIGINT, on_sigint)
        installed = True
    try:
        try:
            submit_more()
            while in_flight:
                if stop["requests"] and not stop.get("cancelled"):
                    stop["cancelled"] = True
                    executor.cancel_pending(list(in_flight))
                    for f in [f for f in in_flight if f.cancelled()]:
                        in_flight.pop(f)
                    if not in_flight:
                        break
                done, _ = executor.wait(list(in_flight), timeout=0.5)
                collect(done)
                submit_more()
                progress.update(computed, failed_base + failed_now)
            interrupted = bool(stop["requests"])
        except KeyboardInterrupt:
            interrupted = True
            if not stop["requests"]:
                progress.close(computed, failed_base + failed_now)
                stop["requests"] = 1
            executor.cancel_pending(list(in_flight))
            executor.abandon()
            in_flight.clear()
    finally:
        if installed:
            signal.signal(signal.SIGINT, previous if previous is not None else signal.default_int_handler)
        if own:
            executor.close()
    if not stop["requests"]:
        progress.close(computed, failed_base + failed_now)
    finished, failed, total = sink.counts()
    interrupted = interrupted and finished < total
    summary = StudySummary(
        total=total,
        finished=finished,
        failed=failed,
        computed=computed,
        skipped=skipped,
        elapsed_s=time.monotonic() - start,
        executor=executor.describe(),
        interrupted=interrupted,
    )
    if interrupted:
        raise StudyInterrupted(summary)
    return summary


# ---------------------------------------------------------------------------
# built-in computations


def stack_point(case) -> dict:
    """Closed-form stack properties (no solve): EOT, physical thickness,
    oxide capacitance per channel area, flat-band voltage."""
    from solver.stack import summarize

    s = summarize(case)
    return {
        "eot_nm": s.eot_nm,
        "thickness_nm": s.thickness_nm,
        "capacitance_F_cm2": s.capacitance_F_cm2,
        "flat_band_V": s.flat_band_V,
    }


register_computation(
    "stack",
    stack_point,
    {
        "eot_nm": Output("nm", "equivalent oxide thickness of the dielectric stack"),
        "thickness_nm": Output("nm", "physical thickness of the dielectric stack"),
        "capacitance_F_cm2": Output("F/cm^2", "stack capacitance per channel area"),
        "flat_band_V": Output("V", "flat-band voltage"),
    },
    description="closed-form stack properties (EOT, capacitance, flat-band voltage)",
)


def _warm_bands() -> None:
    import solver.selfconsistent as sc

    hook = getattr(sc, "warm_up", None)
    if callable(hook):
        hook()


def bands_point(case) -> dict:
    """Self-consistent solve at the point's bias.gate_V (solver.solve)."""
    from solver.selfconsistent import solve

    sol = solve(case, case.bias.gate_V)
    subbands = tuple(getattr(sol, "subbands", ()) or ())
    # electron valleys and hole bands share one energy scale: the ground state of
    # the electrons is the lowest electron subband, that of the holes the highest hole one
    hole_labels = {band.label for band in case.channel.material.hole_bands}
    electrons = [float(e) for label, e, _ in subbands if label not in hole_labels]
    holes = [float(e) for label, e, _ in subbands if label in hole_labels]
    return {
        "surface_potential_V": sol.surface_potential_V,
        "fermi_level_eV": sol.fermi_level_eV,
        "semiconductor_charge_C_cm2": sol.semiconductor_charge_C_cm2,
        "lowest_subband_eV": min(electrons, default=float("nan")),
        "highest_hole_subband_eV": max(holes, default=float("nan")),
        "iterations": float(sol.iterations),
        "layer_fields_MV_cm": np.asarray(sol.layer_fields_MV_cm, dtype=float),
        "x_nm": sol.x_nm,
        "potential_V": sol.potential_V,
        "conduction_band_eV": sol.conduction_band_eV,
        "valence_band_eV": sol.valence_band_eV,
        "electron_density_cm3": sol.electron_density_cm3,
        "hole_density_cm3": sol.hole_density_cm3,
    }


def _layer_sizes(case) -> dict:
    return {"layer": len(case.layers)}


def _bands_sizes(case) -> dict:
    from solver.mesh import structure_from_case

    return {"layer": len(case.layers), "node": structure_from_case(case).size}


register_computation(
    "bands",
    bands_point,
    {
        "surface_potential_V": Output("V", "band bending at the dielectric/channel interface"),
        "fermi_level_eV": Output("eV", "channel Fermi level"),
        "semiconductor_charge_C_cm2": Output("C/cm^2", "net charge per area in the semiconductor"),
        "lowest_subband_eV": Output("eV", "lowest electron subband energy (NaN when classical or none)"),
        "highest_hole_subband_eV": Output("eV", "highest hole subband energy, the hole ground state "
                                          "(NaN when classical or none)"),
        "iterations": Output("1", "self-consistent iterations taken"),
        "layer_fields_MV_cm": Output("MV/cm", "field in each dielectric layer, gate first", ("layer",)),
        "x_nm": Output("nm", "node positions", ("node",), profile=True),
        "potential_V": Output("V", "electrostatic potential", ("node",), profile=True),
        "conduction_band_eV": Output("eV", "conduction band edge", ("node",), profile=True),
        "valence_band_eV": Output("eV", "valence band edge", ("node",), profile=True),
        "electron_density_cm3": Output("cm^-3", "electron density", ("node",), profile=True, log=True),
        "hole_density_cm3": Output("cm^-3", "hole density", ("node",), profile=True, log=True),
    },
    warm_up=_warm_bands,
    sizes=_bands_sizes,
    description="self-consistent Schrödinger–Poisson solve at bias.gate_V",
)


def _warm_current() -> None:
    """Compile (or load from the numba cache) the transmission and current kernels."""
    from solver.tunneling import Barrier, current_density, transmission

    b = Barrier((2.0, 1.0), (3.0, 2.0), (2.0, 2.0), (0.5, 0.4), left=(0.0, 0.3), right=(-1.0, 0.3))
    transmission(b, np.array([0.5, 1.0]))
    current_density(b, 0.5, -0.5, 300.0)


def current_point(case) -> dict:
    """Electron tunneling current emitted by the channel at the point's
    bias.gate_V (stack electrostatics of solver.tunneling.stack, planar or coaxial, exact
    transmission, Tsu–Esaki): through the whole stack, and through the
    injecting (channel-side) layer alone into the next layer's band."""
    from solver.tunneling import current_density
    from solver.tunneling.stack import stack_barrier, stack_data, stack_state

    data = stack_data(case)
    state = stack_state(data, gate_V=case.bias.gate_V)
    whole = stack_barrier(data, state, carrier="electron", emitter="channel", through="stack")
    inject = stack_barrier(data, state, carrier="electron", emitter="channel", through="injecting-layer")
    j_stack = current_density(whole.barrier, whole.fermi_left_eV, whole.fermi_right_eV, whole.temperature_K)
    j_inject = current_density(inject.barrier, inject.fermi_left_eV, inject.fermi_right_eV,
                               inject.temperature_K)
    return {
        "current_A_cm2": float(j_stack),
        "injection_current_A_cm2": float(j_inject),
        "injecting_field_MV_cm": whole.injecting_field_MV_cm,
        "fowler_nordheim": 1.0 if whole.regime == "fowler-nordheim" else 0.0,
        "surface_potential_V": state.surface_potential_V,
        "stack_V": state.stack_V,
        "layer_fields_MV_cm": np.asarray(state.layer_fields_MV_cm, dtype=float),
    }


register_computation(
    "current",
    current_point,
    {
        "current_A_cm2": Output("A/cm^2", "electron current from the channel through the whole stack "
                                "(Tsu–Esaki, exact T), > 0 toward the gate", log=True),
        "injection_current_A_cm2": Output("A/cm^2", "electron current from the channel through the "
                                          "injecting layer into the next layer", log=True),
        "injecting_field_MV_cm": Output("MV/cm", "field in the injecting layer at the channel side"),
        "fowler_nordheim": Output("1", "1 where the injecting layer is in the Fowler–Nordheim regime"),
        "surface_potential_V": Output("V", "channel band bending (classical surface estimate)"),
        "stack_V": Output("V", "voltage across the dielectric stack"),
        "layer_fields_MV_cm": Output("MV/cm", "field in each dielectric layer, gate first", ("layer",)),
    },
    warm_up=_warm_current,
    sizes=_layer_sizes,
    description="tunneling current from the channel at bias.gate_V (stack electrostatics, planar or coaxial)",
)


def program_point(case) -> dict:
    """V_T of the cell after one program pulse of bias.pulse_s at bias.gate_V,
    from the neutral cell (solver.cell; default cell settings)."""
    from solver.cell import prepare_cell, program

    cell = prepare_cell(case)
    run = program(cell, case.bias.gate_V, case.bias.pulse_s)
    return {
        "threshold_V": run.final_threshold_V,
        "threshold_shift_V": run.final_threshold_V - cell.neutral_threshold_V,
        "charge_cm2": run.final_charge_cm2,
        "start_tunnel_field_MV_cm": float(run.tunnel_field_MV_cm[0]),
        "end_tunnel_field_MV_cm": float(run.tunnel_field_MV_cm[-1]),
    }


register_computation(
    "program",
    program_point,
    {
        "threshold_V": Output("V", "threshold voltage after the program pulse (an estimate)"),
        "threshold_shift_V": Output("V", "threshold shift from the neutral cell"),
        "charge_cm2": Output("q/cm^2", "net stored charge in the trap layer (negative: electrons)"),
        "start_tunnel_field_MV_cm": Output("MV/cm", "tunnel-layer field at the start of the pulse"),
        "end_tunnel_field_MV_cm": Output("MV/cm", "tunnel-layer field at the end of the pulse"),
    },
    warm_up=_warm_current,  # the cell's currents come from the same kernels
    description="program pulse of bias.pulse_s at bias.gate_V from the neutral cell (solver.cell)",
)
