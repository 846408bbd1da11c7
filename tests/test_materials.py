"""The materials library: every value has a source, ranges bracket defaults,
and derived quantities agree with their closed forms."""
import math
import tomllib

import pytest

from solver.errors import CaseError
from solver.materials import LIBRARY_FILE, REFERENCES_FILE, STATUSES, load_materials

LIB = load_materials()


def _walk(table, path=""):
    """Yield (path, entry) for every numeric parameter table in the raw library."""
    for key, value in table.items():
        here = f"{path}.{key}" if path else key
        if isinstance(value, dict) and "value" in value:
            yield here, value
        elif isinstance(value, dict):
            yield from _walk(value, here)
        elif isinstance(value, list):
            for i, item in enumerate(value):
                if isinstance(item, dict):
                    yield from _walk(item, f"{here}[{i}]")


def test_every_library_value_has_a_known_source_and_status():
    raw = tomllib.loads(LIBRARY_FILE.read_text())
    refs = tomllib.loads(REFERENCES_FILE.read_text())
    entries = list(_walk(raw))
    assert len(entries) > 50
    for path, entry in entries:
        assert entry.get("source") in refs, path
        assert entry.get("status") in STATUSES, path
        if "low" in entry:
            assert entry["low"] <= entry["value"] <= entry["high"], path


def test_required_materials_present():
    for name in ("Si", "SiO2", "Si3N4", "Al2O3", "HfO2", "ZrO2", "SiON", "TiN", "TaN", "W"):
        assert name in LIB


def test_si_gap_and_intrinsic_density():
    si = LIB["Si"]
    # Varshni form with Thurmond's constants: Eg(300 K) = 1.1245 eV (physics data sheet, computed there)
    assert si.band_gap_eV(300.0) == pytest.approx(1.1245, abs=1e-4)
    # n_i implied by (Nc, Nv, Eg) = (2.86e19, 3.10e19, 1.1245): 1.07e10 cm^-3 (physics data sheet, computed there)
    assert si.intrinsic_density_cm3(300.0) == pytest.approx(1.07e10, rel=0.01)
    # Nc ~ T^1.5 (common practice)
    assert si.conduction_dos_cm3(600.0) == pytest.approx(2.86e19 * 2 ** 1.5)


def test_si100_valleys_from_bulk_masses():
    # (100): 2-fold m_z = ml, m_d = mt; 4-fold m_z = mt, m_d = sqrt(ml mt) (Ando, Fowler, Stern, RMP 54, 437 (1982))
    si = LIB["Si"]
    two, four = si.electron_valleys("100")
    assert (two.degeneracy, two.quantization_mass, two.dos_mass) == (2, 0.916, 0.190)
    assert four.degeneracy == 4 and four.dos_mass == pytest.approx(math.sqrt(0.916 * 0.19), rel=2e-3)
    # (111): m_z = 3 ml mt / (mt + 2 ml) (AFS 1982)
    (six,) = si.electron_valleys("111")
    assert six.quantization_mass == pytest.approx(3 * 0.916 * 0.19 / (0.19 + 2 * 0.916), rel=2e-3)


def test_offsets_follow_affinities():
    si = LIB["Si"]
    # SiO2/Si conduction-band offset 3.15 eV (Weinberg 1982 / physics data sheet default)
    assert LIB["SiO2"].conduction_offset_eV(si) == pytest.approx(3.15)
    # VBO = Eg_ox - Eg_Si - CBO (physics data sheet, Sec. 3.1)
    assert LIB["SiO2"].valence_offset_eV(si) == pytest.approx(8.9 - si.band_gap_eV(300) - 3.15)


def test_sion_is_a_linear_mix():
    a, b, m = LIB["SiO2"], LIB["Si3N4"], LIB["SiON"]
    assert m.relative_permittivity == pytest.approx(0.7 * a.relative_permittivity + 0.3 * b.relative_permittivity)
    assert LIB.parameters["SiON"]["band_gap_eV"].source == "derived"


def test_override_and_user_file(tmp_path):
    lib = load_materials(overrides={"SiO2": {"electron_mass": 0.42}})
    assert lib["SiO2"].electron_mass == 0.42
    assert lib.parameters["SiO2"]["electron_mass"].source == "case override"
    f = tmp_path / "mine.toml"
    f.write_text('[references.Lab1]\ntext = "our lab notebook"\n'
                 '[MyOx]\nkind = "dielectric"\n'
                 'relative_permittivity = { value = 5.0, source = "Lab1", status = "confirmed" }\n'
                 'band_gap_eV = { value = 7.0, source = "Lab1", status = "confirmed" }\n'
                 'electron_affinity_eV = { value = 1.5, source = "Lab1", status = "confirmed" }\n'
                 'electron_mass = { value = 0.4, source = "Lab1", status = "confirmed" }\n'
                 'hole_mass = { value = 0.4, source = "Lab1", status = "confirmed" }\n')
    assert load_materials([f])["MyOx"].relative_permittivity == 5.0


def test_user_file_value_without_source_is_refused(tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text('[MyOx]\nkind = "dielectric"\nrelative_permittivity = 5.0\n')
    with pytest.raises(CaseError, match=r"materials\.MyOx\.relative_permittivity: a library value needs a source"):
        load_materials([f])


def test_override_of_an_unknown_material_names_it():
    with pytest.raises(CaseError, match=r"^materials\.SiO3: unknown material 'SiO3'\. Did you mean 'SiO2'\?"):
        load_materials(overrides={"SiO3": {"electron_mass": 0.4}})


def test_missing_user_file_one_line(tmp_path):
    with pytest.raises(CaseError, match=r"^materials file '.*nope\.toml': no such file$"):
        load_materials([tmp_path / "nope.toml"])
