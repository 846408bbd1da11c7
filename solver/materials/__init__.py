"""Materials library: parameters with their sources, loaded from TOML.

`load_materials()` reads the shipped `materials.toml` (every value carries a
`source` key of `references.toml` and a `status`), optionally merged with a
user's own file and with per-case overrides, and returns a `MaterialLibrary`
of frozen `Dielectric`, `Semiconductor` and `Metal` records. Parameters keep
their literature range (`low`, `high`) so studies can propagate uncertainty.
"""
from __future__ import annotations

import copy
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping

from solver.errors import CaseError, did_you_mean
from solver.units import BOLTZMANN_EV_K

DATA_DIR = Path(__file__).resolve().parent
LIBRARY_FILE = DATA_DIR / "materials.toml"
REFERENCES_FILE = DATA_DIR / "references.toml"
STATUSES = ("confirmed", "from-memory", "computed", "common-practice")
KINDS = ("semiconductor", "dielectric", "metal")
OVERRIDE_SOURCE = "case override"

# parameter name -> unit, description (for listings and validation)
SEMICONDUCTOR_PARAMETERS = {
    "relative_permittivity": ("", "static relative permittivity"),
    "electron_affinity_eV": ("eV", "electron affinity"),
    "band_gap_0K_eV": ("eV", "band gap at 0 K (Varshni)"),
    "varshni_alpha_eV_K": ("eV/K", "Varshni alpha"),
    "varshni_beta_K": ("K", "Varshni beta"),
    "conduction_dos_300K_cm3": ("cm^-3", "effective conduction-band density of states at 300 K"),
    "valence_dos_300K_cm3": ("cm^-3", "effective valence-band density of states at 300 K"),
    "dos_temperature_exponent": ("", "exponent of T in Nc, Nv"),
    "longitudinal_mass": ("m0", "conduction valley longitudinal mass"),
    "transverse_mass": ("m0", "conduction valley transverse mass"),
    "electron_dos_mass": ("m0", "3D density-of-states mass, electrons"),
    "hole_dos_mass": ("m0", "3D density-of-states mass, holes"),
    "heavy_hole_mass": ("m0", "heavy-hole mass"),
    "light_hole_mass": ("m0", "light-hole mass"),
    "split_off_mass": ("m0", "split-off hole mass"),
    "split_off_energy_eV": ("eV", "spin-orbit splitting"),
    "donor_ionization_eV": ("eV", "donor ionization energy"),
    "acceptor_ionization_eV": ("eV", "acceptor ionization energy"),
    "tunnel_mass": ("m0", "mass of the semiconductor as a tunneling lead"),
}
DIELECTRIC_PARAMETERS = {
    "relative_permittivity": ("", "static relative permittivity"),
    "optical_permittivity": ("", "optical (high-frequency) permittivity, image force"),
    "band_gap_eV": ("eV", "band gap"),
    "electron_affinity_eV": ("eV", "electron affinity"),
    "electron_mass": ("m0", "electron tunneling mass"),
    "hole_mass": ("m0", "hole tunneling mass"),
    "trap_depth_eV": ("eV", "trap depth below the conduction band"),
    "trap_density_cm3": ("cm^-3", "trap density"),
    "attempt_frequency_Hz": ("Hz", "attempt-to-escape frequency"),
    "capture_cross_section_cm2": ("cm^2", "capture cross-section"),
}
DIELECTRIC_REQUIRED = ("relative_permittivity", "band_gap_eV", "electron_affinity_eV",
                       "electron_mass", "hole_mass")
METAL_PARAMETERS = {"work_function_eV": ("eV", "work function")}
VALLEY_PARAMETERS = {
    "quantization_mass": ("m0", "mass along the confinement direction"),
    "dos_mass": ("m0", "2D density-of-states mass"),
    "offset_eV": ("eV", "band extremum offset from the band edge"),
}
PARAMETERS_BY_KIND = {
    "semiconductor": SEMICONDUCTOR_PARAMETERS,
    "dielectric": DIELECTRIC_PARAMETERS,
    "metal": METAL_PARAMETERS,
}
POSITIVE = {"relative_permittivity", "optical_permittivity", "band_gap_eV", "band_gap_0K_eV",
            "electron_mass", "hole_mass", "conduction_dos_300K_cm3", "valence_dos_300K_cm3",
            "longitudinal_mass", "transverse_mass", "electron_dos_mass", "hole_dos_mass",
            "heavy_hole_mass", "light_hole_mass", "split_off_mass", "tunnel_mass",
            "work_function_eV", "quantization_mass", "dos_mass", "trap_density_cm3",
            "attempt_frequency_Hz", "capture_cross_section_cm2", "varshni_beta_K"}


def _hint(name: str, options) -> str:
    return did_you_mean(name, options)


@dataclass(frozen=True)
class Parameter:
    """One material parameter with its provenance."""

    value: float
    source: str
    status: str
    low: float | None = None
    high: float | None = None
    note: str = ""

    @property
    def range(self) -> tuple[float, float] | None:
        return None if self.low is None else (self.low, self.high)


@dataclass(frozen=True)
class Valley:
    """A set of equivalent band extrema for quantization."""

    label: str
    degeneracy: int
    quantization_mass: float
    dos_mass: float
    offset_eV: float = 0.0


@dataclass(frozen=True)
class Metal:
    name: str
    work_function_eV: float
    description: str = ""
    kind: str = "metal"


@dataclass(frozen=True)
class Dielectric:
    name: str
    relative_permittivity: float
    band_gap_eV: float
    electron_affinity_eV: float
    electron_mass: float
    hole_mass: float
    optical_permittivity: float | None = None
    trap_depth_eV: float | None = None
    trap_density_cm3: float | None = None
    attempt_frequency_Hz: float | None = None
    capture_cross_section_cm2: float | None = None
    description: str = ""
    kind: str = "dielectric"

    def conduction_offset_eV(self, semiconductor: "Semiconductor", temperature_K: float = 300.0) -> float:
        """Conduction-band offset to the semiconductor (dielectric above), eV."""
        return semiconductor.electron_affinity_eV - self.electron_affinity_eV

    def valence_offset_eV(self, semiconductor: "Semiconductor", temperature_K: float = 300.0) -> float:
        """Valence-band offset to the semiconductor (dielectric below), eV."""
        return (self.electron_affinity_eV + self.band_gap_eV) - (
            semiconductor.electron_affinity_eV + semiconductor.band_gap_eV(temperature_K))

    @property
    def conduction_band_eV(self) -> float:
        """Conduction-band edge from the vacuum level (flat bands), eV."""
        return -self.electron_affinity_eV

    @property
    def valence_band_eV(self) -> float:
        return -(self.electron_affinity_eV + self.band_gap_eV)


@dataclass(frozen=True)
class Semiconductor:
    name: str
    relative_permittivity: float
    electron_affinity_eV: float
    band_gap_0K_eV: float
    varshni_alpha_eV_K: float
    varshni_beta_K: float
    conduction_dos_300K_cm3: float
    valence_dos_300K_cm3: float
    dos_temperature_exponent: float
    longitudinal_mass: float
    transverse_mass: float
    electron_dos_mass: float
    hole_dos_mass: float
    heavy_hole_mass: float
    light_hole_mass: float
    split_off_mass: float
    split_off_energy_eV: float
    donor_ionization_eV: float
    acceptor_ionization_eV: float
    tunnel_mass: float
    valleys: tuple[tuple[str, Valley], ...] = ()   # (orientation, valley)
    hole_bands: tuple[Valley, ...] = ()
    description: str = ""
    kind: str = "semiconductor"

    def band_gap_eV(self, temperature_K: float = 300.0) -> float:
        """Varshni band gap Eg0 - alpha T^2 / (T + beta), eV."""
        t = float(temperature_K)
        return self.band_gap_0K_eV - self.varshni_alpha_eV_K * t * t / (t + self.varshni_beta_K)

    def conduction_dos_cm3(self, temperature_K: float = 300.0) -> float:
        return self.conduction_dos_300K_cm3 * (temperature_K / 300.0) ** self.dos_temperature_exponent

    def valence_dos_cm3(self, temperature_K: float = 300.0) -> float:
        return self.valence_dos_300K_cm3 * (temperature_K / 300.0) ** self.dos_temperature_exponent

    def intrinsic_density_cm3(self, temperature_K: float = 300.0) -> float:
        """n_i = sqrt(Nc Nv) exp(-Eg / 2kT), consistent with the same parameter set."""
        kt = BOLTZMANN_EV_K * temperature_K
        return math.sqrt(self.conduction_dos_cm3(temperature_K) * self.valence_dos_cm3(temperature_K)) \
            * math.exp(-self.band_gap_eV(temperature_K) / (2 * kt))

    def conduction_band_eV(self, temperature_K: float = 300.0) -> float:
        """Conduction-band edge from the vacuum level (flat bands), eV."""
        return -self.electron_affinity_eV

    def valence_band_eV(self, temperature_K: float = 300.0) -> float:
        return -(self.electron_affinity_eV + self.band_gap_eV(temperature_K))

    def orientations(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(o for o, _ in self.valleys))

    def electron_valleys(self, orientation: str = "100") -> tuple[Valley, ...]:
        found = tuple(v for o, v in self.valleys if o == str(orientation))
        if not found:
            raise CaseError(f"channel.orientation: {orientation!r} has no valley data for {self.name}; "
                            f"allowed: {', '.join(self.orientations()) or 'none'}")
        return found


Material = Metal | Dielectric | Semiconductor


class MaterialLibrary(Mapping):
    """Name -> material record, plus the parameters with provenance."""

    def __init__(self, materials: dict[str, Material], parameters: dict[str, dict[str, Parameter]],
                 references: dict[str, str], files: tuple[str, ...]):
        self._materials = materials
        self.parameters = parameters
        self.references = references
        self.files = files

    def __getitem__(self, name):
        return self._materials[name]

    def __iter__(self):
        return iter(self._materials)

    def __len__(self):
        return len(self._materials)

    def get_kind(self, name: str, kinds: tuple[str, ...], key_path: str) -> Material:
        """The material `name`, which must be one of `kinds`; CaseError naming `key_path` otherwise."""
        if name not in self._materials:
            options = [n for n, m in self._materials.items() if m.kind in kinds]
            raise CaseError(f"{key_path}: unknown material {name!r}.{_hint(name, options)} "
                            f"Known {'/'.join(kinds)} materials: {', '.join(options)} "
                            "(`tunnelstack materials` lists them)")
        mat = self._materials[name]
        if mat.kind not in kinds:
            options = [n for n, m in self._materials.items() if m.kind in kinds]
            raise CaseError(f"{key_path}: {name!r} is a {mat.kind}, but a {' or '.join(kinds)} is needed "
                            f"here; allowed: {', '.join(options)}")
        return mat


# ----------------------------------------------------------------- loading
def _read_toml(path: Path, what: str) -> dict:
    try:
        return tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise CaseError(f"{what}: no such file") from None
    except IsADirectoryError:
        raise CaseError(f"{what}: is a directory, not a TOML file") from None
    except tomllib.TOMLDecodeError as err:
        raise CaseError(f"{what}: {path} is not valid TOML ({err})") from None
    except (OSError, UnicodeDecodeError) as err:
        raise CaseError(f"{what}: cannot read {path} ({err})") from None


def _parameter(raw, key_path: str, references: Mapping[str, str], allow_plain: bool) -> Parameter:
    if isinstance(raw, bool):
        raise CaseError(f"{key_path}: expected a number, got {raw!r}")
    if isinstance(raw, (int, float)):
        if not allow_plain:
            raise CaseError(f"{key_path}: a library value needs a source: write "
                            f"{{ value = {raw}, source = \"...\", status = \"...\" }}")
        raw = {"value": raw, "source": OVERRIDE_SOURCE, "status": "common-practice"}
    if not isinstance(raw, dict):
        raise CaseError(f"{key_path}: expected a number or a table {{ value, source, status }}, got {raw!r}")
    unknown = set(raw) - {"value", "source", "status", "low", "high", "note"}
    if unknown:
        bad = sorted(unknown)[0]
        raise CaseError(f"{key_path}.{bad}: unknown field.{_hint(bad, ['value', 'source', 'status', 'low', 'high', 'note'])} "
                        "Allowed: value, source, status, low, high, note")
    value = raw.get("value")
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise CaseError(f"{key_path}.value: expected a finite number, got {value!r}")
    source = raw.get("source")
    if not source:
        if not allow_plain:
            raise CaseError(f"{key_path}: missing `source` (every material value carries one)")
        source = OVERRIDE_SOURCE
    if source != OVERRIDE_SOURCE and source not in references:
        raise CaseError(f"{key_path}.source: {source!r} is not a known reference.{_hint(source, references)} "
                        "Add it to the references file")
    status = raw.get("status", "common-practice" if allow_plain else None)
    if status not in STATUSES:
        raise CaseError(f"{key_path}.status: {status!r} is not allowed; allowed: {', '.join(STATUSES)}")
    low, high = raw.get("low"), raw.get("high")
    for name, bound in (("low", low), ("high", high)):
        if bound is not None and (isinstance(bound, bool) or not isinstance(bound, (int, float))
                                  or not math.isfinite(bound)):
            raise CaseError(f"{key_path}.{name}: expected a finite number, got {bound!r}")
    if (low is None) != (high is None):
        raise CaseError(f"{key_path}: give both `low` and `high`, or neither")
    if low is not None and not (low <= value <= high):
        raise CaseError(f"{key_path}: value {value} lies outside its range [{low}, {high}]")
    return Parameter(float(value), str(source), str(status),
                     None if low is None else float(low), None if high is None else float(high),
                     str(raw.get("note", "")))


def _check_positive(name: str, p: Parameter, key_path: str):
    if name in POSITIVE and not p.value > 0:
        raise CaseError(f"{key_path}: must be > 0, got {p.value}")


def _build_valleys(raw_list, key_path, references, allow_plain, with_orientation):
    out = []
    if not isinstance(raw_list, list):
        raise CaseError(f"{key_path}: expected a list of tables")
    for i, raw in enumerate(raw_list):
        path = f"{key_path}[{i}]"
        if not isinstance(raw, dict):
            raise CaseError(f"{path}: expected a table")
        allowed = {"label", "degeneracy", "orientation", *VALLEY_PARAMETERS}
        for key in raw:
            if key not in allowed:
                raise CaseError(f"{path}.{key}: unknown field.{_hint(key, allowed)} Allowed: {', '.join(sorted(allowed))}")
        deg = raw.get("degeneracy")
        if isinstance(deg, bool) or not isinstance(deg, int) or deg < 1:
            raise CaseError(f"{path}.degeneracy: expected a positive integer, got {deg!r}")
        params = {}
        for name in VALLEY_PARAMETERS:
            if name in raw:
                p = _parameter(raw[name], f"{path}.{name}", references, allow_plain)
                _check_positive(name, p, f"{path}.{name}")
                params[name] = p.value
            elif name != "offset_eV":
                raise CaseError(f"{path}.{name}: missing")
        valley = Valley(str(raw.get("label", f"{deg}-fold")), deg, params["quantization_mass"],
                        params["dos_mass"], params.get("offset_eV", 0.0))
        if with_orientation:
            orient = raw.get("orientation")
            if orient not in ("100", "110", "111"):
                raise CaseError(f"{path}.orientation: {orient!r} not allowed; allowed: \"100\", \"110\", \"111\"")
            out.append((orient, valley))
        else:
            out.append(valley)
    return tuple(out)


def _mix(name, raw, resolved: dict, key_path: str, references) -> dict:
    """Linear interpolation of two dielectrics' raw parameter tables."""
    spec = raw["mix"]
    if not isinstance(spec, dict) or set(spec) - {"of", "fraction"}:
        raise CaseError(f"{key_path}.mix: expected {{ of = [\"A\", \"B\"], fraction = x }}")
    of, x = spec.get("of"), spec.get("fraction")
    if not (isinstance(of, list) and len(of) == 2 and all(isinstance(s, str) for s in of)):
        raise CaseError(f"{key_path}.mix.of: expected two dielectric names, got {of!r}")
    if isinstance(x, bool) or not isinstance(x, (int, float)) or not 0.0 <= x <= 1.0:
        raise CaseError(f"{key_path}.mix.fraction: expected a number in [0, 1] (share of {of[1]!r}), got {x!r}")
    ends = []
    for other in of:
        if other not in resolved or resolved[other].get("kind") != "dielectric":
            raise CaseError(f"{key_path}.mix.of: {other!r} is not a dielectric defined before {name!r}."
                            f"{_hint(other, [n for n, r in resolved.items() if r.get('kind') == 'dielectric'])}")
        ends.append(resolved[other])
    out = {k: v for k, v in raw.items() if k != "mix"}
    out.setdefault("kind", "dielectric")
    for param in DIELECTRIC_PARAMETERS:
        a, b = ends[0].get(param), ends[1].get(param)
        if a is None or b is None or param in out:
            continue
        pa, pb = (_parameter(v, f"{key_path}.{param}", references, True) for v in (a, b))
        value = (1 - x) * pa.value + x * pb.value
        entry = {"value": value, "source": "derived", "status": "computed",
                 "note": f"linear mix {1 - x:g} {of[0]} + {x:g} {of[1]} (common practice; barriers fall and masses "
                         "rise with N content, Ng2004)"}
        if pa.low is not None and pb.low is not None:
            entry["low"] = min((1 - x) * pa.low + x * pb.low, value)
            entry["high"] = max((1 - x) * pa.high + x * pb.high, value)
        out[param] = entry
    return out


def _merge_raw(base: dict, extra: Mapping, where: str) -> dict:
    merged = copy.deepcopy(base)
    if not isinstance(extra, Mapping):
        raise CaseError(f"{where}: expected a table of materials")
    for name, table in extra.items():
        if not isinstance(table, Mapping):
            raise CaseError(f"{where}.{name}: expected a table of parameters, got {table!r}")
        if name in merged:
            entry = merged[name]
            for key, value in table.items():
                if key == "mix":
                    entry = {k: v for k, v in entry.items() if k in ("kind", "description")}
                    entry["mix"] = value
                elif key in ("valleys", "hole_bands"):
                    entry[key] = copy.deepcopy(value)
                else:
                    entry[key] = copy.deepcopy(value)
            merged[name] = entry
        else:
            merged[name] = copy.deepcopy(dict(table))
    return merged


_LIBRARY_RAW: dict | None = None
_REFERENCES: dict | None = None


def _library_raw():
    global _LIBRARY_RAW, _REFERENCES
    if _LIBRARY_RAW is None:
        _LIBRARY_RAW = _read_toml(LIBRARY_FILE, "materials library")
        refs = _read_toml(REFERENCES_FILE, "references")
        _REFERENCES = {k: v.get("text", "") for k, v in refs.items()}
    return _LIBRARY_RAW, _REFERENCES


def load_materials(files=(), overrides: Mapping | None = None, *, overrides_key: str = "materials") -> MaterialLibrary:
    """The materials library, with optional user files and per-case overrides.

    Parameters
    ----------
    files : sequence of paths
        User TOML files in the library's format; their materials add to or
        replace parameters of the shipped ones (values need a source). A user
        file may carry its own `[references]` table.
    overrides : mapping
        Per-case overrides `{material: {parameter: value or {value, source}}}`;
        plain numbers are recorded with the source "case override".
    """
    base, references = _library_raw()
    references = dict(references)
    raw_all = copy.deepcopy(base)
    for f in files:
        extra = _read_toml(Path(f), f"materials file {str(f)!r}")
        refs = extra.pop("references", {})
        if not isinstance(refs, dict):
            raise CaseError(f"materials file {f}: [references] must be a table")
        references.update({k: (v.get("text", "") if isinstance(v, dict) else str(v)) for k, v in refs.items()})
        raw_all = _merge_raw(raw_all, extra, f"materials file {f}")
    user_names = set()
    known_names = list(raw_all)  # the library and the materials files, before the case's overrides
    if overrides:
        raw_all = _merge_raw(raw_all, overrides, overrides_key)
        user_names = set(overrides)

    materials: dict[str, Material] = {}
    parameters: dict[str, dict[str, Parameter]] = {}
    resolved_raw: dict[str, dict] = {}
    for name, raw in raw_all.items():
        key_path = f"{overrides_key}.{name}" if name in user_names else f"materials.{name}"
        if not isinstance(raw, dict):
            raise CaseError(f"{key_path}: expected a table")
        if "mix" in raw:
            raw = _mix(name, raw, resolved_raw, key_path, references)
        resolved_raw[name] = raw
        kind = raw.get("kind")
        if kind is None and name in user_names and name not in known_names and "mix" not in raw:
            raise CaseError(f"{key_path}: unknown material {name!r}.{_hint(name, known_names)} An override needs "
                            f"the name of a known material ({', '.join(known_names)}); a new one needs `kind` or `mix`")
        if kind not in KINDS:
            raise CaseError(f"{key_path}.kind: {kind!r} not allowed; allowed: {', '.join(KINDS)}"
                            + ("" if kind else " (a new material needs `kind`, or `mix`)"))
        allowed = PARAMETERS_BY_KIND[kind]
        allow_plain = name in user_names
        params: dict[str, Parameter] = {}
        for key, value in raw.items():
            if key in ("kind", "description", "valleys", "hole_bands"):
                continue
            if key not in allowed:
                raise CaseError(f"{key_path}.{key}: unknown parameter for a {kind}.{_hint(key, allowed)} "
                                f"Allowed: {', '.join(allowed)}")
            p = _parameter(value, f"{key_path}.{key}", references, allow_plain)
            _check_positive(key, p, f"{key_path}.{key}")
            params[key] = p
        parameters[name] = params
        values = {k: p.value for k, p in params.items()}
        desc = str(raw.get("description", ""))
        try:
            if kind == "metal":
                _require(params, ("work_function_eV",), key_path)
                materials[name] = Metal(name, values["work_function_eV"], desc)
            elif kind == "dielectric":
                _require(params, DIELECTRIC_REQUIRED, key_path)
                materials[name] = Dielectric(name=name, description=desc, **values)
            else:
                _require(params, tuple(SEMICONDUCTOR_PARAMETERS), key_path)
                valleys = _build_valleys(raw.get("valleys", []), f"{key_path}.valleys", references,
                                         allow_plain, True)
                holes = _build_valleys(raw.get("hole_bands", []), f"{key_path}.hole_bands", references,
                                       allow_plain, False)
                materials[name] = Semiconductor(name=name, description=desc, valleys=valleys,
                                                hole_bands=holes, **values)
        except TypeError as err:  # pragma: no cover - guarded by _require
            raise CaseError(f"{key_path}: {err}") from None
    return MaterialLibrary(materials, parameters, references, tuple(str(f) for f in files))


def _require(params, names, key_path):
    for n in names:
        if n not in params:
            raise CaseError(f"{key_path}.{n}: missing (required for this kind of material)")


__all__ = ["load_materials", "MaterialLibrary", "Parameter", "Valley", "Metal", "Dielectric",
           "Semiconductor", "LIBRARY_FILE", "REFERENCES_FILE"]
