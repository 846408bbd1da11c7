"""`tunnelstack show FILE`: what a run or study file holds, and how complete a study is."""
from __future__ import annotations

import json
import tomllib
from pathlib import Path

import numpy as np

NAME = "show"
HELP = "list what a run or study file holds: provenance, axes, outputs, completion, failed points"


def add_arguments(parser):
    parser.add_argument("file", metavar="FILE", help="HDF5 file written by tunnelstack")
    parser.add_argument("--errors", type=int, default=10, metavar="N",
                        help="list at most N failed points (default 10; 0 = all)")


def _title(case_text: str) -> str:
    try:
        return str(tomllib.loads(case_text).get("title", "")) if case_text else ""
    except tomllib.TOMLDecodeError:
        return ""


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _range(values) -> str:
    arr = np.asarray(values, dtype=float)
    arr = arr[np.isfinite(arr)]
    if arr.size == 0:
        return "(no finite value)"
    lo, hi = arr.min(), arr.max()
    return _fmt(lo) if lo == hi else f"{_fmt(lo)} .. {_fmt(hi)}"


def _provenance(attrs: dict) -> list[str]:
    lines = []
    title = _title(attrs.get("case_text", ""))
    if title:
        lines.append(f"case: {title}")
    lines.append(f"written: {attrs.get('created_utc', '?')} by tunnelstack {attrs.get('tool_version', '?')} "
                 f"(numpy {attrs.get('numpy_version', '?')}, scipy {attrs.get('scipy_version', '?')}, "
                 f"numba {attrs.get('numba_version', '?')}, h5py {attrs.get('h5py_version', '?')})")
    if attrs.get("command"):
        lines.append(f"command: {attrs['command']}")
    return lines


def _show_study(path: Path, limit: int) -> None:
    from cli.common import table
    from solver.store import read_study

    d = read_study(path)
    print(f"{path}: tunnelstack study, computation {d.compute!r}, mode {d.mode}")
    for line in _provenance(d.attrs):
        print(line)
    print()
    rows = [[a.key, a.units, len(a.values), _range(a.values), a.spacing] for a in d.axes]
    print(table(rows, ["axis", "units", "count", "values", "spacing"], ["<", "<", ">", "<", "<"]))
    print()
    total = d.completed.size
    done = int(d.completed.sum())
    failed = int(d.failed.sum())
    ok = d.completed & ~d.failed
    rows = []
    for name, data in d.outputs.items():
        rows.append([name, data.units, "scalar" if data.values.ndim == len(d.shape) else "per point: "
                     + " x ".join(data.dims[len(d.shape):]), _range(np.asarray(data.values)[ok])])
    for name, data in d.profiles.items():
        extra = " x ".join(data.dims[len(d.shape):])
        kind = "profile" if name in d.kept_profiles else "array"
        rows.append([name, data.units, f"{kind} over {extra}", _range(np.asarray(data.values)[ok])])
    print(table(rows, ["output", "units", "kind", "range over finished points"], ["<", "<", "<", "<"]))
    print()
    pct = 100.0 * done / total if total else 100.0
    print(f"completion: {done}/{total} points finished ({pct:.1f} %), {failed} failed, "
          f"{total - done} pending")
    times = d.elapsed_s[ok]
    if times.size:
        print(f"compute time per point: median {np.median(times):.3g} s, max {times.max():.3g} s")
    lock = Path(str(path) + ".lock")
    if lock.exists():
        try:
            info = json.loads(lock.read_text())
            print(f"lock: {lock.name} held by pid {info.get('pid')} on {info.get('host')} "
                  f"since {info.get('since_utc')} (a study may be writing this file now)")
        except (OSError, ValueError):
            print(f"lock: {lock.name} present")
    if failed:
        print()
        print("failed points:")
        idx = np.argwhere(d.failed)
        shown = idx if limit <= 0 else idx[:limit]
        for pos in shown:
            pos = tuple(int(i) for i in pos)
            if d.mode == "zip":
                where = ", ".join(f"{a.key} = {_fmt(a.values[pos[0]])}" for a in d.axes)
            else:
                where = ", ".join(f"{a.key} = {_fmt(a.values[i])}" for a, i in zip(d.axes, pos))
            print(f"  {where}: {d.error_type[pos]}: {d.error_message[pos]}")
        if len(shown) < len(idx):
            print(f"  ... and {len(idx) - len(shown)} more (--errors 0 lists all)")
    if done < total:
        print()
        print("unfinished: run the same `tunnelstack study` command again to resume")


def _show_run(path: Path) -> None:
    from cli.common import table
    from solver.store import read_run

    r = read_run(path)
    print(f"{path}: tunnelstack run")
    for line in _provenance(r["attrs"]):
        print(line)
    for gname, entries in r["groups"].items():
        print()
        rows = []
        for name, data in entries.items():
            arr = np.asarray(data.values)
            shape = "scalar" if arr.ndim == 0 else " x ".join(f"{d}[{n}]" for d, n in zip(data.dims, arr.shape))
            if arr.dtype.kind in "iuf":
                summary = _range(arr) if arr.ndim else _fmt(float(arr))
            else:
                summary = str(arr.ravel()[0]) + (" ..." if arr.size > 1 else "") if arr.size else ""
            rows.append([name, data.units, shape, summary])
        print(f"[{gname}]")
        print(table(rows, ["dataset", "units", "shape", "values"], ["<", "<", "<", "<"]))


def run(args) -> int:
    from solver.store import file_kind, StoreError

    if args.errors < 0:
        from solver.errors import CaseError

        raise CaseError(f"--errors: must be >= 0 (0 = all failed points), got {args.errors}")
    path = Path(args.file)
    kind = file_kind(path)
    if kind is None:
        raise StoreError(f"{path}: no such file")
    if kind == "study":
        _show_study(path, args.errors)
    else:
        _show_run(path)
    return 0
