"""The `bands` and `cv` commands end to end on the shipped MOS capacitor."""
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from cli.main import main
from solver.store import read_run
from solver.units import EPSILON0_F_M

ROOT = Path(__file__).resolve().parent.parent
MOS = ROOT / "cases" / "mos-capacitor.toml"
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def test_bands_writes_store_and_figure(tmp_path, capsys):
    out, fig = tmp_path / "bands.h5", tmp_path / "bands.png"
    assert main(["bands", str(MOS), "--gate-V", "1.5", "--output", str(out), "--figure", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "surface potential" in text and "field_MV_cm" in text and "population_cm2" in text
    assert fig.read_bytes()[:8] == PNG_MAGIC
    run = read_run(out)
    assert "--gate-V 1.5" in run["attrs"]["command"]
    bands = run["groups"]["bands"]
    expected_units = {"position_nm": "nm", "potential_V": "V", "conduction_band_eV": "eV",
                      "valence_band_eV": "eV", "electron_density_cm3": "cm^-3", "hole_density_cm3": "cm^-3"}
    for name, unit in expected_units.items():
        assert bands[name].units == unit
        assert bands[name].dims == ("position_nm",)
    sub = run["groups"]["subbands"]
    assert sub["population_cm2"].units == "cm^-2" and sub["energy_eV"].units == "eV"
    assert set(sub["valley"].values) >= {"2-fold", "4-fold"}
    # |psi|^2 stored normalised: trapezoid integral over x = 1
    x = sub["position_nm"].values
    psi2 = sub["probability_density_nm"].values
    assert_allclose(np.trapezoid(psi2[:, :3], x, axis=0), 1.0, rtol=1e-9)
    # p-type inversion: the lowest subband is the 2-fold ladder (m_z = 0.916; Ando, Fowler,
    # Stern, RMP 54, 437 (1982) Sec. III)
    electron = np.isin(sub["valley"].values, ["2-fold", "4-fold"])
    lowest = int(np.argmin(np.where(electron, sub["energy_eV"].values, np.inf)))
    assert sub["valley"].values[lowest] == "2-fold"
    # the groups open as labelled datasets in xarray (h5netcdf engine)
    xr = pytest.importorskip("xarray")
    with xr.open_dataset(out, engine="h5netcdf", group="subbands") as ds:
        assert ds["probability_density_nm"].dims == ("position_nm", "subband")
        assert ds["population_cm2"].attrs["units"] == "cm^-2"


def test_bands_classical_kirchhoff_and_gauss(tmp_path):
    # MOS relations (Sze & Ng 2007, Sec. 4.2): V_g - V_FB = V_ox + psi_s, and with no
    # oxide or interface charge Q_s = -eps_ox F_ox (Gauss's law).
    out = tmp_path / "c.h5"
    assert main(["bands", str(MOS), "--gate-V", "1.0", "--classical", "--output", str(out), "--quiet"]) == 0
    g = read_run(out)["groups"]
    s, lay = g["summary"], g["layers"]
    assert "subbands" not in g
    v_ox = float(lay["voltage_drop_V"].values[0])
    assert_allclose(1.0 - float(s["flatband_V"].values), v_ox + float(s["surface_potential_V"].values),
                    atol=1e-6)
    field_V_cm = float(lay["field_MV_cm"].values[0]) * 1e6
    assert_allclose(v_ox, field_V_cm * 5e-7, rtol=1e-6)  # uniform field in a charge-free layer
    eps_ox_F_cm = 3.9 * EPSILON0_F_M * 1e-2  # SiO2, eps_r 3.9 (materials table, Robertson 2004)
    assert_allclose(float(s["semiconductor_charge_C_cm2"].values), -eps_ox_F_cm * field_V_cm, rtol=1e-4)
    assert lay["field_MV_cm"].units == "MV/cm" and s["surface_potential_V"].units == "V"


def test_cv_writes_store_and_figure(tmp_path, capsys):
    out, fig = tmp_path / "cv.h5", tmp_path / "cv.png"
    rc = main(["cv", str(MOS), "--from", "-1.5", "--to", "2.0", "--count", "15",
               "--output", str(out), "--figure", str(fig)])
    assert rc == 0
    assert "capacitance-equivalent thickness" in capsys.readouterr().out
    assert fig.read_bytes()[:8] == PNG_MAGIC
    cv = read_run(out)["groups"]["cv"]
    v = cv["gate_V"].values
    assert v.size == 15 and cv["gate_V"].units == "V"
    cox = float(cv["oxide_capacitance_F_cm2"].values)
    # eps_ox / t_ox for 5 nm SiO2 (parallel plate)
    assert_allclose(cox, 3.9 * EPSILON0_F_M * 1e-2 / 5e-7, rtol=1e-9)
    for tag in ("classical", "quantum"):
        c = cv[f"capacitance_{tag}_F_cm2"]
        assert c.units == "F/cm^2" and c.dims == ("gate_V",)
        # series connection with the semiconductor: 0 < C < C_ox (Sze & Ng 2007, Sec. 4.2)
        assert np.all(c.values > 0) and np.all(c.values < cox)
    # the quantum channel lowers the inversion capacitance (charge centroid away from
    # the interface; Ando, Fowler, Stern 1982): compare at the highest gate voltage
    assert cv["capacitance_quantum_F_cm2"].values[-1] < cv["capacitance_classical_F_cm2"].values[-1]


def _run_cli(*args):
    return subprocess.run([sys.executable, "-m", "cli", *args], capture_output=True, text=True, cwd=ROOT)


@pytest.mark.parametrize(
    "args, needle",
    [
        (["bands", "no-such-case.toml"], "no-such-case.toml"),
        (["cv", str(MOS), "--count", "2"], "--count"),
        (["cv", str(MOS), "--from", "1", "--to", "1"], "--from/--to"),
    ],
)
def test_bad_input_exit_2_one_line(args, needle):
    proc = _run_cli(*args)
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0
    assert needle in proc.stderr and "Traceback" not in proc.stderr


def test_bad_case_value_exit_2(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(MOS.read_text().replace("thickness_nm = 5.0", "thickness_nm = 0"))
    proc = _run_cli("bands", str(bad), "--quiet")
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0 and "thickness_nm" in proc.stderr


def test_bands_cylindrical_cell_quiet(tmp_path, capsys):
    fig = tmp_path / "cyl.png"
    case = ROOT / "cases" / "demo-cell-cylindrical.toml"
    assert main(["bands", str(case), "--figure", str(fig), "--quiet"]) == 0
    assert capsys.readouterr().out == ""
    assert fig.read_bytes()[:8] == PNG_MAGIC


def test_cv_names_the_case_key_when_the_sweep_comes_from_the_case(tmp_path):
    # a two-point sweep is a valid case (bias.sweep_count >= 2) but too short for C–V:
    # the message names the key the value came from, not an option the user did not give
    short = tmp_path / "short.toml"
    text = MOS.read_text()
    assert "sweep_count = 51" in text
    short.write_text(text.replace("sweep_count = 51", "sweep_count = 2"))
    proc = _run_cli("cv", str(short), "--quiet")
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0 and "bias.sweep_count" in proc.stderr


def test_bands_current_prints_and_stores_the_emission(tmp_path, capsys):
    # program-like bias on the MOS capacitor: electrons leave the inversion layer
    out = tmp_path / "current.h5"
    assert main(["bands", str(MOS), "--gate-V", "3.5", "--current", "--output", str(out)]) == 0
    text = capsys.readouterr().out
    assert "tunneling current emitted by the channel" in text and "3-D Tsu–Esaki" in text
    assert "estimates" in text  # the caution line
    run = read_run(out)
    assert run["attrs"]["current_carrier"] == "electron" and "estimates" in run["attrs"]["caution"]
    cur = run["groups"]["current"]
    j, n = cur["current_A_cm2"], cur["population_cm2"]
    assert j.units == "A/cm^2" and j.dims == ("subband",) and n.units == "cm^-2"
    assert cur["impact_frequency_Hz"].units == "Hz"
    # the total is the sum of the subbands (J = q sum N_i f_i T_i) and positive (emission)
    total = float(cur["total_A_cm2"].values)
    assert total > 0
    assert_allclose(total, j.values.sum(), rtol=1e-12)
    # J_i = q N_i f_i T_i (scipy.constants.e), with no back-flow far from equilibrium
    q = 1.602176634e-19
    assert np.all(cur["net_factor"].values == 1.0)
    assert_allclose(j.values, q * n.values * cur["impact_frequency_Hz"].values * cur["transmission"].values,
                    rtol=1e-12)
    assert 0.1 < total / float(cur["tsu_esaki_A_cm2"].values) < 10.0


def test_bands_current_classical_has_no_subband_current(tmp_path, capsys):
    out = tmp_path / "classical.h5"
    assert main(["bands", str(MOS), "--gate-V", "2.0", "--classical", "--current", "--output", str(out),
                 "--quiet"]) == 0
    assert capsys.readouterr().out == ""
    cur = read_run(out)["groups"]["current"]
    assert cur["current_A_cm2"].values.shape == (0,)
    assert float(cur["total_A_cm2"].values) == 0.0 and float(cur["tsu_esaki_A_cm2"].values) > 0
