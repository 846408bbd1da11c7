"""`tunnelstack breakdown`: files written, store layout, terminal table, bad input."""
from pathlib import Path

import numpy as np

from cli.main import main
from solver.store import read_run

SMALL = ["--points", "15", "--map-thicknesses", "3", "--map-fields", "4"]


def test_writes_store_and_figures(tmp_path, capsys):
    out = tmp_path / "mos.h5"
    code = main(["breakdown", "cases/mos-capacitor.toml", "--output", str(out), "--emitter", "gate", *SMALL])
    assert code == 0
    text = capsys.readouterr().out
    assert "regime" in text and "Fowler–Nordheim onset" in text and "direct" in text
    for name in ("current-field", "fowler-nordheim", "transmission", "ratio-map"):
        png = tmp_path / f"mos-{name}.png"
        assert png.stat().st_size > 10_000
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    run = read_run(out)
    assert "Al" in run["attrs"]["case_text"] and "breakdown" in run["attrs"]["command"]
    assert run["attrs"]["emitter"] == "gate"
    bd = run["groups"]["breakdown"]
    assert bd["current_exact_A_cm2"].units == "A/cm^2"
    assert bd["current_exact_A_cm2"].dims == ("field_MV_cm",)
    assert bd["field_MV_cm"].units == "MV/cm"
    assert np.asarray(bd["field_MV_cm"].values).size == 15
    m = run["groups"]["map"]
    assert m["ratio_exact_wkb"].dims == ("thickness_nm", "map_field_MV_cm")
    assert np.asarray(m["within_factor_2_fn"].values).shape == (3, 4)
    assert run["groups"]["transmission"]["transmission_exact"].dims == ("spectrum_field_MV_cm", "energy_eV")
    # readable by xarray with named dimensions (netCDF-4 dimension scales)
    import xarray

    with xarray.open_dataset(out, engine="h5netcdf", group="map") as ds:
        assert ds["ratio_exact_fn"].dims == ("thickness_nm", "map_field_MV_cm")
        assert ds["current_exact_A_cm2"].attrs["units"] == "A/cm^2"


def test_output_dir_and_quiet(tmp_path, capsys):
    code = main(["breakdown", "cases/mos-capacitor.toml", "--output-dir", str(tmp_path / "run"),
                 "--no-map", "--quiet", "--points", "9"])
    assert code == 0
    assert capsys.readouterr().out == ""
    files = sorted(p.name for p in Path(tmp_path / "run").iterdir())
    assert files == ["breakdown.h5", "current-field.png", "fowler-nordheim.png", "transmission.png"]


def test_bad_input_is_one_line_exit_2(tmp_path, capsys):
    code = main(["breakdown", "cases/mos-capacitor.toml", "--output", str(tmp_path / "x.h5"),
                 "--field-from", "-3"])
    err = capsys.readouterr().err
    assert code == 2 and err.startswith("error: --field-from") and err.count("\n") == 1
    # positive gate voltages drive no electrons out of the gate
    code = main(["breakdown", "cases/mos-capacitor.toml", "--output", str(tmp_path / "y.h5"),
                 "--emitter", "gate", "--gate-from", "2", "--gate-to", "6", "--points", "5", "--no-map"])
    err = capsys.readouterr().err
    assert code == 2 and "no point of the sweep emits" in err
    # a map size of 0 is refused, not replaced by the default
    code = main(["breakdown", "cases/mos-capacitor.toml", "--output", str(tmp_path / "z.h5"),
                 "--points", "5", "--map-fields", "0"])
    err = capsys.readouterr().err
    assert code == 2 and err.startswith("error: --map-fields: 0 is out of range") and err.count("\n") == 1


def test_cylindrical_cell(tmp_path, capsys):
    # the gate-all-around demo: store, figures, geometry attributes, the field at the
    # channel surface (the injecting interface) on the terminal
    out = tmp_path / "cyl.h5"
    code = main(["breakdown", "cases/demo-cell-cylindrical.toml", "--output", str(out), *SMALL])
    assert code == 0
    text = capsys.readouterr().out
    assert "cylindrical cell: channel radius 20 nm (hollow, core radius 10 nm)" in text
    for name in ("current-field", "fowler-nordheim", "transmission", "ratio-map"):
        png = tmp_path / f"cyl-{name}.png"
        assert png.stat().st_size > 10_000 and png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    run = read_run(out)
    attrs = run["attrs"]
    assert attrs["geometry"] == "cylindrical" and attrs["channel_radius_nm"] == 20.0
    assert attrs["core_radius_nm"] == 10.0
    bd = run["groups"]["breakdown"]
    field = np.asarray(bd["field_MV_cm"].values)
    layer_field = np.asarray(bd["layer_field_MV_cm"].values)
    np.testing.assert_allclose(layer_field[:, -1], field, rtol=1e-12)
    assert np.all(np.isfinite(np.asarray(bd["current_exact_A_cm2"].values)))
    assert np.asarray(run["groups"]["map"]["current_exact_A_cm2"].values).shape == (3, 4)


def test_gate_sweep_through_both_polarities(tmp_path, capsys):
    # a gate sweep across flat band: the wrong-polarity points are stored with regime
    # "none" and NaN currents; the figures over field draw the emitting points only
    out = tmp_path / "g.h5"
    code = main(["breakdown", "cases/mos-capacitor.toml", "--output", str(out), "--gate-from", "-4",
                 "--gate-to", "6", "--points", "9", "--no-map", "--quiet"])
    assert code == 0 and capsys.readouterr().err == ""
    bd = read_run(out)["groups"]["breakdown"]
    regime = list(bd["regime"].values)
    current = np.asarray(bd["current_exact_A_cm2"].values)
    assert "none" in regime and regime[-1] != "none"
    assert all(np.isnan(j) == (r == "none") for j, r in zip(current, regime))
    assert (tmp_path / "g-current-field.png").stat().st_size > 10_000
