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
    if target.exists():
        if target.is_dir():
            raise StoreError(f"{target}: is a directory")
        try:
            kind = file_kind(target)
        except StoreError as err:
            raise StoreError(f"{err}; refusing to overwrite it (remove it or choose another file)") from None
        if kind != "run":
            raise StoreError(
                f"{target}: is a tunnelstack {kind} file; refusing to overwrite it with a run "
                "(choose another output file or remove it first)"
            )
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise StoreError(f"{target}: directory {directory} does not exist")
    for gname in groups:
        if not gname or "/" in gname:
            raise ValueError(f"group name {gname!r} must be non-empty without '/'")

    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=directory)
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        with h5py.File(tmp, "w") as f:
            _set_attrs(f, root_attributes("run", case_text, command, attrs))
            for gname, entries in groups.items():
                write_group(f.create_group(gname), entries)
            f.flush()
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return target


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
