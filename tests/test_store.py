"""HDF5 run files and the study-file lock: layout, dimension scales, units,
atomic writes, and clear errors for missing, corrupt or foreign files."""
from __future__ import annotations

import json
import os
import subprocess
import sys

import h5py
import numpy as np
import pytest
from numpy.testing import assert_array_equal

from solver.errors import CaseError
from solver.store import Data, StoreError, StudyLock, read_run, write_run

xr = pytest.importorskip("xarray")
pytest.importorskip("h5netcdf")


def _groups():
    x = np.linspace(0.0, 20.0, 11)
    return {
        "bands": {
            "x_nm": Data(x, "nm", ("x_nm",), "node positions"),
            "potential_V": Data(0.1 * x, "V", ("x_nm",), "electrostatic potential"),
            "density_cm3": Data(np.vstack([1e17 * np.ones(11), 1e3 * np.ones(11)]), "cm^-3",
                                ("carrier", "x_nm"), "carrier densities"),
            "carrier": Data(["electron", "hole"], "1", ("carrier",), "carrier kind"),
            "fermi_level_eV": Data(-0.25, "eV", (), "channel Fermi level"),
            "unnamed": Data(np.arange(4.0), "1"),
        },
        "current": {
            "gate_V": Data([1.0, 2.0, 3.0], "V", ("gate_V",)),
            "current_A_cm2": Data([1e-12, 1e-9, 1e-6], "A/cm^2", ("gate_V",), "Tsu–Esaki current"),
        },
    }


def test_write_run_layout_read_back(tmp_path):
    path = write_run(tmp_path / "run.h5", case_text='title = "t"\n', command="tunnelstack bands c.toml",
                     groups=_groups(), attrs={"gate_V": 2.0})
    r = read_run(path)
    a = r["attrs"]
    assert a["format"] == "tunnelstack" and a["kind"] == "run"
    assert a["case_text"] == 'title = "t"\n' and a["command"] == "tunnelstack bands c.toml"
    assert a["gate_V"] == 2.0
    from solver import __version__

    assert a["tool_version"] == __version__
    assert a["numpy_version"] == np.__version__ and a["created_utc"].endswith("Z")
    for key in ("scipy_version", "numba_version", "h5py_version"):
        assert a[key]
    bands = r["groups"]["bands"]
    assert_array_equal(bands["potential_V"].values, 0.1 * np.linspace(0.0, 20.0, 11))
    assert bands["potential_V"].units == "V" and bands["potential_V"].dims == ("x_nm",)
    assert bands["potential_V"].description == "electrostatic potential"
    assert bands["density_cm3"].dims == ("carrier", "x_nm")
    assert list(bands["carrier"].values) == ["electron", "hole"]
    assert float(bands["fermi_level_eV"].values) == -0.25
    assert bands["unnamed"].dims == ("unnamed_index",)
    assert not [p for p in tmp_path.iterdir() if p.name != "run.h5"]  # no temp file left


def test_dimension_scales_plain_h5py(tmp_path):
    path = write_run(tmp_path / "run.h5", case_text="", command="", groups=_groups())
    with h5py.File(path, "r") as f:
        ds = f["bands/density_cm3"]
        assert ds.attrs["units"] == "cm^-3"
        assert [d.label or list(d.keys())[0] for d in ds.dims] == ["carrier", "x_nm"]
        assert ds.dims[1][0].name == "/bands/x_nm"
        assert h5py.h5ds.is_scale(f["bands/x_nm"].id)
        assert_array_equal(ds.dims[1][0][...], np.linspace(0.0, 20.0, 11))


def test_xarray_opens_groups_with_named_dims_and_units(tmp_path):
    path = write_run(tmp_path / "run.h5", case_text="", command="", groups=_groups())
    with xr.open_dataset(path, engine="h5netcdf", group="bands") as ds:
        assert ds["density_cm3"].dims == ("carrier", "x_nm")
        assert ds["potential_V"].attrs["units"] == "V"
        assert ds["x_nm"].attrs["units"] == "nm"
        assert "x_nm" in ds.coords
        assert_array_equal(ds["potential_V"].values, 0.1 * ds["x_nm"].values)
    with xr.open_dataset(path, engine="h5netcdf", group="current") as ds:
        assert ds["current_A_cm2"].dims == ("gate_V",)
        assert ds["current_A_cm2"].attrs["units"] == "A/cm^2"


def test_bad_dims_named(tmp_path):
    with pytest.raises(ValueError, match=r"/bands/p: 2-D values with dims \('x',\)"):
        write_run(tmp_path / "r.h5", case_text="", command="",
                  groups={"bands": {"p": Data(np.zeros((2, 3)), "V", ("x",))}})
    with pytest.raises(ValueError, match=r"axis 'x' has length 4, elsewhere in the group 3"):
        write_run(tmp_path / "r.h5", case_text="", command="",
                  groups={"bands": {"a": Data(np.zeros(3), "V", ("x",)), "b": Data(np.zeros(4), "V", ("x",))}})
    assert not list(tmp_path.iterdir())


def test_overwrites_own_run_but_never_a_foreign_file(tmp_path):
    path = tmp_path / "run.h5"
    write_run(path, case_text="first", command="", groups=_groups())
    write_run(path, case_text="second", command="", groups={})
    assert read_run(path)["attrs"]["case_text"] == "second"

    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as f:
        f["x"] = np.arange(3)
    before = foreign.read_bytes()
    with pytest.raises(StoreError, match=r"foreign.h5: HDF5 file not written by tunnelstack.*refusing to overwrite"):
        write_run(foreign, case_text="", command="", groups={})
    assert foreign.read_bytes() == before

    text = tmp_path / "notes.h5"
    text.write_text("not hdf5")
    with pytest.raises(StoreError, match=r"notes.h5: not an HDF5 file"):
        write_run(text, case_text="", command="", groups={})
    assert text.read_text() == "not hdf5"


@pytest.mark.parametrize("damage", ["truncated", "zeroed_head", "empty"])
def test_corrupt_files_clear_error_never_overwritten(tmp_path, damage):
    path = write_run(tmp_path / "run.h5", case_text="", command="", groups=_groups())
    raw = path.read_bytes()
    if damage == "truncated":
        raw = raw[: len(raw) // 2]
    elif damage == "zeroed_head":
        raw = b"\0" * 64 + raw[64:]
    else:
        raw = b""
    path.write_bytes(raw)
    with pytest.raises(StoreError) as info:
        read_run(path)
    msg = str(info.value)
    assert str(path) in msg and "\n" not in msg
    assert any(w in msg for w in ("truncated", "corrupt", "empty", "not an HDF5"))
    assert isinstance(info.value, CaseError)
    with pytest.raises(StoreError, match="refusing to overwrite"):
        write_run(path, case_text="", command="", groups={})
    assert path.read_bytes() == raw


def test_missing_file(tmp_path):
    with pytest.raises(StoreError, match=r"nothere.h5: no such file"):
        read_run(tmp_path / "nothere.h5")


def test_lock_excludes_second_writer_and_takes_over_stale(tmp_path):
    target = tmp_path / "s.h5"
    notes = []
    with StudyLock(target, notice=notes.append):
        info = json.loads((tmp_path / "s.h5.lock").read_text())
        assert info["pid"] == os.getpid()
        with pytest.raises(StoreError, match=r"another study \(pid \d+"):
            StudyLock(target).acquire()
    assert not (tmp_path / "s.h5.lock").exists()

    # a lock left by a process that has exited (same host)
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    import socket

    (tmp_path / "s.h5.lock").write_text(json.dumps({"pid": int(dead.stdout), "host": socket.gethostname()}))
    with StudyLock(target, notice=notes.append):
        pass
    assert any("stale lock" in n for n in notes)

    (tmp_path / "s.h5.lock").write_text(json.dumps({"pid": 1, "host": "elsewhere.invalid"}))
    with pytest.raises(StoreError, match=r"locked by pid 1 on host 'elsewhere.invalid'"):
        StudyLock(target).acquire()


def test_run_file_commands(tmp_path, capsys):
    from cli.main import main

    path = write_run(tmp_path / "run.h5", case_text='title = "demo stack"\n', command="tunnelstack bands x",
                     groups=_groups())
    assert main(["show", str(path)]) == 0
    out = capsys.readouterr().out
    assert "tunnelstack run" in out and "case: demo stack" in out and "[bands]" in out
    assert "density_cm3" in out and "carrier[2] x x_nm[11]" in out

    assert main(["export", str(path), "--csv", str(tmp_path / "out.csv")]) == 0
    lines = (tmp_path / "out-current-gate_V.csv").read_text().splitlines()
    assert lines[2] == "gate_V,current_A_cm2" and lines[3] == "1.0,1e-12"
    scalars = (tmp_path / "out-bands.csv").read_text()
    assert "fermi_level_eV,-0.25,eV,channel Fermi level" in scalars
    assert "# not in these tables (arrays of 2 or more axes; read the HDF5 file): density_cm3" in scalars
    assert main(["export", str(path), "--csv", str(tmp_path / "out.csv"), "--profiles"]) == 2
    assert "--profiles: " in capsys.readouterr().err

    assert main(["plot", str(path), "--output-dir", str(tmp_path / "figs")]) == 0
    names = sorted(p.name for p in (tmp_path / "figs").iterdir())
    assert "run-current-current_A_cm2.png" in names and "run-bands-potential_V.png" in names
    assert main(["plot", str(path), "--quantity", "curent_A_cm2"]) == 2
    assert "Did you mean 'current_A_cm2'" in capsys.readouterr().err

    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w"):
        pass
    assert main(["show", str(foreign)]) == 2
    assert "not written by tunnelstack" in capsys.readouterr().err
