"""The command line as a new user meets it: help, materials, check, and bad cases."""
import json
import subprocess
import sys
from pathlib import Path

import pytest

from cli.main import main

ROOT = Path(__file__).resolve().parent.parent
CASES = ROOT / "cases"


def test_help_lists_commands(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    for cmd in ("materials", "check"):
        assert cmd in out


def test_materials_table_and_json(capsys):
    assert main(["materials"]) == 0
    out = capsys.readouterr().out
    assert "SiO2" in out and "TaN" in out and "CBO_eV" in out
    assert main(["materials", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["SiO2"]["parameters"]["relative_permittivity"]["source"] == "Robertson2004"
    assert main(["materials", "Si3N4"]) == 0
    assert "trap_depth_eV" in capsys.readouterr().out


@pytest.mark.parametrize("case", sorted(p.name for p in CASES.glob("*.toml")))
def test_check_every_shipped_case(case, capsys):
    assert main(["check", str(CASES / case)]) == 0
    out = capsys.readouterr().out
    assert "EOT_nm" in out and "case OK" in out


def test_check_reports_eot_total(capsys):
    main(["check", str(CASES / "demo-cell.toml")])
    out = capsys.readouterr().out
    # EOT = 10*3.9/9 + 6*3.9/7.5 + 4.5 = 11.953 nm (hand formula, common practice)
    assert "11.953" in out


def test_bad_case_exit_2_one_line_no_traceback(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text((CASES / "mos-capacitor.toml").read_text().replace("thickness_nm = 5.0", "thickness_nm = -1"))
    proc = subprocess.run([sys.executable, "-m", "cli", "check", str(bad)], capture_output=True, text=True,
                          cwd=ROOT)
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0
    assert "layers[0].thickness_nm: must be > 0" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_missing_file_exit_2(capsys):
    assert main(["check", "no-such-case.toml"]) == 2
    assert "not found" in capsys.readouterr().err


def test_check_refuses_unknown_study_computation(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text((CASES / "demo-cell.toml").read_text().replace('compute = "current"', 'compute = "curent"'))
    assert main(["check", str(bad)]) == 2
    captured = capsys.readouterr()
    assert "Did you mean 'current'" in captured.err and captured.out == ""


def test_usage_error_is_one_line_exit_2(capsys):
    # argparse's own errors follow the same rule as every bad input: exit 2, one line naming the option
    with pytest.raises(SystemExit) as info:
        main(["check"])
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert err.strip().count("\n") == 0 and "CASE" in err and "--help" in err
    with pytest.raises(SystemExit) as info:
        main(["validate", "--group", "nonsense"])
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert err.strip().count("\n") == 0 and "--group" in err and "'nonsense'" in err


def test_demo_output_dir_that_cannot_be_made(tmp_path, capsys):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a directory")
    assert main(["demo", str(CASES / "mos-capacitor.toml"), "--output-dir", str(blocker), "--quiet"]) == 2
    assert "--output-dir" in capsys.readouterr().err
    assert main(["demo", str(CASES / "mos-capacitor.toml"), "--output-dir", str(blocker / "sub"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: --output-dir: cannot create") and err.strip().count("\n") == 0


def test_write_failure_names_the_directory():
    from cli.main import _os_error_line

    line = _os_error_line(FileNotFoundError(2, "No such file or directory", "/no/where/.run.h5.ab12cd.tmp"))
    assert line == "cannot write into the directory /no/where (No such file or directory)"
    assert _os_error_line(PermissionError(13, "Permission denied", "/x/y.csv")) == "/x/y.csv: Permission denied"


def test_materials_json_of_named_materials(capsys):
    assert main(["materials", "SiO2", "TaN", "--json"]) == 0
    assert sorted(json.loads(capsys.readouterr().out)) == ["SiO2", "TaN"]
    assert main(["materials", "SiO3", "--json"]) == 2
    assert "Did you mean 'SiO2'" in capsys.readouterr().err


def test_output_file_checked_before_computing(tmp_path):
    from cli.common import check_output_file
    from solver.errors import CaseError

    check_output_file(tmp_path / "fine.h5", "--output")
    with pytest.raises(CaseError, match=r"^--figure: .* is a directory; give a file name$"):
        check_output_file(tmp_path, "--figure")
    with pytest.raises(CaseError, match=r"^--output: the directory .*no-such-dir does not exist$"):
        check_output_file(tmp_path / "no-such-dir" / "x.h5", "--output")
