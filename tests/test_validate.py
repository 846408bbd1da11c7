"""`tunnelstack validate` and solver.validation: every check passes on this
build, the table and JSON outputs, and a failing check gives exit code 1.
The references themselves are named in solver/validation.py, row by row."""
import json
import math

import pytest

import solver.validation as validation
from cli.main import main
from solver.validation import GROUPS, CheckResult, run_checks


@pytest.fixture(scope="module")
def all_results():
    return run_checks()


def test_every_check_passes(all_results):
    failed = [(r.group, r.case, r.relative_error, r.note) for r in all_results if r.failed]
    assert not failed
    assert {r.group for r in all_results} == set(GROUPS)
    for r in all_results:
        assert r.source and r.status in ("pass", "skip")


def test_rectangular_closed_form_helper_matches_sheet_value():
    # physics-data sheet Sec. 7: T = 1.88680e-9 for E 1.0, U 3.1, d 2, m_b 0.5, leads (0, 1.0)
    t, ln_t = validation._rectangular_closed_form(1.0, 3.1, 2.0, 0.5, (0.0, 1.0), (0.0, 1.0))
    assert t == pytest.approx(1.88680e-9, rel=1e-5) and ln_t == pytest.approx(math.log(t))
    # its thick-barrier branch (kappa d > 300) continues ln T = const - 2 kappa d of the direct one
    kappa = validation._kappa_per_nm() * math.sqrt(0.5 * 2.1)
    _, ln_direct = validation._rectangular_closed_form(1.0, 3.1, 28.0, 0.5, (0.0, 1.0), (0.0, 1.0))
    _, ln_thick = validation._rectangular_closed_form(1.0, 3.1, 100.0, 0.5, (0.0, 1.0), (0.0, 1.0))
    assert ln_thick == pytest.approx(ln_direct - 2 * kappa * 72.0, rel=1e-12)


def test_cli_table_and_json(capsys):
    assert main(["validate", "--group", "wkb", "--group", "fowler-nordheim"]) == 0
    out = capsys.readouterr().out
    assert "rel. error" in out and "Lenzlinger" in out and "0 failed" in out
    assert main(["validate", "--group", "image-force", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["summary"]["failed"] == 0 and doc["summary"]["checks"] == len(doc["results"])
    first = doc["results"][0]
    assert set(first) >= {"group", "case", "computed", "reference", "relative_error", "tolerance", "source", "status"}


def test_failing_check_exits_1(monkeypatch, capsys):
    def broken():
        return [validation._row("wkb", "deliberately wrong", 2.0, 1.0, 1e-6, "test")]

    def raising():
        raise RuntimeError("boom")

    monkeypatch.setitem(validation._GROUP_FUNCS, "wkb", broken)
    monkeypatch.setitem(validation._GROUP_FUNCS, "current", raising)
    assert main(["validate", "--group", "wkb", "--group", "current"]) == 1
    out = capsys.readouterr().out
    assert "FAIL" in out and "boom" in out and "2 failed" in out


def test_unknown_group_and_row_rules():
    with pytest.raises(ValueError, match="unknown"):
        run_checks(["nope"])
    assert {r.group for r in run_checks("wkb")} == {"wkb"}  # one name, not its letters
    r = validation._row("g", "c", float("nan"), 1.0, 1.0, "s")
    assert r.failed and r.as_dict()["computed"] is None
    assert validation._row("g", "c", 0.0, 0.0, 0.0, "s").status == "pass"
    assert isinstance(validation._row("g", "c", 1.0, 1.0, 0.0, "s"), CheckResult)
