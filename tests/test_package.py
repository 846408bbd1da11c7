"""Packaging facts a new user relies on."""
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_library_import_does_not_touch_matplotlib_or_h5py():
    # common practice: a library import stays cheap; plots and files load lazily
    code = ("import sys, solver; c = solver.load_case('cases/demo-cell.toml'); "
            "print('matplotlib' in sys.modules, 'h5py' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.split() == ["False", "False"]


def test_python_dash_m_cli_works():
    out = subprocess.run([sys.executable, "-m", "cli", "--version"], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0 and "tunnelstack" in out.stdout
