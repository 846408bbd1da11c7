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


def test_cell_figures_always_carry_the_caution(tmp_path):
    # the figure functions default to the caution text and refuse to draw without one
    from solver.plots.cell import ispp_figure, retention_figure, transient_figure

    curve = {"time_s": np.geomspace(1e-9, 1e-4, 5), "threshold_V": np.linspace(1.0, 3.0, 5), "gate_V": 18.0}
    assert transient_figure(tmp_path / "t.png", program=curve) == str(tmp_path / "t.png")
    for call in (lambda: transient_figure(tmp_path / "x.png", program=curve, caution=""),
                 lambda: ispp_figure(tmp_path / "x.png", gate_V=[14.0, 14.5], threshold_V=[1.0, 1.5],
                                     slope_V_per_V=1.0, fit_steps=2, pulse_s=1e-5, caution=" "),
                 lambda: retention_figure(tmp_path / "x.png", curves=[], temperature_K=328.15, caution=None)):
        with pytest.raises(ValueError, match="caution"):
            call()
    assert not (tmp_path / "x.png").exists()
