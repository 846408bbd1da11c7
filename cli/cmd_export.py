"""`tunnelstack export FILE --csv [OUT]`: tables of a run or study file as CSV.

Study: one row per point: the axis values, status, every scalar output, and
the error of a failed point. Lines starting with '#' before the header give
the file, the units of each column and what was left out (profiles).
Run: one CSV per stage and axis (datasets sharing that axis as columns) plus
one per stage for its scalars, named OUT-<stage>-<axis>.csv; arrays of two or
more axes are named in the comment lines and left in the HDF5 file.
"""
from __future__ import annotations

import csv
import io
import sys
from pathlib import Path

import numpy as np

NAME = "export"
HELP = "write the tables of a run or study file as CSV"


def add_arguments(parser):
    parser.add_argument("file", metavar="FILE", help="HDF5 file written by tunnelstack")
    parser.add_argument("--csv", nargs="?", const="", default=None, metavar="OUT",
                        help="write CSV to OUT (default: FILE with suffix .csv; '-' = standard output)")
    parser.add_argument("--profiles", action="store_true",
                        help="study: also write the per-point arrays, one long table per array axis "
                             "(OUT-<axis>.csv: axis values, index along the array axis, arrays)")


def _num(v) -> str:
    v = float(v)
    return "" if not np.isfinite(v) else repr(v)


def study_rows(d):
    """(comment lines, header, rows) of a study file read with store.read_study."""
    scalars = [n for n, data in d.outputs.items() if np.asarray(data.values).ndim == len(d.shape)]
    per_point = [n for n in d.outputs if n not in scalars]
    header = [a.key for a in d.axes] + ["status"] + scalars + ["elapsed_s", "error_type", "error_message"]
    units = [a.units for a in d.axes] + [""] + [d.outputs[n].units for n in scalars] + ["s", "", ""]
    comments = [f"tunnelstack study {d.path} (computation {d.compute!r}, mode {d.mode})",
                "units: " + ", ".join(f"{h} [{u}]" for h, u in zip(header, units) if u)]
    left_out = per_point + list(d.profiles)
    if left_out:
        comments.append("not in this table (arrays per point; read the HDF5 file): " + ", ".join(left_out))
    rows = []
    for flat in range(int(np.prod(d.shape))):
        pos = np.unravel_index(flat, d.shape)
        if d.mode == "zip":
            axes = [_num(a.values[pos[0]]) for a in d.axes]
        else:
            axes = [_num(a.values[i]) for a, i in zip(d.axes, pos)]
        status = "failed" if d.failed[pos] else ("done" if d.completed[pos] else "pending")
        vals = [_num(np.asarray(d.outputs[n].values)[pos]) for n in scalars]
        rows.append(axes + [status] + vals + [_num(d.elapsed_s[pos]), d.error_type[pos], d.error_message[pos]])
    return comments, header, rows


def profile_tables(d):
    """{array axis: (comments, header, rows)}: the per-point arrays of a study in
    long form, one row per finished point and index along the array axis."""
    by_dim: dict[str, list[str]] = {}
    for name, data in list(d.outputs.items()) + list(d.profiles.items()):
        extra = data.dims[len(d.shape):]
        if len(extra) == 1:
            by_dim.setdefault(extra[0], []).append(name)
    out = {}
    for dim, names in by_dim.items():
        arrays = {n: np.asarray((d.outputs.get(n) or d.profiles[n]).values) for n in names}
        units = {n: (d.outputs.get(n) or d.profiles[n]).units for n in names}
        lengths = d.lengths.get(dim)
        header = [a.key for a in d.axes] + [dim] + names
        rows = []
        for pos in np.argwhere(d.completed & ~d.failed):
            pos = tuple(int(i) for i in pos)
            if d.mode == "zip":
                axes = [_num(a.values[pos[0]]) for a in d.axes]
            else:
                axes = [_num(a.values[i]) for a, i in zip(d.axes, pos)]
            n = int(lengths[pos]) if lengths is not None else arrays[names[0]].shape[-1]
            for k in range(n):
                rows.append(axes + [str(k)] + [_num(arrays[name][pos + (k,)]) for name in names])
        comments = [f"tunnelstack study {d.path}: arrays over {dim!r}, finished points only",
                    "units: " + ", ".join(f"{n} [{units[n]}]" for n in names)]
        out[dim] = (comments, header, rows)
    return out


def _write(target, comments, header, rows) -> None:
    buf = io.StringIO()
    for line in comments:
        buf.write(f"# {line}\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    if target == "-":
        sys.stdout.write(buf.getvalue())
    else:
        Path(target).write_text(buf.getvalue())


def _run_tables(r, path):
    """{suffix: (comments, header, rows)} for a run file."""
    out = {}
    for gname, entries in r["groups"].items():
        arrays = [n for n, d in entries.items() if np.asarray(d.values).ndim > 1]
        left_out = ([f"not in these tables (arrays of 2 or more axes; read the HDF5 file): {', '.join(arrays)}"]
                    if arrays else [])
        scalars = [(n, d) for n, d in entries.items() if np.asarray(d.values).ndim == 0]
        if scalars:
            rows = [[n, _num(d.values) if np.asarray(d.values).dtype.kind in "iuf" else str(d.values), d.units,
                     d.description] for n, d in scalars]
            out[f"{gname}"] = ([f"tunnelstack run {path}, stage {gname}: scalars"] + left_out,
                               ["name", "value", "units", "description"], rows)
        by_dim: dict[str, list] = {}
        for n, d in entries.items():
            if np.asarray(d.values).ndim == 1:
                by_dim.setdefault(d.dims[0], []).append((n, d))
        for dim, items in by_dim.items():
            items.sort(key=lambda item: item[0] != dim)  # the coordinate first
            cols = [np.asarray(d.values) for _, d in items]
            header = [n for n, _ in items]
            rows = [[_num(c[i]) if c.dtype.kind in "iuf" else str(c[i]) for c in cols]
                    for i in range(len(cols[0]))]
            comments = [f"tunnelstack run {path}, stage {gname}, axis {dim}",
                        "units: " + ", ".join(f"{n} [{d.units}]" for n, d in items)] + left_out
            out[f"{gname}-{dim}"] = (comments, header, rows)
    return out


def run(args) -> int:
    from solver.errors import CaseError
    from solver.store import StoreError, file_kind, read_run, read_study

    if args.csv is None:
        raise CaseError("export: choose a format; --csv [OUT] is the one available")
    path = Path(args.file)
    kind = file_kind(path)
    if kind is None:
        raise StoreError(f"{path}: no such file")
    out = args.csv or str(path.with_suffix(".csv"))
    if kind == "study":
        d = read_study(path)
        comments, header, rows = study_rows(d)
        _write(out, comments, header, rows)
        if out != "-":
            print(f"wrote {out} ({len(rows)} points)")
        if args.profiles:
            base = Path(out if out != "-" else path.with_suffix(".csv"))
            for dim, (comments, header, rows) in profile_tables(d).items():
                target = base.with_name(f"{base.stem}-{dim}.csv")
                _write(target, comments, header, rows)
                print(f"wrote {target} ({len(rows)} rows)", file=sys.stderr if out == "-" else sys.stdout)
        return 0
    if args.profiles:
        raise CaseError(f"--profiles: {path} is a run file; the option is for study files "
                        "(a run file's 1-D arrays are in its tables already)")
    tables = _run_tables(read_run(path), path)
    if out == "-":
        for comments, header, rows in tables.values():
            _write("-", comments, header, rows)
        return 0
    base = Path(out)
    for suffix, (comments, header, rows) in tables.items():
        target = base.with_name(f"{base.stem}-{suffix}.csv")
        _write(target, comments, header, rows)
        print(f"wrote {target}")
    return 0
