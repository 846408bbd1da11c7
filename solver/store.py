"""The HDF5 store: one file per run or per study (the only module importing h5py).

Layout of a run file (`write_run`)
----------------------------------
Root attributes
    format            "tunnelstack"            marks the file as ours
    format_version    1
    kind              "run" (a `study` file says "study", see solver/study.py)
    tool_version      solver.__version__
    created_utc       ISO 8601, UTC, seconds ("2026-12-01T19:02:03Z")
    case_text         the case file's full text
    command           the command line that wrote the file
    numpy_version, scipy_version, numba_version, h5py_version, hdf5_version
    ...               any extra `attrs` given by the caller
One group per stage: "bands", "subbands", "tunneling", "current", "cv",
"breakdown", ... Each entry of the stage is a dataset with attributes
    units             "V", "nm", "A/cm^2", "1" for dimensionless, ...
    description       one line
Axes: a dataset's `dims` name its axes. A 1-D dataset of the same group whose
name is one of those dims (e.g. "position_nm") is made an HDF5 dimension scale
and attached to every dataset using it; a dim with no dataset of its own gets
an anonymous scale following the netCDF-4 convention ("This is a netCDF
dimension but not a netCDF variable."), so h5py readers see the axes through
`dataset.dims` and xarray opens each group with named dimensions:

    xarray.open_dataset(path, engine="h5netcdf", group="bands")

An array given without dims gets the dims "<name>_index" (1-D) or
"<name>_index0", "<name>_index1", ... so nothing is ever anonymous.

Writes are atomic: the file is written to a temporary file in the same
directory, flushed, then moved over the target with os.replace. An existing
file at the target is replaced only if it is itself a tunnelstack run file;
anything else (a foreign HDF5 file, a corrupt file, a study file) is refused.

Reading (`read_run`, `open_checked`) raises `StoreError` (a `CaseError`, so the
command line exits with code 2) naming the file and what is wrong: missing,
not HDF5, truncated or corrupt, or not written by tunnelstack.
"""
from __future__ import annotations

import datetime as _dt
import glob
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np

from solver.errors import CaseError

FORMAT_NAME = "tunnelstack"
FORMAT_VERSION = 1
# netCDF-4 convention for a dimension that has no coordinate variable
NOT_A_VARIABLE = b"This is a netCDF dimension but not a netCDF variable."

__all__ = [
    "Data",
    "StoreError",
    "write_run",
    "read_run",
    "open_checked",
    "file_kind",
    "root_attributes",
]


class StoreError(CaseError):
    """A store file is missing, corrupt, truncated, foreign, or would be overwritten."""


@dataclass(frozen=True)
class Data:
    """One dataset of a stage: values, their unit and the names of their axes.

    values : array-like (numbers, booleans or strings)
    units : str, e.g. "V", "nm", "A/cm^2"; "1" for a dimensionless quantity
    dims : names of the axes, one per dimension of `values`
    description : one line saying what it is
    """

    values: object
    units: str
    dims: tuple[str, ...] = ()
    description: str = ""

    def __post_init__(self):
        if not isinstance(self.units, str):
            raise ValueError(f"Data.units must be a string, got {self.units!r}")
        dims = (self.dims,) if isinstance(self.dims, str) else tuple(self.dims)
        for d in dims:
            if not isinstance(d, str) or not d or "/" in d:
                raise ValueError(f"Data.dims entries must be non-empty names without '/', got {d!r}")
        object.__setattr__(self, "dims", dims)
        if not isinstance(self.description, str):
            raise ValueError(f"Data.description must be a string, got {self.description!r}")


# ---------------------------------------------------------------------------
# helpers shared with the study store


def _utc_now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _versions() -> dict[str, str]:
    import numba
    import scipy

    from solver import __version__

    return {
        "tool_version": __version__,
        "numpy_version": np.__version__,
        "scipy_version": scipy.__version__,
        "numba_version": numba.__version__,
        "h5py_version": h5py.__version__,
        "hdf5_version": h5py.version.hdf5_version,
    }


def _attr_value(key: str, value):
    """Convert an attribute to something HDF5 and netCDF readers both take."""
    if isinstance(value, (bool, np.bool_)):
        return np.int8(value)
    if isinstance(value, (str, int, float, np.integer, np.floating)):
        return value
    if value is None:
        return ""
    arr = np.asarray(value)
    if arr.dtype.kind in "iuf" and arr.ndim <= 1:
        return arr
    if arr.dtype.kind in "US" and arr.ndim == 1:
        return [str(v) for v in arr]
    raise ValueError(f"attribute {key!r}: cannot store {type(value).__name__} {value!r}")


def root_attributes(kind: str, case_text: str, command: str, attrs: dict | None = None) -> dict:
    """The root attributes every tunnelstack file carries."""
    out = {
        "format": FORMAT_NAME,
        "format_version": FORMAT_VERSION,
        "kind": kind,
        "created_utc": _utc_now(),
        "case_text": str(case_text),
        "command": str(command),
    }
    out.update(_versions())
    for key, value in (attrs or {}).items():
        if key in ("format", "format_version", "kind"):
            raise ValueError(f"attribute {key!r} is reserved by the store")
        out[str(key)] = value
    return out


def _set_attrs(obj, attrs: dict) -> None:
    for key, value in attrs.items():
        obj.attrs[key] = _attr_value(key, value)


def _as_array(name: str, values) -> np.ndarray:
    arr = np.asarray(values)
    if arr.dtype.kind == "b":
        return arr.astype(np.int8)  # netCDF has no boolean type
    if arr.dtype.kind == "U":
        return arr.astype(object)
    if arr.dtype.kind == "O":
        flat = arr.ravel()
        if all(isinstance(v, str) for v in flat):
            return arr
        try:
            return arr.astype(float)
        except (TypeError, ValueError):
            raise ValueError(f"dataset {name!r}: values must be numbers or strings") from None
    if arr.dtype.kind not in "iufcS":
        raise ValueError(f"dataset {name!r}: cannot store values of dtype {arr.dtype}")
    return arr


def _default_dims(name: str, ndim: int) -> tuple[str, ...]:
    if ndim == 1:
        return (f"{name}_index",)
    return tuple(f"{name}_index{i}" for i in range(ndim))


def write_group(group: h5py.Group, entries: dict[str, Data], **create_kwargs) -> None:
    """Write `entries` into `group` with units, descriptions and dimension scales.

    Raises ValueError naming the entry when the dims do not match the data.
    """
    arrays: dict[str, tuple[np.ndarray, tuple[str, ...], Data]] = {}
    dim_sizes: dict[str, int] = {}
    for name, data in entries.items():
        if not isinstance(data, Data):
            raise ValueError(f"{group.name}/{name}: expected a store.Data, got {type(data).__name__}")
        if not name or "/" in name:
            raise ValueError(f"{group.name}: dataset name {name!r} must be non-empty without '/'")
        arr = _as_array(f"{group.name}/{name}", data.values)
        dims = data.dims or _default_dims(name, arr.ndim)
        if len(dims) != arr.ndim:
            raise ValueError(
                f"{group.name}/{name}: {arr.ndim}-D values with dims {dims} "
                f"(need one name per axis)"
            )
        for d, n in zip(dims, arr.shape):
            if dim_sizes.setdefault(d, n) != n:
                raise ValueError(
                    f"{group.name}/{name}: axis {d!r} has length {n}, "
                    f"elsewhere in the group {dim_sizes[d]}"
                )
        arrays[name] = (arr, dims, data)

    for name, (arr, dims, data) in arrays.items():
        if arr.dtype == object:
            ds = group.create_dataset(name, data=arr, dtype=h5py.string_dtype(), **create_kwargs)
        else:
            ds = group.create_dataset(name, data=arr, **create_kwargs)
        ds.attrs["units"] = data.units
        ds.attrs["description"] = data.description

    # dimension scales: a 1-D dataset named after its own single dim is the coordinate
    scales: dict[str, h5py.Dataset] = {}
    for dim, size in dim_sizes.items():
        if dim in arrays and arrays[dim][1] == (dim,):
            ds = group[dim]
            ds.make_scale(dim)
        elif dim in arrays:
            raise ValueError(
                f"{group.name}/{dim}: named as an axis, so it must be 1-D with dims ({dim!r},)"
            )
        else:
            ds = group.create_dataset(dim, shape=(size,), dtype=">f4", **create_kwargs)
            ds.make_scale(NOT_A_VARIABLE + f"{size:10d}".encode("ascii"))
        scales[dim] = ds
    for name, (arr, dims, data) in arrays.items():
        if name in scales and dims == (name,):
            continue
        ds = group[name]
        for axis, dim in enumerate(dims):
            ds.dims[axis].attach_scale(scales[dim])


# ---------------------------------------------------------------------------
# checked opening


def open_checked(path, mode: str = "r", *, kind: str | None = None) -> h5py.File:
    """Open a tunnelstack file, or raise StoreError saying what is wrong with it.

    kind : if given ("run" or "study"), the file must be of that kind.
    """
    p = Path(path)
    if not p.exists():
        raise StoreError(f"{p}: no such file")
    if p.is_dir():
        raise StoreError(f"{p}: is a directory, not a tunnelstack file")
    if p.stat().st_size == 0:
        raise StoreError(f"{p}: empty file, not a tunnelstack file")
    if not h5py.is_hdf5(str(p)):
        raise StoreError(f"{p}: not an HDF5 file (corrupt, truncated, or another format)")
    try:
        f = _open_h5(p, mode)
    except OSError as err:
        raise StoreError(f"{p}: HDF5 file cannot be opened, truncated or corrupt ({_short(err)})") from None
    try:
        fmt = f.attrs.get("format")
        if isinstance(fmt, bytes):
            fmt = fmt.decode()
        if fmt != FORMAT_NAME:
            raise StoreError(f"{p}: HDF5 file not written by tunnelstack (no format='tunnelstack' attribute)")
        version = int(f.attrs.get("format_version", 0))
        if version > FORMAT_VERSION:
            raise StoreError(
                f"{p}: store format {version} is newer than this version reads ({FORMAT_VERSION}); "
                "update tunnelstack"
            )
        if kind is not None and _str(f.attrs.get("kind")) != kind:
            raise StoreError(f"{p}: is a tunnelstack {_str(f.attrs.get('kind'))} file, expected a {kind} file")
    except StoreError:
        f.close()
        raise
    except (OSError, KeyError, RuntimeError, ValueError) as err:
        f.close()
        raise StoreError(f"{p}: HDF5 file truncated or corrupt ({_short(err)})") from None
    return f


def _open_h5(p: Path, mode: str) -> h5py.File:
    if mode != "r":
        return h5py.File(p, mode)
    # Readers do not take HDF5's file lock, so `show` works while a study writes;
    # HDF5 refuses mixed lock settings within one process, hence the fallback.
    try:
        return h5py.File(p, "r", locking=False)
    except OSError as err:
        if "locking" not in str(err):
            raise
        return h5py.File(p, "r")


def file_kind(path) -> str | None:
    """"run" or "study" for a readable tunnelstack file; None if the path does not exist.

    Raises StoreError for anything else at the path.
    """
    if not Path(path).exists():
        return None
    with open_checked(path) as f:
        return _str(f.attrs.get("kind"))


def _str(value) -> str:
    if isinstance(value, bytes):
        return value.decode("utf-8", "replace")
    return "" if value is None else str(value)


def _short(err: Exception) -> str:
    text = str(err).strip().splitlines()
    return text[0] if text else type(err).__name__


# ---------------------------------------------------------------------------
# run files


def write_run(
    path,
    *,
    case_text: str,
    command: str,
    groups: dict[str, dict[str, Data]],
    attrs: dict | None = None,
) -> Path:
    """Write one run file atomically and return its path.

    path : target file (conventionally *.h5); its directory must exist
    case_text : the case file's full text
    command : the command line (e.g. " ".join(sys.argv))
    groups : {stage name: {dataset name: Data}}
    attrs : extra root attributes (numbers, strings, short 1-D lists)

    Raises StoreError if something other than a tunnelstack run file is at
    `path`, ValueError for malformed groups (naming the entry).
    """
    target = Path(path)
    _existing_kind(target, "run")
    _directory_of(target)
    for gname in groups:
        if not gname or "/" in gname:
            raise ValueError(f"group name {gname!r} must be non-empty without '/'")

    def fill(f: h5py.File) -> None:
        _set_attrs(f, root_attributes("run", case_text, command, attrs))
        for gname, entries in groups.items():
            write_group(f.create_group(gname), entries)

    _write_atomically(target, fill)
    return target


def _directory_of(target: Path) -> Path:
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise StoreError(f"{target}: directory {directory} does not exist")
    return directory


def _existing_kind(target: Path, kind: str) -> bool:
    """True if a tunnelstack file of `kind` is at `target` (it may be replaced),
    False if nothing is there; StoreError for anything else (never overwritten)."""
    if not target.exists():
        return False
    if target.is_dir():
        raise StoreError(f"{target}: is a directory")
    try:
        found = file_kind(target)
    except StoreError as err:
        raise StoreError(f"{err}; refusing to overwrite it (remove it or choose another file)") from None
    if found != kind:
        raise StoreError(
            f"{target}: is a tunnelstack {found} file, not a {kind} file; refusing to overwrite it "
            "(choose another output file or remove it first)"
        )
    return True


def _write_atomically(target: Path, fill) -> None:
    """Write an HDF5 file through `fill(h5py.File)` into a temporary file beside
    `target`, flush and fsync it, then move it over `target` (os.replace)."""
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=_directory_of(target))
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        with h5py.File(tmp, "w") as f:
            fill(f)
            f.flush()
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _read_value(ds: h5py.Dataset):
    if h5py.check_string_dtype(ds.dtype) is not None:
        values = ds.asstr()[()]
        if isinstance(values, np.ndarray):
            values = values.astype(str)
    else:
        values = ds[()]
    if isinstance(values, np.ndarray):
        values.flags.writeable = False
    return values


def _dataset_dims(ds: h5py.Dataset) -> tuple[str, ...]:
    names = []
    for axis in range(ds.ndim):
        scales = list(ds.dims[axis].values())
        if not scales:
            names.append(f"{ds.name.rsplit('/', 1)[-1]}_index{axis}")
            continue
        names.append(scales[0].name.rsplit("/", 1)[-1])
    return tuple(names)


def _is_anonymous_scale(ds: h5py.Dataset) -> bool:
    name = ds.attrs.get("NAME")
    return isinstance(name, (bytes, np.bytes_)) and bytes(name).startswith(NOT_A_VARIABLE)


def read_group(group: h5py.Group) -> dict[str, Data]:
    """{name: Data} for the datasets of `group` (anonymous dimension scales left out)."""
    out = {}
    for name, ds in group.items():
        if not isinstance(ds, h5py.Dataset) or _is_anonymous_scale(ds):
            continue
        if h5py.h5ds.is_scale(ds.id) and ds.ndim == 1:
            dims = (name,)
        else:
            dims = _dataset_dims(ds)
        out[name] = Data(
            values=_read_value(ds),
            units=_str(ds.attrs.get("units", "")),
            dims=dims,
            description=_str(ds.attrs.get("description", "")),
        )
    return out


def read_run(path) -> dict:
    """Read a run file.

    Returns {"attrs": {root attributes}, "groups": {stage: {name: Data}}}.
    Raises StoreError naming the file for a missing, corrupt, truncated or
    foreign file.
    """
    p = Path(path)
    with open_checked(p) as f:
        try:
            attrs = {k: _plain_attr(v) for k, v in f.attrs.items()}
            groups = {name: read_group(g) for name, g in f.items() if isinstance(g, h5py.Group)}
        except (OSError, KeyError, RuntimeError) as err:
            raise StoreError(f"{p}: HDF5 file truncated or corrupt ({_short(err)})") from None
    return {"attrs": attrs, "groups": groups}


def _plain_attr(value):
    if isinstance(value, bytes):
        return value.decode("utf-8", "replace")
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        if value.dtype.kind in "OS":
            return [_str(v) for v in value]
        return value.tolist()
    return value


# ---------------------------------------------------------------------------
# study files
#
# Layout of a study file (root attribute kind = "study")
#   root attributes   as for a run, plus study_hash (sha256 of the case text, its
#                     materials file if any, and the study spec) and compute (the
#                     point computation's name)
#   /study            group attributes: compute, mode ("grid" | "zip"), keys
#                     (axis key paths), spec (JSON), n_points
#     <key path>      one 1-D dataset per axis, e.g. "layers.tunnel.thickness_nm",
#                     units and spacing ("list" | "linear" | "log") as attributes;
#                     grid mode: each is the dimension scale of its own axis;
#                     zip mode: all lie along the one dimension "point" (a scale
#                     0..n-1) and are listed in each variable's `coordinates`
#     completed       int8 over the study axes: 1 = point finished (result or error)
#     failed          int8: 1 = the point raised; see error_type / error_message
#     error_type      fixed-length UTF-8 bytes (64): exception class name
#     error_message   fixed-length UTF-8 bytes (400): its message, cut to fit
#     elapsed_s       wall time of the point's computation, s
#     <output>        float64 over the study axes, NaN where not computed
#     <profile>       float64 over the study axes + the profile's own axes
#                     (e.g. "node"), NaN-padded; <axis>_length (int32 over the
#                     study axes) holds the valid length of that axis per point
#
# Crash safety: every dataset is contiguous and written in full when the file
# is created (atomically, temp file + os.replace), so a finished point changes
# raw data only, never HDF5 metadata. Per point: outputs and error fields are
# written, the file flushed, then `completed` set and flushed again. A SIGKILL
# leaves at worst a half-written point whose `completed` is 0: it is computed
# again on resume. When a profile is longer than the room reserved for it, the
# whole file is rebuilt with more room (atomically again).

ERROR_TYPE_BYTES = 64
ERROR_MESSAGE_BYTES = 400
_CREATE = {"track_times": False}


def _fixed_bytes(text: str, size: int) -> bytes:
    raw = text.encode("utf-8", "replace")
    if len(raw) <= size:
        return raw
    cut = raw[: size - 3]
    return cut.decode("utf-8", "ignore").encode("utf-8") + b"..."


class StudyLock:
    """An exclusive lock file `<study file>.lock` holding pid, host and start time.

    A lock left by a dead process on this host is taken over with a notice;
    a live one (or one from another host) is refused with a clear message.
    """

    def __init__(self, path, notice=None):
        self.path = Path(str(path) + ".lock")
        self._notice = notice or (lambda text: None)
        self._held = False

    @staticmethod
    def _start_time(pid: int) -> str:
        try:
            with open(f"/proc/{pid}/stat", "rb") as fh:
                return fh.read().rsplit(b")", 1)[1].split()[19].decode()
        except (OSError, IndexError):
            return ""

    def _owner_alive(self, info: dict) -> bool | None:
        """True/False on this host, None when the lock is from another host."""
        import socket

        if info.get("host") != socket.gethostname():
            return None
        pid = int(info.get("pid", -1))
        if pid <= 0:
            return False
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            return False
        except PermissionError:
            return True
        started = info.get("process_start", "")
        return not (started and self._start_time(pid) and started != self._start_time(pid))

    def acquire(self) -> "StudyLock":
        import json
        import socket

        info = {
            "pid": os.getpid(),
            "host": socket.gethostname(),
            "process_start": self._start_time(os.getpid()),
            "since_utc": _utc_now(),
        }
        for _attempt in range(3):
            try:
                fd = os.open(self.path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
            except FileExistsError:
                try:
                    other = json.loads(self.path.read_text() or "{}")
                except (OSError, ValueError):
                    other = {}
                alive = self._owner_alive(other) if other else False
                if alive is None:
                    raise StoreError(
                        f"{self.path}: the study file is locked by pid {other.get('pid')} on host "
                        f"{other.get('host')!r} since {other.get('since_utc')}; if no study runs "
                        "there any more, remove the lock file"
                    ) from None
                if alive:
                    raise StoreError(
                        f"{self.path}: another study (pid {other.get('pid')}, since "
                        f"{other.get('since_utc')}) is writing this file; wait for it or stop it"
                    ) from None
                self._notice(
                    f"note: taking over the stale lock {self.path} "
                    f"(pid {other.get('pid', '?')} is no longer running)"
                )
                try:
                    self.path.unlink()
                except FileNotFoundError:
                    pass
                continue
            with os.fdopen(fd, "w") as fh:
                json.dump(info, fh)
            self._held = True
            return self
        raise StoreError(f"{self.path}: cannot take the lock (it keeps reappearing)")

    def release(self) -> None:
        if self._held:
            self._held = False
            try:
                self.path.unlink()
            except FileNotFoundError:
                pass

    def __enter__(self):
        return self.acquire()

    def __exit__(self, *exc):
        self.release()
        return False


def _study_root_attrs(plan, case_text: str, command: str) -> dict:
    return root_attributes(
        "study", case_text, command, {"study_hash": plan.spec_hash, "compute": plan.compute.name}
    )


def _create_study_layout(f: h5py.File, plan, reserves: dict[str, int]) -> None:
    g = f.create_group("study")
    g.attrs["compute"] = plan.compute.name
    g.attrs["mode"] = plan.mode
    g.attrs["keys"] = [a.key for a in plan.axes]
    g.attrs["spec"] = plan.spec_json
    g.attrs["n_points"] = plan.n_points
    shape, dims = plan.shape, plan.dims
    scales: dict[str, h5py.Dataset] = {}
    coords_attr = ""
    if plan.mode == "zip":
        ds = g.create_dataset("point", data=np.arange(plan.n_points, dtype=np.int64), **_CREATE)
        ds.attrs["units"] = "1"
        ds.attrs["description"] = "index of the study point (axes zipped)"
        ds.make_scale("point")
        scales["point"] = ds
        coords_attr = " ".join(a.key for a in plan.axes)
    for axis in plan.axes:
        ds = g.create_dataset(axis.key, data=np.asarray(axis.values, dtype=float), **_CREATE)
        ds.attrs["units"] = axis.units
        ds.attrs["description"] = f"study axis: values of {axis.key}"
        ds.attrs["spacing"] = axis.spacing
        if plan.mode == "grid":
            ds.make_scale(axis.key)
            scales[axis.key] = ds
        else:
            ds.dims[0].attach_scale(scales["point"])
    for dim, size in reserves.items():
        ds = g.create_dataset(dim, shape=(size,), dtype=">f4", **_CREATE)
        ds.make_scale(NOT_A_VARIABLE + f"{size:10d}".encode("ascii"))
        scales[dim] = ds

    def new(name, data, units, description, var_dims):
        ds = g.create_dataset(name, data=data, **_CREATE)
        ds.attrs["units"] = units
        ds.attrs["description"] = description
        if coords_attr:
            ds.attrs["coordinates"] = coords_attr
        for i, d in enumerate(var_dims):
            ds.dims[i].attach_scale(scales[d])
        return ds

    new("completed", np.zeros(shape, np.int8), "1", "1 = point finished (result or recorded error)", dims)
    new("failed", np.zeros(shape, np.int8), "1", "1 = point raised; see error_type, error_message", dims)
    ds = new("error_type", np.zeros(shape, f"S{ERROR_TYPE_BYTES}"), "", "exception class of a failed point", dims)
    ds.attrs["_Encoding"] = "utf-8"
    ds = new("error_message", np.zeros(shape, f"S{ERROR_MESSAGE_BYTES}"), "", "message of a failed point", dims)
    ds.attrs["_Encoding"] = "utf-8"
    new("elapsed_s", np.full(shape, np.nan), "s", "wall time of the point's computation", dims)
    for name, out in plan.outputs.items():
        if out.dims:
            full = shape + tuple(reserves[d] for d in out.dims)
            ds = new(name, np.full(full, np.nan), out.units, out.description, dims + tuple(out.dims))
        else:
            ds = new(name, np.full(shape, np.nan), out.units, out.description, dims)
        ds.attrs["log_scale"] = np.int8(out.log)
        ds.attrs["profile"] = np.int8(out.profile)
    for dim in reserves:
        new(f"{dim}_length", np.zeros(shape, np.int32), "1", f"valid length of axis {dim!r} per point", dims)


def _write_new_study(path: Path, plan, case_text: str, command: str, reserves, copy_from=None) -> None:
    def fill(f: h5py.File) -> None:
        if copy_from is None:
            _set_attrs(f, _study_root_attrs(plan, case_text, command))
        else:
            for key, value in copy_from.attrs.items():
                f.attrs[key] = value
        _create_study_layout(f, plan, reserves)
        if copy_from is not None:
            _copy_study_data(copy_from["study"], f["study"], plan, reserves)

    _write_atomically(path, fill)


def _copy_study_data(src: h5py.Group, dst: h5py.Group, plan, reserves) -> None:
    for name in ("completed", "failed", "error_type", "error_message", "elapsed_s"):
        dst[name][...] = src[name][...]
    for dim in reserves:
        if f"{dim}_length" in src:
            dst[f"{dim}_length"][...] = src[f"{dim}_length"][...]
    for name, out in plan.outputs.items():
        if name not in src:
            continue
        if out.dims:
            old = src[name][...]
            region = tuple(slice(0, n) for n in old.shape)
            dst[name][region] = old
        else:
            dst[name][...] = src[name][...]


class StudyStore:
    """The single writer of one study file; the sink a study run writes to.

    Use `open_study(...)`: it takes the lock, creates or checks the file.
    """

    def __init__(self, path: Path, plan, lock: StudyLock):
        self.path = path
        self.plan = plan
        self._lock = lock
        self._file: h5py.File | None = None
        self._open()

    # -- file handling
    def _open(self) -> None:
        self._file = open_checked(self.path, "r+", kind="study")
        g = self._file["study"]
        self._g = g
        self._reserves = {}
        for out in self.plan.outputs.values():
            for i, d in enumerate(out.dims):
                self._reserves[d] = g[d].shape[0]
        self._completed = g["completed"]
        self._failed = g["failed"]
        # dataset handles looked up once: a lookup costs as much as a small write
        names = list(self.plan.outputs) + ["error_type", "error_message", "elapsed_s"]
        names += [f"{d}_length" for d in self._reserves]
        self._ds = {name: g[name] for name in names}

    def _close_file(self) -> None:
        if self._file is not None:
            self._file.close()
            self._file = None

    def close(self) -> None:
        try:
            self._close_file()
        finally:
            self._lock.release()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False

    # -- queries
    def completed_mask(self) -> np.ndarray:
        return self._completed[...].astype(bool)

    def pending(self, retry_failed: bool = False) -> list[int]:
        done = self._completed[...].astype(bool).ravel()
        if retry_failed:
            done &= ~self._failed[...].astype(bool).ravel()
        return [int(i) for i in np.flatnonzero(~done)]

    def counts(self) -> tuple[int, int, int]:
        """(finished, failed, total)"""
        done = self._completed[...].astype(bool)
        failed = self._failed[...].astype(bool) & done
        return int(done.sum()), int(failed.sum()), int(done.size)

    # -- writing
    def _grow(self, needed: dict[str, int]) -> None:
        reserves = dict(self._reserves)
        for dim, n in needed.items():
            if n > reserves.get(dim, 0):
                reserves[dim] = int(-(-int(n * 1.25) // 16) * 16)
        self._close_file()
        with h5py.File(self.path, "r") as src:
            _write_new_study(self.path, self.plan, "", "", reserves, copy_from=src)
        self._open()

    def write(self, outcome) -> None:
        """Store one finished point (see the crash-safety note above)."""
        plan = self.plan
        idx = np.unravel_index(outcome.index, plan.shape)
        ok = not outcome.error_type
        lengths: dict[str, int] = {}
        if ok:
            for name, out in plan.outputs.items():
                if out.dims:
                    arr = np.asarray(outcome.values[name], dtype=float)
                    for d, n in zip(out.dims, arr.shape):
                        lengths[d] = max(lengths.get(d, 0), n)
            if any(n > self._reserves[d] for d, n in lengths.items()):
                self._grow(lengths)
        ds = self._ds
        for name, out in plan.outputs.items():
            if not out.dims:
                ds[name][idx] = float(outcome.values[name]) if ok else np.nan
                continue
            if not ok:
                ds[name][idx] = np.nan
                continue
            arr = np.asarray(outcome.values[name], dtype=float)
            full = np.full(ds[name].shape[len(plan.shape):], np.nan)
            full[tuple(slice(0, n) for n in arr.shape)] = arr
            ds[name][idx] = full
        for dim in self._reserves:
            ds[f"{dim}_length"][idx] = lengths.get(dim, 0) if ok else 0
        ds["error_type"][idx] = _fixed_bytes(outcome.error_type, ERROR_TYPE_BYTES)
        ds["error_message"][idx] = _fixed_bytes(outcome.error_message, ERROR_MESSAGE_BYTES)
        ds["elapsed_s"][idx] = outcome.elapsed_s
        self._failed[idx] = 0 if ok else 1
        self._file.flush()
        self._completed[idx] = 1
        self._file.flush()


def open_study(
    path,
    plan,
    *,
    case_text: str,
    command: str,
    restart: bool = False,
    notice=None,
) -> StudyStore:
    """Take the lock on `path`, create the study file or check it belongs to
    `plan`, and return its writer.

    Raises StoreError when another writer holds the lock, when `path` is not a
    tunnelstack study file (never overwritten), or when it was written for a
    different case or study and `restart` is false.
    """
    target = Path(path)
    directory = _directory_of(target)
    lock = StudyLock(target, notice=notice).acquire()
    try:
        # temp files of a writer killed while creating or rebuilding this file
        for stale in directory.glob(f".{glob.escape(target.name)}.*.tmp"):
            stale.unlink(missing_ok=True)
        if _existing_kind(target, "study"):
            with open_checked(target, kind="study") as f:
                old_hash = _str(f.attrs.get("study_hash"))
                old_compute = _str(f.attrs.get("compute"))
                done = int(np.count_nonzero(f["study/completed"][...])) if "study/completed" in f else 0
            if old_hash != plan.spec_hash:
                if not restart:
                    what = (f"computation {old_compute!r} there, {plan.compute.name!r} asked now; "
                            if old_compute and old_compute != plan.compute.name else "")
                    raise StoreError(
                        f"{target}: holds a study of a different case or study spec "
                        f"({what}{done} finished points); use --restart to discard them and start over, "
                        "or choose another output file"
                    )
                create = True
            else:
                create = restart
        else:
            create = True
        if create:
            _write_new_study(target, plan, case_text, command, dict(plan.profile_reserves))
        return StudyStore(target, plan, lock)
    except BaseException:
        lock.release()
        raise


@dataclass(frozen=True)
class StudyAxisData:
    key: str
    values: np.ndarray
    units: str
    spacing: str


@dataclass(frozen=True)
class StudyData:
    """A study file read back: everything `show`, `plot` and `export` need."""

    path: Path
    attrs: dict
    compute: str
    mode: str
    axes: tuple[StudyAxisData, ...]
    dims: tuple[str, ...]
    shape: tuple[int, ...]
    completed: np.ndarray
    failed: np.ndarray
    error_type: np.ndarray
    error_message: np.ndarray
    elapsed_s: np.ndarray
    outputs: dict        # name -> Data over the study axes (scalars)
    profiles: dict       # name -> Data over the study axes + their own axes
    lengths: dict        # profile axis -> int array over the study axes
    log_scale: dict      # output name -> bool
    kept_profiles: tuple = ()   # outputs kept on request (profiles)


def _decode_bytes(arr: np.ndarray) -> np.ndarray:
    flat = [bytes(v).decode("utf-8", "replace") for v in arr.ravel()]
    return np.array(flat, dtype=object).reshape(arr.shape)


def read_study(path) -> StudyData:
    """Read a study file; StoreError naming the file if it is not a readable one."""
    p = Path(path)
    with open_checked(p, kind="study") as f:
        try:
            g = f["study"]
            mode = _str(g.attrs["mode"])
            keys = [_str(k) for k in g.attrs["keys"]]
            axes = tuple(
                StudyAxisData(
                    key=k,
                    values=g[k][...],
                    units=_str(g[k].attrs.get("units", "")),
                    spacing=_str(g[k].attrs.get("spacing", "list")),
                )
                for k in keys
            )
            dims = tuple(keys) if mode == "grid" else ("point",)
            shape = g["completed"].shape
            reserved = set()
            for name, ds in g.items():
                if _is_anonymous_scale(ds):
                    reserved.add(name)
            skip = {"completed", "failed", "error_type", "error_message", "elapsed_s", "point"}
            skip |= set(keys) | reserved | {f"{d}_length" for d in reserved}
            outputs, profiles, log_scale, kept_profiles = {}, {}, {}, []
            for name, ds in g.items():
                if name in skip:
                    continue
                data = Data(
                    values=ds[...],
                    units=_str(ds.attrs.get("units", "")),
                    dims=_dataset_dims(ds),
                    description=_str(ds.attrs.get("description", "")),
                )
                log_scale[name] = bool(ds.attrs.get("log_scale", 0))
                if ds.attrs.get("profile", 0):
                    kept_profiles.append(name)
                (profiles if ds.ndim > len(shape) else outputs)[name] = data
            lengths = {d: g[f"{d}_length"][...] for d in reserved if f"{d}_length" in g}
            completed = g["completed"][...].astype(bool)
            return StudyData(
                path=p,
                attrs={k: _plain_attr(v) for k, v in f.attrs.items()},
                compute=_str(g.attrs.get("compute")),
                mode=mode,
                axes=axes,
                dims=dims,
                shape=tuple(shape),
                completed=completed,
                failed=g["failed"][...].astype(bool) & completed,
                error_type=_decode_bytes(g["error_type"][...]),
                error_message=_decode_bytes(g["error_message"][...]),
                elapsed_s=g["elapsed_s"][...],
                outputs=outputs,
                profiles=profiles,
                lengths=lengths,
                log_scale=log_scale,
                kept_profiles=tuple(kept_profiles),
            )
        except (OSError, KeyError, RuntimeError, ValueError) as err:
            raise StoreError(f"{p}: study file truncated or corrupt ({_short(err)})") from None
