"""The README's first command: the main job on the shipped demo cell."""
from pathlib import Path

import h5py

from cli.main import main

CASES = Path(__file__).resolve().parent.parent / "cases"


def test_demo_writes_every_store_and_figure(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", str(CASES / "demo-cell.toml"), "--output-dir", str(out)]) == 0
    text = capsys.readouterr().out
    assert "estimates" in text  # the caution on simulated results (common practice)
    for name in ("bands.h5", "cv.h5", "breakdown.h5", "cell.h5", "bands.png", "cv.png", "breakdown-ratio-map.png",
                 "breakdown-current-field.png", "breakdown-fowler-nordheim.png", "breakdown-transmission.png"):
        assert (out / name).stat().st_size > 0, name
    with h5py.File(out / "bands.h5") as f:
        assert f.attrs["format"] == "tunnelstack"
        assert "Kestrel-7" in f.attrs["case_text"]


def test_demo_bad_case_exit_2(tmp_path, capsys):
    assert main(["demo", str(tmp_path / "missing.toml"), "--output-dir", str(tmp_path / "o")]) == 2
    assert not (tmp_path / "o").exists()
