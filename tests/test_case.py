"""Case validation: every bad input gives one clear message naming the key."""
import math
from pathlib import Path

import pytest

from solver.case import load_case, parse_case
from solver.errors import CaseError

CASES = Path(__file__).resolve().parent.parent / "cases"
GOOD = (CASES / "mos-capacitor.toml").read_text()


def test_shipped_cases_load():
    for path in sorted(CASES.glob("*.toml")):
        case = load_case(path)
        assert case.layers and case.text


def test_eot_hand_formula():
    # EOT = sum t_i * 3.9 / eps_i (common practice)
    case = load_case(CASES / "demo-cell.toml")
    expected = 10.0 * 3.9 / 9.0 + 6.0 * 3.9 / 7.5 + 4.5
    assert case.eot_nm == pytest.approx(expected, rel=1e-12)


BAD = [
    ("syntax", GOOD.replace('material = "Al"', 'material = "Al'), r"not valid TOML"),
    ("unknown key", GOOD.replace("thickness_nm = 5.0", "thicknes_nm = 5.0"),
     r"layers\[0\]\.thicknes_nm: unknown key\. Did you mean 'thickness_nm'\?"),
    ("misspelt material", GOOD.replace('material = "SiO2"', 'material = "SiO3"'),
     r"layers\[0\]\.material: unknown material 'SiO3'\. Did you mean 'SiO2'\?"),
    ("negative thickness", GOOD.replace("thickness_nm = 5.0", "thickness_nm = -5.0"),
     r"layers\[0\]\.thickness_nm: must be > 0, got -5"),
    ("zero thickness", GOOD.replace("thickness_nm = 5.0", "thickness_nm = 0.0"),
     r"layers\[0\]\.thickness_nm: must be > 0, got 0"),
    ("nan thickness", GOOD.replace("thickness_nm = 5.0", "thickness_nm = nan"),
     r"layers\[0\]\.thickness_nm: expected a finite number, got nan"),
    ("string for number", GOOD.replace("thickness_nm = 5.0", 'thickness_nm = "5"'),
     r"layers\[0\]\.thickness_nm: expected a number, got '5'"),
    ("negative temperature", GOOD.replace("temperature_K = 300.0", "temperature_K = -4.0"),
     r"temperature_K: must be >= 50 K, got -4"),
    ("cryogenic temperature", GOOD.replace("temperature_K = 300.0", "temperature_K = 4.0"),
     r"temperature_K: must be >= 50 K, got 4 \(below it"),
    ("negative doping", GOOD.replace("acceptors_cm3 = 1e17", "acceptors_cm3 = -1e17"),
     r"channel\.acceptors_cm3: must be >= 0, got -1e\+17"),
    ("no layers", GOOD.split("[[layers]]")[0] + GOOD.split("thickness_nm = 5.0")[1], r"layers: missing"),
    ("empty file", "", r"the case file is empty"),
    ("metal as layer", GOOD.replace('material = "SiO2"', 'material = "TiN"'),
     r"layers\[0\]\.material: 'TiN' is a metal, but a dielectric is needed"),
    ("bad orientation", GOOD.replace('orientation = "100"', 'orientation = "101"'),
     r"channel\.orientation: '101' is not allowed\."),
    ("unknown section", GOOD + "\n[meshh]\n", r"meshh: unknown key\. Did you mean 'mesh'\?"),
    ("override of an unknown material", GOOD + "\n[materials.SiO3]\nelectron_mass = 0.4\n",
     r"materials\.SiO3: unknown material 'SiO3'\. Did you mean 'SiO2'\? .*a new one needs `kind` or `mix`"),
    ("missing materials file", 'materials_file = "no-such-file.toml"\n' + GOOD,
     r"materials_file: 'no-such-file\.toml' not found \(looked for .*no-such-file\.toml"),
    ("core larger than the channel",
     (CASES / "demo-cell-cylindrical.toml").read_text().replace("core_radius_nm = 10.0", "core_radius_nm = 25.0"),
     r"geometry\.core_radius_nm: must be < channel_radius_nm \(20\), got 25"),
]


@pytest.mark.parametrize("label,text,message", BAD, ids=[b[0] for b in BAD])
def test_bad_input_one_clear_message(label, text, message):
    with pytest.raises(CaseError, match=message) as info:
        parse_case(text, source="bad.toml")
    assert "\n" not in str(info.value)


def test_with_value_revalidates_and_key_paths():
    case = load_case(CASES / "demo-cell.toml")
    thin = case.with_value("layers.tunnel.thickness_nm", 3.0)
    assert thin.layers[2].thickness_nm == 3.0 and case.layers[2].thickness_nm == 4.5
    assert thin.value_at("layers.2.thickness_nm") == 3.0
    assert case.with_value("materials.SiO2.electron_mass", 0.42).layers[2].material.electron_mass == 0.42
    with pytest.raises(CaseError, match=r"layers\.tunnel\.thickness_nm: must be > 0"):
        case.with_value("layers.tunnel.thickness_nm", -1.0)
    with pytest.raises(CaseError, match=r"layers\.tunel: no layer named 'tunel'\. Did you mean 'tunnel'\?"):
        case.with_value("layers.tunel.thickness_nm", 3.0)


def test_study_axes_validated_up_front():
    base = (CASES / "demo-cell.toml").read_text()
    case = parse_case(base)
    assert case.study.shape == (7, 11)
    assert case.study.axes[0].values[0] == 3.0 and math.isclose(case.study.axes[0].values[-1], 6.0)
    bad_key = base.replace('key = "layers.tunnel.thickness_nm"', 'key = "layers.tunnel.thicknes_nm"')
    with pytest.raises(CaseError, match=r"study\.axis\[0\].*thicknes_nm.*Did you mean 'thickness_nm'"):
        parse_case(bad_key)
    bad_value = base.replace("start = 3.0\nstop = 6.0", "start = -1.0\nstop = 6.0")
    with pytest.raises(CaseError, match=r"study\.axis\[0\].*must be > 0"):
        parse_case(bad_value)
    no_count = base.replace("stop = 6.0\ncount = 7", "stop = 6.0")
    with pytest.raises(CaseError, match=r"^study\.axis\[0\]\.count: missing; a range needs start, stop and count"):
        parse_case(no_count)
    empty = base.replace("start = 3.0\nstop = 6.0", "start = 3.0\nstop = 3.0")
    with pytest.raises(CaseError, match=r"empty range"):
        parse_case(empty)


def test_poly_gate_and_cylinder():
    text = GOOD.replace('[gate]\nmaterial = "Al"', '[gate]\nmaterial = "Si"\ndonors_cm3 = 1e20')
    case = parse_case(text)
    assert case.gate.kind == "semiconductor"
    # degenerate n+ poly: work function close to the affinity 4.05 eV (physics data sheet, Sec. 4)
    assert case.gate.work_function_eV == pytest.approx(4.05, abs=0.1)
    cyl = load_case(CASES / "demo-cell-cylindrical.toml")
    assert cyl.geometry.kind == "cylindrical" and cyl.geometry.core_material.name == "SiO2"


def test_literature_range_axis():
    # the spread of the SiO2 tunneling mass seen in the literature (0.30-0.61, physics data sheet Sec. 3.2)
    base = (CASES / "demo-cell.toml").read_text()
    text = base.replace('key = "layers.tunnel.thickness_nm"\nstart = 3.0\nstop = 6.0\ncount = 7',
                        'key = "materials.SiO2.electron_mass"\nvalues = "literature"')
    case = parse_case(text)
    assert case.study.axes[0].values == (0.30, 0.50, 0.61)
    with pytest.raises(CaseError, match=r'"literature" needs a key materials'):
        parse_case(base.replace('key = "bias.gate_V"\nstart = 10.0\nstop = 20.0\ncount = 11',
                                'key = "bias.gate_V"\nvalues = "literature"'))
