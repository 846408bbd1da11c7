"""`tunnelstack cell`: files written, store layout, caution everywhere, bad input."""
from pathlib import Path

import numpy as np
import pytest

import cli.main
from cli.main import main
from solver.cell import CAUTION
from solver.store import read_run

SMALL = ["--ispp-count", "4", "--retention-years", "1"]


def test_cell_command_is_registered():
    assert "cmd_cell" in cli.main.COMMAND_MODULES


def test_writes_store_figures_and_table(tmp_path, capsys):
    out = tmp_path / "kestrel.h5"
    code = main(["cell", "cases/demo-cell.toml", "--output", str(out), *SMALL])
    assert code == 0
    text = capsys.readouterr().out
    assert "window" in text and "ISPP" in text and "slope" in text and CAUTION in text
    for name in ("transients", "ispp", "retention"):
        png = tmp_path / f"kestrel-{name}.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 10_000
    run = read_run(out)
    attrs = run["attrs"]
    assert attrs["caution"] == CAUTION
    assert "cell" in attrs["command"] and "Si3N4" in attrs["case_text"]
    g = run["groups"]
    assert g["program"]["threshold_V"].units == "V" and g["program"]["threshold_V"].dims == ("time_s",)
    assert g["program"]["current_channel_electrons_A_cm2"].units == "A/cm^2"
    assert np.asarray(g["ispp"]["threshold_V"].values).size == 4
    summary = g["cell"]
    window = float(summary["window_V"].values)
    assert window == pytest.approx(float(summary["programmed_threshold_V"].values)
                                   - float(summary["erased_threshold_V"].values))
    assert 0 < float(summary["window_after_V"].values) <= window
    import xarray

    with xarray.open_dataset(out, engine="h5netcdf", group="retention") as ds:
        assert ds["programmed_threshold_V"].dims == ("time_s",)
        assert ds["time_s"].attrs["units"] == "s"


def test_output_dir_and_quiet(tmp_path, capsys):
    code = main(["cell", "cases/demo-cell.toml", "--output-dir", str(tmp_path / "run"), "--quiet", *SMALL])
    assert code == 0
    assert capsys.readouterr().out == ""
    files = sorted(p.name for p in Path(tmp_path / "run").iterdir())
    assert files == ["cell.h5", "ispp.png", "retention.png", "transients.png"]


@pytest.mark.parametrize("argv, start", [
    (["cases/demo-cell.toml", "--pulse-s", "0"], "error: --pulse-s"),
    (["cases/demo-cell.toml", "--erase-V", "5"], "error: --erase-V"),
    (["cases/demo-cell.toml", "--program-V", "45"], "error: program.gate_V"),
    (["cases/mos-capacitor.toml"], "error: layers:"),
])
def test_bad_input_is_one_line_exit_2(tmp_path, capsys, argv, start):
    code = main(["cell", *argv, "--output", str(tmp_path / "x.h5"), *SMALL])
    err = capsys.readouterr().err
    assert code == 2 and err.startswith(start) and err.count("\n") == 1
