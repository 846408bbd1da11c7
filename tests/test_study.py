"""Parameter studies: plans, failing points, resume after SIGKILL and Ctrl-C,
identical results on every executor, the study file as xarray sees it, and the
study commands.

The point computations here are cheap closed forms registered by this module
(so the tests do not wait for a solve): the parallel-plate capacitance
C = eps0 eps_r / t (Sze & Ng, Physics of Semiconductor Devices, 3rd ed.,
Sec. 4.2, the oxide capacitance C_ox = eps_ox / d) with eps0 from
scipy.constants, and the uniform field F = V / t across the layer.
"""
from __future__ import annotations

import math
import os
import signal
import subprocess
import sys
import textwrap
import time
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal
from scipy.constants import epsilon_0

from solver.errors import CaseError
from solver.executors import ProcessExecutor, SerialExecutor
from solver.store import StoreError, open_study, read_study
from solver.study import (Output, PointOutcome, StudyInterrupted, key_units, plan_study,
                          register_computation, run_study)

ROOT = Path(__file__).resolve().parents[1]
THICK = "layers.tunnel.thickness_nm"
GATE = "bias.gate_V"


# ---------------------------------------------------------------------------
# a stand-in case with the Case interface a study uses (value_at, with_value,
# study, text, source); picklable, no solver modules needed


@dataclass(frozen=True)
class Axis:
    key: str
    values: tuple
    spacing: str = "list"


@dataclass(frozen=True)
class Spec:
    axes: tuple
    mode: str = "grid"
    compute: str = "test-plate"
    keep_profiles: bool = False
    outputs: tuple = ()


@dataclass(frozen=True)
class PlateCase:
    params: tuple = ((THICK, 4.0), (GATE, 1.0), ("materials.SiO2.relative_permittivity", 3.9))
    study: Spec | None = None
    text: str = "plate case"
    source: str = "<test>"

    def value_at(self, key):
        d = dict(self.params)
        if key not in d:
            raise CaseError(f"{key}: unknown key")
        return d[key]

    def with_value(self, key, value):
        self.value_at(key)
        if key == THICK and not value > 0:
            raise CaseError(f"{key}: must be > 0 nm, got {value:g}")
        d = dict(self.params)
        d[key] = float(value)
        return replace(self, params=tuple(d.items()))


def plate_point(case):
    t_nm = case.value_at(THICK)
    v = case.value_at(GATE)
    if v > 5.0:
        raise ValueError(f"gate_V = {v:g} is beyond this test's range")
    eps = case.value_at("materials.SiO2.relative_permittivity")
    n = int(round(t_nm * 4)) + 1
    return {
        "capacitance_F_m2": epsilon_0 * eps / (t_nm * 1e-9),
        "field_V_nm": v / t_nm,
        "x_nm": np.linspace(0.0, t_nm, n),
        "u_eV": -v * np.linspace(0.0, 1.0, n),
    }


def slow_plate_point(case):
    time.sleep(0.05)
    return plate_point(case)


WARM_DIR_ENV = "TUNNELSTACK_TEST_WARM_DIR"


def record_warm_up():
    """Writes one file per warm-up call, named by the worker's pid."""
    directory = os.environ.get(WARM_DIR_ENV)
    if directory:
        with open(os.path.join(directory, f"{os.getpid()}-{time.monotonic_ns()}"), "w"):
            pass


_OUTPUTS = {
    "capacitance_F_m2": Output("F/m^2", "parallel-plate capacitance"),
    "field_V_nm": Output("V/nm", "uniform field"),
    "x_nm": Output("nm", "positions", ("node",), profile=True),
    "u_eV": Output("eV", "potential energy", ("node",), profile=True),
}
register_computation("test-plate", plate_point, _OUTPUTS, warm_up=record_warm_up, replace=True)
register_computation("test-slow", slow_plate_point, _OUTPUTS, replace=True)


def real_case_slow_point(case):
    """For the command-line tests on a real case file."""
    time.sleep(0.05)
    t_nm = case.layers[case.layer_index("tunnel")].thickness_nm
    return {"capacitance_F_m2": epsilon_0 * 3.9 / (t_nm * 1e-9), "field_V_nm": case.bias.gate_V / t_nm,
            "x_nm": np.zeros(1), "u_eV": np.zeros(1)}


register_computation("test-real-slow", real_case_slow_point, _OUTPUTS, replace=True)


def grid_case(thick=(3.0, 4.0, 5.0, 6.0), gate=(1.0, 2.0, 6.0), **kw):
    return PlateCase(study=Spec((Axis(THICK, tuple(thick)), Axis(GATE, tuple(gate))), **kw))


def run_file(path, case, executor=None, **kw):
    plan = plan_study(case)
    with open_study(path, plan, case_text=case.text, command="test", **kw) as sink:
        return run_study(plan, sink, executor=executor)


def arrays(path):
    """Everything of a study file that must not depend on how it was run."""
    d = read_study(path)
    out = {"completed": d.completed, "failed": d.failed, "error_type": d.error_type,
           "error_message": d.error_message}
    out.update({n: v.values for n, v in d.outputs.items()})
    out.update({n: v.values for n, v in d.profiles.items()})
    out.update({f"{k}_length": v for k, v in d.lengths.items()})
    return out


def assert_same(a, b):
    assert a.keys() == b.keys()
    for k in a:
        assert_array_equal(a[k], b[k], err_msg=k)


# ---------------------------------------------------------------------------
# plans


def test_plan_grid_and_zip_points():
    plan = plan_study(grid_case())
    assert plan.shape == (4, 3) and plan.n_points == 12 and plan.dims == (THICK, GATE)
    assert plan.assignments(0) == ((THICK, 3.0), (GATE, 1.0))
    assert plan.assignments(5) == ((THICK, 4.0), (GATE, 6.0))  # C order, last axis fastest
    assert set(plan.outputs) == {"capacitance_F_m2", "field_V_nm"}  # profiles only on request
    z = plan_study(PlateCase(study=Spec((Axis(THICK, (3.0, 4.0)), Axis(GATE, (1.0, 2.0))), mode="zip")))
    assert z.shape == (2,) and z.dims == ("point",)
    assert z.assignments(1) == ((THICK, 4.0), (GATE, 2.0))
    assert set(plan_study(grid_case(outputs=("x_nm",))).outputs) == {"capacitance_F_m2", "field_V_nm", "x_nm"}
    assert len(plan_study(grid_case(keep_profiles=True)).outputs) == 4


@pytest.mark.parametrize("spec, message", [
    (Spec((Axis("layers.tunel.thickness_nm", (1.0,)),)), r"study.axis\[0\].key: layers.tunel.thickness_nm: unknown key"),
    (Spec((Axis(THICK, ()),)), r"study.axis\[0\] \(layers.tunnel.thickness_nm\): no values \(empty range\)"),
    (Spec((Axis(THICK, (3.0, -1.0)),)), r"study.axis\[0\] \(layers.tunnel.thickness_nm = -1\): .*must be > 0"),
    (Spec((Axis(THICK, (3.0, float("nan"))),)), r"not a finite number"),
    (Spec((Axis(THICK, (1.0,)), Axis(THICK, (2.0,)))), r"study.axis\[1\].key: .* appears twice"),
    (Spec((Axis(THICK, (1.0, 2.0)), Axis(GATE, (1.0,))), mode="zip"), r'"zip" needs axes of equal length'),
    (Spec((Axis(THICK, (1.0,)),), compute="test-plat"), r"unknown computation 'test-plat'.*Did you mean 'test-plate'"),
    (Spec((Axis(THICK, (1.0,)),), outputs=("x_mn",)), r"'x_mn' is not an output of 'test-plate'.*Did you mean 'x_nm'"),
])
def test_bad_axes_rejected_up_front(spec, message):
    with pytest.raises(CaseError, match=message):
        plan_study(PlateCase(study=spec))


def test_no_study_section():
    with pytest.raises(CaseError, match=r"study: the case has no \[study\] section"):
        plan_study(PlateCase())


def test_key_units():
    # units are carried in the key names (DEVELOPERS.md conventions)
    assert key_units(THICK) == "nm" and key_units(GATE) == "V" and key_units("temperature_K") == "K"
    assert key_units("channel.acceptors_cm3") == "cm^-3" and key_units("layers.trap.charge_cm2") == "cm^-2"
    assert key_units("materials.SiO2.electron_mass") == "m0"
    assert key_units("materials.SiO2.relative_permittivity") == "1"


# ---------------------------------------------------------------------------
# running, failing points, resume, restart


def test_serial_study_closed_form_and_failing_points(tmp_path):
    path = tmp_path / "s.h5"
    summary = run_file(path, grid_case())
    assert (summary.total, summary.finished, summary.failed, summary.computed) == (12, 12, 4, 12)
    d = read_study(path)
    t = np.array([3.0, 4.0, 5.0, 6.0])[:, None]
    v = np.array([1.0, 2.0, 6.0])[None, :]
    ok = np.broadcast_to(v <= 5.0, (4, 3))
    # parallel-plate capacitance eps0 eps_r / t (Sze & Ng 2007, Sec. 4.2); scipy.constants eps0
    expected_c = np.where(ok, epsilon_0 * 3.9 / (t * 1e-9), np.nan)
    assert_allclose(d.outputs["capacitance_F_m2"].values, expected_c, rtol=1e-15)
    assert_allclose(d.outputs["field_V_nm"].values, np.where(ok, v / t, np.nan), rtol=1e-15)
    assert d.completed.all()
    assert_array_equal(d.failed, ~ok)
    assert set(d.error_type[~ok]) == {"ValueError"}
    assert set(d.error_message[~ok]) == {"gate_V = 6 is beyond this test's range"}
    assert set(d.error_message[ok]) == {""}
    assert d.outputs["capacitance_F_m2"].units == "F/m^2"
    assert np.all(d.elapsed_s >= 0)


def test_resume_computes_nothing_twice_and_changed_case_refused(tmp_path):
    path = tmp_path / "s.h5"
    case = grid_case()
    first = run_file(path, case)
    again = run_file(path, case)
    assert again.computed == 0 and again.skipped == 12 and again.finished == 12
    retried = plan_study(case)
    with open_study(path, retried, case_text=case.text, command="test") as sink:
        assert run_study(retried, sink, retry_failed=True).computed == first.failed

    changed = replace(case, text="plate case, edited")
    with pytest.raises(StoreError, match=r"s.h5: holds a study of a different case or study spec "
                                         r"\(12 finished points\); use --restart"):
        run_file(path, changed)
    restarted = run_file(path, changed, restart=True)
    assert restarted.computed == 12
    assert not (tmp_path / "s.h5.lock").exists()


def test_profiles_grow_without_losing_points(tmp_path):
    # 3 nm -> 13 nodes first, then longer profiles: the file is rebuilt with more room
    path = tmp_path / "p.h5"
    run_file(path, grid_case(thick=(3.0, 9.0, 30.0), gate=(1.0,), keep_profiles=True))
    d = read_study(path)
    lengths = d.lengths["node"][:, 0]
    assert_array_equal(lengths, [13, 37, 121])
    x = d.profiles["x_nm"].values
    for i, t in enumerate((3.0, 9.0, 30.0)):
        n = lengths[i]
        assert_allclose(x[i, 0, :n], np.linspace(0.0, t, n), rtol=0, atol=1e-15)
        assert np.isnan(x[i, 0, n:]).all()
    assert_allclose(d.outputs["capacitance_F_m2"].values[:, 0],
                    epsilon_0 * 3.9 / (np.array([3.0, 9.0, 30.0]) * 1e-9), rtol=1e-15)


def test_study_file_in_xarray(tmp_path):
    xr = pytest.importorskip("xarray")
    pytest.importorskip("h5netcdf")
    path = tmp_path / "s.h5"
    run_file(path, grid_case(keep_profiles=True))
    with xr.open_dataset(path, engine="h5netcdf", group="study") as ds:
        c = ds["capacitance_F_m2"]
        assert c.dims == (THICK, GATE)
        assert c.attrs["units"] == "F/m^2"
        assert ds[THICK].attrs["units"] == "nm" and ds[GATE].attrs["units"] == "V"
        assert_array_equal(ds[THICK].values, [3.0, 4.0, 5.0, 6.0])
        assert ds["u_eV"].dims == (THICK, GATE, "node")
        sel = c.sel({THICK: 4.0, GATE: 2.0}).item()
        assert sel == pytest.approx(epsilon_0 * 3.9 / 4e-9, rel=1e-15)
        assert int(ds["completed"].sum()) == 12
        assert str(ds["error_message"].values[0, 2]) == "gate_V = 6 is beyond this test's range"
    zpath = tmp_path / "z.h5"
    zcase = PlateCase(study=Spec((Axis(THICK, (3.0, 4.0)), Axis(GATE, (1.0, 2.0))), mode="zip"))
    run_file(zpath, zcase)
    with xr.open_dataset(zpath, engine="h5netcdf", group="study") as ds:
        assert ds["field_V_nm"].dims == ("point",)
        assert THICK in ds.coords and GATE in ds.coords
        assert_allclose(ds["field_V_nm"].values, [1 / 3, 2 / 4])


def test_corrupt_study_file_refused_even_with_restart(tmp_path):
    path = tmp_path / "s.h5"
    run_file(path, grid_case())
    raw = path.read_bytes()[:3000]
    path.write_bytes(raw)
    for restart in (False, True):
        with pytest.raises(StoreError, match=r"s.h5: .*(truncated|corrupt).*refusing to overwrite"):
            run_file(path, grid_case(), restart=restart)
    assert path.read_bytes() == raw
    with pytest.raises(StoreError, match="truncated or corrupt"):
        read_study(path)


# ---------------------------------------------------------------------------
# executors give identical results


def test_process_pool_identical_and_warm_up_once_per_worker(tmp_path, monkeypatch):
    warm = tmp_path / "warm"
    warm.mkdir()
    monkeypatch.setenv(WARM_DIR_ENV, str(warm))
    case = grid_case(thick=tuple(np.linspace(2.0, 8.0, 10)), keep_profiles=True)
    run_file(tmp_path / "serial.h5", case, executor=SerialExecutor())
    with ProcessExecutor(workers=2, warm_ups=(record_warm_up,)) as ex:
        summary = run_file(tmp_path / "pool.h5", case, executor=ex)
    assert summary.computed == 30
    assert_same(arrays(tmp_path / "serial.h5"), arrays(tmp_path / "pool.h5"))
    pids = [p.name.split("-")[0] for p in warm.iterdir()]
    serial_pid = str(os.getpid())
    pool_pids = [p for p in pids if p != serial_pid]
    assert len(pool_pids) == len(set(pool_pids)) <= 2  # once per worker, not per point


def test_dask_identical_local_cluster_and_scheduler_address(tmp_path, monkeypatch):
    distributed = pytest.importorskip("distributed")
    from solver.executors import DaskExecutor

    warm = tmp_path / "warm"
    warm.mkdir()
    monkeypatch.setenv(WARM_DIR_ENV, str(warm))
    case = grid_case(keep_profiles=True)
    run_file(tmp_path / "serial.h5", case)
    with DaskExecutor(workers=2, warm_ups=(record_warm_up,)) as ex:
        summary = run_file(tmp_path / "dask.h5", case, executor=ex)
    assert summary.computed == 12 and summary.failed == 4
    assert_same(arrays(tmp_path / "serial.h5"), arrays(tmp_path / "dask.h5"))
    workers = [p for p in warm.iterdir() if not p.name.startswith(f"{os.getpid()}-")]
    assert len(workers) == 2  # once on each of the two workers (not per point)
    # a scheduler given by its address, listening on loopback only
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None, silence_logs=50) as cluster:
        assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
        with DaskExecutor(address=cluster.scheduler_address) as ex:
            run_file(tmp_path / "remote.h5", case, executor=ex)
    assert_same(arrays(tmp_path / "serial.h5"), arrays(tmp_path / "remote.h5"))


def test_dask_unreachable_scheduler_is_a_clear_error():
    pytest.importorskip("distributed")
    from solver.executors import DaskExecutor

    with pytest.raises(CaseError, match=r"--scheduler tcp://127.0.0.1:9: cannot reach a Dask scheduler"):
        DaskExecutor(address="tcp://127.0.0.1:9", timeout_s=1.0)


# ---------------------------------------------------------------------------
# SIGKILL and Ctrl-C


_KILL_DRIVER = textwrap.dedent("""
    import os, signal, sys
    import numpy as np
    from tests.test_study import grid_case, run_file
    import solver.store as store

    mode, path, at = sys.argv[1], sys.argv[2], int(sys.argv[3])
    writes = {"n": 0}

    class KillOnWrite:
        # a dataset stand-in that kills the process when point `at` writes it
        def __init__(self, ds, when):
            self.ds, self.when = ds, when
        def __getattr__(self, name):
            return getattr(self.ds, name)
        def __setitem__(self, idx, value):
            if writes["n"] == at and self.when == "now":
                os.kill(os.getpid(), signal.SIGKILL)
            self.ds[idx] = value

    original_write = store.StudyStore.write
    def write(self, outcome):
        if mode == "before_mask":      # data written and flushed, mask not yet set
            self._completed = KillOnWrite(self._completed, "now")
        elif mode == "mid_data":       # killed among the output writes of the point
            self._ds["field_V_nm"] = KillOnWrite(self._ds["field_V_nm"], "now")
        try:
            original_write(self, outcome)
        finally:
            self._completed = getattr(self._completed, "ds", self._completed)
            self._ds = {k: getattr(v, "ds", v) for k, v in self._ds.items()}
        writes["n"] += 1

    store.StudyStore.write = write
    case = grid_case(thick=tuple(np.linspace(2.0, 8.0, 8)), keep_profiles=True,
                     compute=("test-slow" if mode == "timed" else "test-plate"))
    run_file(path, case)
""")


def _driver(tmp_path, mode, path, at):
    script = tmp_path / "driver.py"
    script.write_text(_KILL_DRIVER)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.Popen([sys.executable, str(script), mode, str(path), str(at)], cwd=ROOT, env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def _completed_count(path) -> int:
    try:
        return int(read_study(path).completed.sum())
    except (StoreError, OSError):
        return 0


@pytest.mark.parametrize("mode, at", [("before_mask", 5), ("mid_data", 10), ("timed", 0)])
def test_sigkill_then_resume_equals_uninterrupted_run(tmp_path, mode, at):
    compute = "test-slow" if mode == "timed" else "test-plate"
    case = grid_case(thick=tuple(np.linspace(2.0, 8.0, 8)), keep_profiles=True, compute=compute)
    path = tmp_path / "killed.h5"
    proc = _driver(tmp_path, mode, path, at)
    if mode == "timed":
        deadline = time.monotonic() + 60
        while _completed_count(path) < 6 and time.monotonic() < deadline and proc.poll() is None:
            time.sleep(0.02)
        os.kill(proc.pid, signal.SIGKILL)
    proc.communicate(timeout=60)
    assert proc.returncode == -signal.SIGKILL
    done_before = _completed_count(path)
    assert 0 < done_before < 24
    if mode != "timed":
        assert done_before == at  # the point being written when killed is not marked done
    # a SIGKILL leaves the lock behind: the next run takes it over
    assert (tmp_path / "killed.h5.lock").exists()
    resumed = run_file(path, case)
    assert resumed.computed == 24 - done_before  # nothing finished is computed again
    assert resumed.finished == 24
    run_file(tmp_path / "reference.h5", case)
    assert_same(arrays(path), arrays(tmp_path / "reference.h5"))


def test_interrupted_run_saves_finished_points(tmp_path):
    """Ctrl-C in the serial executor: StudyInterrupted, what finished is kept."""
    case = grid_case(compute="test-slow")
    plan = plan_study(case)
    calls = {"n": 0}

    class Interrupting:
        def __init__(self, sink):
            self.sink = sink

        def __getattr__(self, name):
            return getattr(self.sink, name)

        def write(self, outcome):
            self.sink.write(outcome)
            calls["n"] += 1
            if calls["n"] == 4:
                raise KeyboardInterrupt

    with open_study(tmp_path / "s.h5", plan, case_text=case.text, command="test") as sink:
        with pytest.raises(StudyInterrupted) as info:
            run_study(plan, Interrupting(sink), notice=lambda text: None)
    assert info.value.summary.finished == 4 and info.value.summary.interrupted
    assert _completed_count(tmp_path / "s.h5") == 4
    assert run_file(tmp_path / "s.h5", case).computed == 8


def test_executor_failure_stops_with_saved_points(tmp_path):
    class Broken(SerialExecutor):
        n = 0

        def submit(self, fn, *args):
            self.n += 1
            if self.n == 3:
                import concurrent.futures as cf

                f = cf.Future()
                f.set_exception(RuntimeError("worker lost"))
                return f
            return super().submit(fn, *args)

    from solver.errors import ComputationError

    with pytest.raises(ComputationError, match=r"executor failed at point 2 \(RuntimeError: worker lost\)"):
        run_file(tmp_path / "s.h5", grid_case(), executor=Broken())
    assert _completed_count(tmp_path / "s.h5") == 2


def test_point_outcome_of_bad_point_function():
    from solver.study import _case_payload, evaluate_point

    case = grid_case()
    payload = _case_payload(case)
    out = evaluate_point(lambda c: {"capacitance_F_m2": 1.0}, payload, 0, (), dict(_OUTPUTS))
    assert out.error_type == "ComputationError" and "no output 'field_V_nm'" in out.error_message
    out = evaluate_point(lambda c: 3.0, payload, 0, (), {})
    assert "expected a dict of outputs" in out.error_message
    assert isinstance(out, PointOutcome) and not out.ok


# ---------------------------------------------------------------------------
# the commands, on a real case file


REAL_CASE = """\
title = "study test cell"
[gate]
material = "TaN"
[[layers]]
name = "blocking"
material = "Al2O3"
thickness_nm = 10.0
[[layers]]
name = "tunnel"
material = "SiO2"
thickness_nm = 4.0
[channel]
material = "Si"
acceptors_cm3 = 1e17
[bias]
gate_V = 1.0
[study]
compute = "stack"
[[study.axis]]
key = "layers.tunnel.thickness_nm"
start = 2.0
stop = 8.0
count = 13
[[study.axis]]
key = "bias.gate_V"
values = [1.0, 2.0]
"""


def _cli(*argv, timeout=120, **kw):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    env.pop("CI", None)
    return subprocess.run([sys.executable, "-m", "cli", *argv], cwd=ROOT, env=env, capture_output=True,
                          text=True, timeout=timeout, **kw)


def test_cli_study_show_export_plot(tmp_path, capsys):
    pytest.importorskip("solver.case")
    from cli.main import main

    case_path = tmp_path / "cell.toml"
    case_path.write_text(REAL_CASE)
    out = tmp_path / "cell.h5"
    (tmp_path / ".cell.h5.abc123.tmp").write_bytes(b"left by a killed writer")
    assert main(["study", str(case_path), "--output", str(out), "--workers", "1"]) == 0
    assert "26/26 points finished, 0 failed" in capsys.readouterr().out
    assert not (tmp_path / ".cell.h5.abc123.tmp").exists()
    assert main(["study", str(case_path), "--output", str(out), "--workers", "1"]) == 0
    assert "already finished" in capsys.readouterr().out
    assert main(["show", str(out)]) == 0
    shown = capsys.readouterr().out
    assert "completion: 26/26 points finished (100.0 %), 0 failed, 0 pending" in shown
    assert "layers.tunnel.thickness_nm" in shown and "eot_nm" in shown
    assert main(["export", str(out), "--csv"]) == 0
    lines = (tmp_path / "cell.csv").read_text().splitlines()
    assert lines[0].startswith("# tunnelstack study")
    header = [ln for ln in lines if not ln.startswith("#")][0].split(",")
    assert header[:3] == ["layers.tunnel.thickness_nm", "bias.gate_V", "status"]
    assert len([ln for ln in lines if not ln.startswith("#")]) == 27
    assert main(["plot", str(out), "--output-dir", str(tmp_path / "figs"), "--quantity", "eot_nm"]) == 0
    assert (tmp_path / "figs" / "cell-eot_nm-map.png").stat().st_size > 1000
    capsys.readouterr()

    case_path.write_text(REAL_CASE.replace("count = 13", "count = 7"))
    r = _cli("study", str(case_path), "--output", str(out), "--workers", "1")
    assert r.returncode == 2 and "use --restart" in r.stderr and "Traceback" not in r.stderr
    assert main(["show", str(tmp_path / "missing.h5")]) == 2
    assert "missing.h5: no such file" in capsys.readouterr().err


def test_cli_ctrl_c_then_resume(tmp_path):
    pytest.importorskip("solver.case")
    case_path = tmp_path / "cell.toml"
    case_path.write_text(REAL_CASE)
    out = tmp_path / "cell.h5"
    argv = ["study", str(case_path), "--output", str(out), "--workers", "2",
            "--compute", "test-real-slow", "--plugin", "tests.test_study"]
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen([sys.executable, "-m", "cli", *argv], cwd=ROOT, env=env, text=True,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True)
    deadline = time.monotonic() + 60
    while _completed_count(out) < 4 and time.monotonic() < deadline and proc.poll() is None:
        time.sleep(0.02)
    os.killpg(proc.pid, signal.SIGINT)  # as a terminal does: the whole process group
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err
    assert "run the same command again to resume" in err and "Traceback" not in err
    saved = _completed_count(out)
    assert 4 <= saved < 26
    assert not (tmp_path / "cell.h5.lock").exists()
    r = _cli(*argv[:4], "--workers", "1", "--compute", "test-real-slow", "--plugin", "tests.test_study")
    assert r.returncode == 0, r.stderr
    assert f"computed {26 - saved} in" in r.stdout
    d = read_study(out)
    t = np.repeat(np.linspace(2.0, 8.0, 13)[:, None], 2, axis=1)
    # C = eps0 * 3.9 / t (Sze & Ng 2007, Sec. 4.2)
    assert_allclose(d.outputs["capacitance_F_m2"].values, epsilon_0 * 3.9 / (t * 1e-9), rtol=1e-15)
    assert math.isclose(float(d.outputs["field_V_nm"].values[0, 1]), 2.0 / 2.0)


def plate_sizes(case):
    return {"node": int(round(case.value_at(THICK) * 4)) + 1}


register_computation("test-plate-sized", plate_point, _OUTPUTS, sizes=plate_sizes, replace=True)


def test_sizes_hook_reserves_room_up_front(tmp_path):
    case = grid_case(thick=(3.0, 9.0, 30.0), gate=(1.0,), keep_profiles=True, compute="test-plate-sized")
    plan = plan_study(case)
    assert dict(plan.profile_reserves) == {"node": 121}
    run_file(tmp_path / "s.h5", case)
    d = read_study(tmp_path / "s.h5")
    assert d.profiles["x_nm"].values.shape == (3, 1, 121)
    assert_array_equal(d.lengths["node"][:, 0], [13, 37, 121])


def test_show_plot_export_of_study_with_failures(tmp_path, capsys):
    from cli.main import main

    path = tmp_path / "s.h5"
    run_file(path, grid_case(keep_profiles=True))
    assert main(["show", str(path)]) == 0
    out = capsys.readouterr().out
    assert "completion: 12/12 points finished (100.0 %), 4 failed, 0 pending" in out
    assert "layers.tunnel.thickness_nm = 3, bias.gate_V = 6: ValueError: gate_V = 6 is beyond" in out
    assert "x_nm" in out and "profile over node" in out

    assert main(["export", str(path), "--csv", str(tmp_path / "s.csv")]) == 0
    rows = [ln for ln in (tmp_path / "s.csv").read_text().splitlines() if not ln.startswith("#")]
    assert rows[0].split(",")[:5] == [THICK, GATE, "status", "capacitance_F_m2", "field_V_nm"]
    assert rows[3].split(",")[2] == "failed" and rows[3].endswith("ValueError,gate_V = 6 is beyond this test's range")
    assert rows[1].split(",")[2] == "done" and float(rows[1].split(",")[4]) == pytest.approx(1 / 3)

    assert main(["export", str(path), "--csv", str(tmp_path / "s.csv"), "--profiles"]) == 0
    long = [ln for ln in (tmp_path / "s-node.csv").read_text().splitlines() if not ln.startswith("#")]
    assert long[0] == f"{THICK},{GATE},node,u_eV,x_nm"
    assert len(long) == 1 + 2 * (13 + 17 + 21 + 25)  # finished points x their profile lengths
    assert long[1] == "3.0,1.0,0,-0.0,0.0" and long[13].startswith("3.0,1.0,12,") and long[13].endswith(",3.0")

    figs = tmp_path / "figs"
    assert main(["plot", str(path), "--output-dir", str(figs), "--over", THICK]) == 0
    assert main(["plot", str(path), "--output-dir", str(figs), "--quantity", "u_eV"]) == 0
    names = {p.name for p in figs.iterdir()}
    assert {"s-capacitance_F_m2-map.png", f"s-field_V_nm-over-{THICK}.png", "s-u_eV-profiles.png"} <= names
    assert main(["plot", str(path), "--quantity", "field_nm"]) == 2
    assert "Did you mean 'field_V_nm'" in capsys.readouterr().err
    # --over names one of the two drawn axes; --at only a further axis (none in a 2-axis grid)
    assert main(["plot", str(path), "--output-dir", str(figs), "--over", "temperature_K"]) == 2
    assert f"allowed: {THICK}, {GATE}" in capsys.readouterr().err
    assert main(["plot", str(path), "--output-dir", str(figs), "--at", f"{GATE}=1"]) == 2
    assert "allowed: none" in capsys.readouterr().err

    zpath = tmp_path / "z.h5"
    run_file(zpath, PlateCase(study=Spec((Axis(GATE, (1e-3, 1e-2, 1e-1, 1.0), "log"),))))
    assert main(["plot", str(zpath), "--output-dir", str(figs), "--quantity", "field_V_nm"]) == 0
    assert (figs / "z-field_V_nm.png").exists()


def test_progress_line_on_a_terminal_only(monkeypatch):
    import io

    from solver.study import Progress

    class Tty(io.StringIO):
        def isatty(self):
            return True

    monkeypatch.delenv("CI", raising=False)
    tty = Tty()
    p = Progress(10, done_before=2, stream=tty, min_interval_s=0.0)
    p.update(1, 0)
    time.sleep(0.02)
    p.update(3, 1)
    p.close(3, 1)
    text = tty.getvalue()
    assert text.startswith("\r3/10 points") and "5/10 points, 1 failed" in text and "ETA" in text
    assert text.endswith("\n")
    quiet = io.StringIO()  # not a terminal: nothing
    Progress(10, stream=quiet).update(1, 0, force=True)
    assert quiet.getvalue() == ""
    monkeypatch.setenv("CI", "true")
    tty = Tty()
    Progress(10, stream=tty).update(1, 0, force=True)
    assert tty.getvalue() == ""


def self_interrupting_point(case):
    """Presses Ctrl-C (SIGINT to its own process) while computing the 3 nm point."""
    if case.value_at(THICK) == 3.0 and case.value_at(GATE) == 2.0:
        os.kill(os.getpid(), signal.SIGINT)
    return plate_point(case)


register_computation("test-self-interrupt", self_interrupting_point, _OUTPUTS, replace=True)


def test_first_ctrl_c_finishes_the_running_point(tmp_path):
    case = grid_case(compute="test-self-interrupt")
    notes = []
    plan = plan_study(case)
    before = signal.getsignal(signal.SIGINT)  # default_int_handler, or SIG_IGN in a background job
    with open_study(tmp_path / "s.h5", plan, case_text=case.text, command="test") as sink:
        with pytest.raises(StudyInterrupted) as info:
            run_study(plan, sink, notice=notes.append)
    # points 0 and 1 done, point 1 (3 nm, 2 V) pressed Ctrl-C and still finished
    assert info.value.summary.finished == 2 and info.value.summary.computed == 2
    assert any("press Ctrl-C again to abandon" in n for n in notes)
    assert signal.getsignal(signal.SIGINT) is before  # handler given back
    d = read_study(tmp_path / "s.h5")
    assert d.completed.ravel()[:2].all() and not d.completed.ravel()[2:].any()
    assert d.outputs["field_V_nm"].values[0, 1] == 2.0 / 3.0


def test_point_writes_touch_raw_data_only(tmp_path):
    """The crash-safety argument of solver.store: once a study file exists, writing
    a point changes bytes inside the datasets' preallocated raw data only, never
    HDF5 metadata, and the file does not grow (so a SIGKILL cannot leave a
    half-updated B-tree or heap behind)."""
    import h5py

    case = grid_case(keep_profiles=True, compute="test-plate-sized")
    plan = plan_study(case)
    path = tmp_path / "s.h5"
    with open_study(path, plan, case_text=case.text, command="test"):
        pass
    before = np.frombuffer(path.read_bytes(), np.uint8)
    extents = []
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset) and obj.id.get_offset() is not None:
                extents.append((obj.id.get_offset(), obj.id.get_offset() + obj.id.get_storage_size()))
        f.visititems(visit)
    run_file(path, case)  # 8 points succeed, 4 fail with a message
    after = np.frombuffer(path.read_bytes(), np.uint8)
    assert after.size == before.size
    changed = np.flatnonzero(after != before)
    assert changed.size > 0
    inside = np.zeros(changed.size, bool)
    for lo, hi in extents:
        inside |= (changed >= lo) & (changed < hi)
    assert inside.all()


def test_editing_the_materials_file_makes_another_study(tmp_path):
    # the case's own materials file is an input like the case text: a study file
    # written before it was edited must not be resumed with the new values
    from solver.case import load_case

    (tmp_path / "ours.toml").write_text('[references]\nLabNotes = "our lab notebook, first entry"\n')
    case_path = tmp_path / "cell.toml"
    case_path.write_text('materials_file = "ours.toml"\n' + REAL_CASE)
    first = plan_study(load_case(case_path)).spec_hash
    assert plan_study(load_case(case_path)).spec_hash == first
    (tmp_path / "ours.toml").write_text('[references]\nLabNotes = "our lab notebook, second entry"\n')
    assert plan_study(load_case(case_path)).spec_hash != first


def plate_layers_point(case):
    out = plate_point(case)
    out["layer_field_V_nm"] = np.array([1.0, 2.0, 3.0]) * out["field_V_nm"]
    return out


register_computation("test-plate-layers", plate_layers_point,
                     dict(_OUTPUTS, layer_field_V_nm=Output("V/nm", "per-layer value", ("layer",))),
                     replace=True)


def test_per_layer_array_is_drawn_over_its_own_axis(tmp_path, monkeypatch):
    # a per-layer array must not borrow the node positions x_nm as its abscissa
    import solver.plots.study as plots

    path = tmp_path / "s.h5"
    run_file(path, grid_case(gate=(1.0, 2.0), keep_profiles=True, compute="test-plate-layers"))
    figures = []
    monkeypatch.setattr(plots, "save", lambda fig, p: figures.append(fig) or str(p))
    plots.plot_study(read_study(path), tmp_path, ["layer_field_V_nm", "u_eV"])
    layer_ax, node_ax = figures[0].axes[0], figures[1].axes[0]
    assert_array_equal(layer_ax.lines[0].get_xdata(), [0, 1, 2])
    assert layer_ax.get_xlabel() == "layer index"
    assert_allclose(node_ax.lines[0].get_xdata(), np.linspace(0.0, 3.0, 13))  # x_nm of the 3 nm point


def test_bands_point_ground_states_of_electrons_and_holes():
    # electron and hole subbands share the electron energy scale: the electron ground
    # state is the lowest electron subband, the hole ground state the highest hole
    # subband (hole energy = -electron energy; common practice). Accumulation of the
    # shipped p-type MOS capacitor quantizes holes only.
    from solver import solve
    from solver.case import load_case
    from solver.study import bands_point

    case = load_case(ROOT / "cases" / "mos-capacitor.toml").with_value(GATE, -2.0)
    out = bands_point(case)
    sol = solve(case, -2.0)
    hole = [e for label, e, _ in sol.subbands if "hole" in label]
    assert hole and math.isnan(out["lowest_subband_eV"])
    assert out["highest_hole_subband_eV"] == pytest.approx(max(hole), abs=1e-9) and max(hole) > min(hole)
    assert out["highest_hole_subband_eV"] < out["fermi_level_eV"]  # accumulated holes: below E_F
