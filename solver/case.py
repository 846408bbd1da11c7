"""Case files: a TOML schema of our own, parsed into frozen dataclasses.

Everything is validated here, before any computation. Every bad input raises
`CaseError` with one line: the key path, the value, what is allowed, and the
closest valid name for a misspelling.

Schema (keys carry their unit; layers are listed from the gate to the channel):

    title = "..."                      optional
    temperature_K = 300.0              optional, default 300
    materials_file = "my.toml"         optional, relative to the case file

    [gate]       material = "TaN" | "Si" (poly-Si); work_function_eV (override);
                 donors_cm3 / acceptors_cm3 for a poly-Si gate
    [[layers]]   name, material, thickness_nm, charge_cm2 (sheet, q/cm^2), charge_position (0..1)
    [channel]    material = "Si", orientation = "100"|"110"|"111", acceptors_cm3, donors_cm3,
                 ionization = "complete"|"incomplete", interface_charge_cm2,
                 interface_trap_density_cm2_eV
    [geometry]   kind = "planar"|"cylindrical", channel_radius_nm, core_radius_nm, core_material
    [mesh]       interface_spacing_nm, max_spacing_nm, growth, depth_nm, quantum_depth_nm
    [bias]       gate_V, sweep_start_V, sweep_stop_V, sweep_count, pulse_s
    [materials.NAME]  per-case overrides or new materials (see solver.materials)
    [study]      mode, compute, keep_profiles, outputs; [[study.axis]] key + values or start/stop/count/spacing;
                 values = "literature" sweeps a material parameter over its (low, default, high)
"""
from __future__ import annotations

import copy
import math
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path
from types import MappingProxyType
from typing import Any

from solver.errors import CaseError, did_you_mean
from solver.materials import Dielectric, MaterialLibrary, Metal, Semiconductor, load_materials
from solver.units import SIO2_PERMITTIVITY_FOR_EOT

MAX_DOPING_CM3 = 1e22
STUDY_COMPUTES = ("bands", "current", "stack", "program")   # the built-in ones (solver.study)


def _hint(name, options) -> str:
    return did_you_mean(name, options)


def _fmt(value) -> str:
    return repr(value) if isinstance(value, str) else str(value)


# ------------------------------------------------------------------ records
@dataclass(frozen=True)
class Gate:
    kind: str                      # "metal" | "semiconductor"
    material: Metal | Semiconductor
    work_function_eV: float        # effective work function (metal) or flat-band value (poly-Si)
    donors_cm3: float = 0.0
    acceptors_cm3: float = 0.0


@dataclass(frozen=True)
class Layer:
    name: str
    material: Dielectric
    thickness_nm: float
    charge_cm2: float = 0.0        # net sheet charge, units of q per cm^2 (positive = positive charge)
    charge_position: float = 0.5   # 0 = gate side, 1 = channel side

    @property
    def eot_nm(self) -> float:
        """Equivalent oxide thickness t * 3.9 / eps_r (common practice)."""
        return self.thickness_nm * SIO2_PERMITTIVITY_FOR_EOT / self.material.relative_permittivity


@dataclass(frozen=True)
class Channel:
    material: Semiconductor
    orientation: str = "100"
    acceptors_cm3: float = 0.0
    donors_cm3: float = 0.0
    ionization: str = "complete"
    interface_charge_cm2: float = 0.0
    interface_trap_density_cm2_eV: float = 0.0

    @property
    def net_doping_cm3(self) -> float:
        """N_D - N_A (negative for p-type)."""
        return self.donors_cm3 - self.acceptors_cm3

    @property
    def doping_type(self) -> str:
        return "p" if self.acceptors_cm3 > self.donors_cm3 else ("n" if self.donors_cm3 > self.acceptors_cm3 else "i")


@dataclass(frozen=True)
class Geometry:
    kind: str = "planar"
    channel_radius_nm: float | None = None
    core_radius_nm: float = 0.0
    core_material: Dielectric | None = None


@dataclass(frozen=True)
class MeshSpec:
    interface_spacing_nm: float = 0.02
    max_spacing_nm: float = 1.0
    growth: float = 1.15
    depth_nm: float | None = None
    quantum_depth_nm: float | None = None


@dataclass(frozen=True)
class Bias:
    gate_V: float = 0.0
    sweep_start_V: float = -2.0
    sweep_stop_V: float = 2.0
    sweep_count: int = 81
    pulse_s: float = 1e-4          # program/erase pulse width for study points


@dataclass(frozen=True)
class StudyAxis:
    key: str
    values: tuple[float, ...]
    spacing: str = "list"          # "list" | "linear" | "log"


@dataclass(frozen=True)
class Study:
    axes: tuple[StudyAxis, ...]
    mode: str = "grid"             # "grid" | "zip"
    compute: str = "bands"
    keep_profiles: bool = False
    outputs: tuple[str, ...] = ()

    @property
    def shape(self) -> tuple[int, ...]:
        if self.mode == "zip":
            return (len(self.axes[0].values),)
        return tuple(len(a.values) for a in self.axes)


@dataclass(frozen=True)
class Case:
    title: str
    temperature_K: float
    gate: Gate
    layers: tuple[Layer, ...]
    channel: Channel
    geometry: Geometry
    mesh: MeshSpec
    bias: Bias
    study: Study | None
    text: str
    source: str
    raw: Any                       # read-only view of the parsed TOML
    materials: MaterialLibrary
    overrides: tuple[tuple[str, float], ...] = ()

    # -- derived
    @property
    def eot_nm(self) -> float:
        return sum(layer.eot_nm for layer in self.layers)

    @property
    def thickness_nm(self) -> float:
        return sum(layer.thickness_nm for layer in self.layers)

    def layer_index(self, name_or_index) -> int:
        return _layer_index([l.name for l in self.layers], name_or_index, "layers")

    # -- key paths
    def value_at(self, key_path: str) -> float:
        """The number at `key_path` (see DEVELOPERS.md), after defaults and overrides."""
        parts = _split(key_path)
        head = parts[0]
        if head == "materials" and len(parts) == 3:
            name, param = parts[1], parts[2]
            if name not in self.materials.parameters:
                raise CaseError(f"{key_path}: unknown material {name!r}.{_hint(name, self.materials)}")
            if param not in self.materials.parameters[name]:
                raise CaseError(f"{key_path}: {name} has no parameter {param!r}."
                                f"{_hint(param, self.materials.parameters[name])}")
            return self.materials.parameters[name][param].value
        obj: Any = self
        for i, part in enumerate(parts):
            if isinstance(obj, tuple) and head == "layers" and i == 1:
                obj = obj[self.layer_index(part)]
                continue
            if not hasattr(obj, part) or part.startswith("_"):
                raise CaseError(f"{key_path}: unknown key {part!r}")
            obj = getattr(obj, part)
        if isinstance(obj, bool) or not isinstance(obj, (int, float)):
            raise CaseError(f"{key_path}: not a numeric parameter (got {obj!r})")
        return float(obj)

    def with_value(self, key_path: str, value) -> "Case":
        """A re-validated copy with the number at `key_path` replaced."""
        raw = _thaw(self.raw)
        _set_path(raw, key_path, value, self)
        try:
            new = parse_dict(raw, text=self.text, source=self.source, _base_dir=_base_dir(self.source),
                             _study=False)
        except CaseError as err:
            where, _, rest = str(err).partition(": ")
            if rest and where.split(".")[-1] == _split(key_path)[-1]:
                raise CaseError(f"{key_path}: {rest}") from None
            raise CaseError(f"{key_path} = {value!r}: {err}") from None
        return replace(new, study=self.study, overrides=self.overrides + ((key_path, value),))


def _base_dir(source: str) -> Path:
    return Path(source).resolve().parent if source and not source.startswith("<") else Path.cwd()


def _split(key_path: str) -> list[str]:
    if not isinstance(key_path, str) or not key_path.strip():
        raise CaseError(f"key path: expected text like 'layers.tunnel.thickness_nm', got {key_path!r}")
    parts = key_path.replace("[", ".").replace("]", "").split(".")
    if any(p == "" for p in parts):
        raise CaseError(f"{key_path}: malformed key path")
    return parts


def _layer_index(names, name_or_index, where) -> int:
    s = str(name_or_index)
    if s.lstrip("-").isdigit():
        i = int(s)
        if not 0 <= i < len(names):
            raise CaseError(f"{where}[{i}]: no such layer; there are {len(names)} (0..{len(names) - 1})")
        return i
    if s in names:
        return names.index(s)
    raise CaseError(f"{where}.{s}: no layer named {s!r}.{_hint(s, names)} Layers: {', '.join(names)}")


def _thaw(obj):
    if isinstance(obj, (dict, MappingProxyType)):
        return {k: _thaw(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_thaw(v) for v in obj]
    return obj


def _freeze(obj):
    if isinstance(obj, dict):
        return MappingProxyType({k: _freeze(v) for k, v in obj.items()})
    if isinstance(obj, list):
        return tuple(_freeze(v) for v in obj)
    return obj


SETTABLE_SECTIONS = ("temperature_K", "gate", "layers", "channel", "geometry", "mesh", "bias", "materials")


def _set_path(raw: dict, key_path: str, value, case: Case):
    parts = _split(key_path)
    head = parts[0]
    if head not in SETTABLE_SECTIONS:
        raise CaseError(f"{key_path}: unknown key {head!r}.{_hint(head, SETTABLE_SECTIONS)} "
                        f"Allowed first parts: {', '.join(SETTABLE_SECTIONS)}")
    if head == "temperature_K" and len(parts) == 1:
        raw["temperature_K"] = value
        return
    if head == "layers":
        if len(parts) != 3:
            raise CaseError(f"{key_path}: expected layers.<name or index>.<key>")
        i = case.layer_index(parts[1])
        if parts[2] not in LAYER_KEYS or parts[2] in ("name", "material"):
            raise CaseError(f"{key_path}: {parts[2]!r} is not a numeric layer key."
                            f"{_hint(parts[2], NUMERIC_LAYER_KEYS)} Allowed: {', '.join(NUMERIC_LAYER_KEYS)}")
        raw["layers"][i][parts[2]] = value
        return
    if head == "materials":
        if len(parts) != 3:
            raise CaseError(f"{key_path}: expected materials.<material>.<parameter>")
        name, param = parts[1], parts[2]
        if name not in case.materials.parameters:
            raise CaseError(f"{key_path}: unknown material {name!r}.{_hint(name, case.materials)}")
        if param not in case.materials.parameters[name]:
            raise CaseError(f"{key_path}: {name} has no parameter {param!r}."
                            f"{_hint(param, case.materials.parameters[name])} "
                            f"Parameters: {', '.join(case.materials.parameters[name])}")
        raw.setdefault("materials", {}).setdefault(name, {})[param] = value
        return
    if len(parts) != 2:
        raise CaseError(f"{key_path}: expected {head}.<key>")
    allowed = SECTION_KEYS[head]
    if parts[1] not in allowed:
        raise CaseError(f"{key_path}: unknown key {parts[1]!r}.{_hint(parts[1], allowed)} "
                        f"Allowed: {', '.join(allowed)}")
    raw.setdefault(head, {})[parts[1]] = value


# ----------------------------------------------------------------- parsing
# Lowest case temperature: at 12 K n_i = sqrt(Nc Nv) exp(-Eg/2kT) of Si underflows to 0 and at
# 30 K the supply function of the stack current overflows (both measured on the demo cell);
# 50 K keeps a margin.
MIN_TEMPERATURE_K = 50.0

TOP_KEYS = ("title", "temperature_K", "materials_file", "gate", "layers", "channel", "geometry",
            "mesh", "bias", "materials", "study")
GATE_KEYS = ("material", "work_function_eV", "donors_cm3", "acceptors_cm3")
LAYER_KEYS = ("name", "material", "thickness_nm", "charge_cm2", "charge_position")
NUMERIC_LAYER_KEYS = ("thickness_nm", "charge_cm2", "charge_position")
CHANNEL_KEYS = ("material", "orientation", "acceptors_cm3", "donors_cm3", "ionization",
                "interface_charge_cm2", "interface_trap_density_cm2_eV")
GEOMETRY_KEYS = ("kind", "channel_radius_nm", "core_radius_nm", "core_material")
MESH_KEYS = ("interface_spacing_nm", "max_spacing_nm", "growth", "depth_nm", "quantum_depth_nm")
BIAS_KEYS = ("gate_V", "sweep_start_V", "sweep_stop_V", "sweep_count", "pulse_s")
STUDY_KEYS = ("mode", "compute", "keep_profiles", "outputs", "axis")
AXIS_KEYS = ("key", "values", "start", "stop", "count", "spacing")
SECTION_KEYS = {"gate": GATE_KEYS, "channel": CHANNEL_KEYS, "geometry": GEOMETRY_KEYS,
                "mesh": MESH_KEYS, "bias": BIAS_KEYS}


def _check_keys(table, allowed, where):
    if not isinstance(table, dict):
        raise CaseError(f"{where}: expected a table, got {_fmt(table)}")
    for key in table:
        if key not in allowed:
            prefix = f"{where}." if where else ""
            raise CaseError(f"{prefix}{key}: unknown key.{_hint(key, allowed)} Allowed: {', '.join(allowed)}")


def _number(table, key, where, *, default=None, required=False, minimum=None, exclusive=True,
            maximum=None, allow_none=False):
    path = f"{where}.{key}" if where else key
    if key not in table:
        if required:
            raise CaseError(f"{path}: missing (a number is required)")
        return default
    value = table[key]
    if value is None and allow_none:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise CaseError(f"{path}: expected a number, got {_fmt(value)}")
    value = float(value)
    if not math.isfinite(value):
        raise CaseError(f"{path}: expected a finite number, got {value}")
    if minimum is not None:
        if exclusive and not value > minimum:
            raise CaseError(f"{path}: must be > {minimum:g}, got {value:g}")
        if not exclusive and not value >= minimum:
            raise CaseError(f"{path}: must be >= {minimum:g}, got {value:g}")
    if maximum is not None and not value <= maximum:
        raise CaseError(f"{path}: must be <= {maximum:g}, got {value:g}")
    return value


def _string(table, key, where, *, default=None, choices=None):
    path = f"{where}.{key}" if where else key
    if key not in table:
        if default is None:
            raise CaseError(f"{path}: missing" + (f" (one of {', '.join(map(repr, choices))})" if choices else ""))
        return default
    value = table[key]
    if not isinstance(value, str):
        if choices and isinstance(value, int) and str(value) in choices:
            return str(value)
        raise CaseError(f"{path}: expected text, got {_fmt(value)}")
    if choices and value not in choices:
        raise CaseError(f"{path}: {value!r} is not allowed.{_hint(value, choices)} "
                        f"Allowed: {', '.join(map(repr, choices))}")
    return value


def load_case(path) -> Case:
    """Read and validate a TOML case file; raises CaseError with one clear line."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CaseError(f"case file {str(path)!r} not found") from None
    except IsADirectoryError:
        raise CaseError(f"case file {str(path)!r} is a directory, not a TOML file") from None
    except (OSError, UnicodeDecodeError) as err:
        raise CaseError(f"case file {str(path)!r} cannot be read ({err})") from None
    return parse_case(text, source=str(p))


def parse_case(text: str, source: str = "<string>") -> Case:
    """Parse and validate the text of a case file."""
    if not text.strip():
        raise CaseError(f"{source}: the case file is empty; it needs at least [gate], [[layers]] and [channel] "
                        "(see cases/mos-capacitor.toml)")
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise CaseError(f"{source}: not valid TOML: {err}") from None
    return parse_dict(raw, text=text, source=source, _base_dir=_base_dir(source))


def parse_dict(raw: dict, *, text: str = "", source: str = "<dict>", _base_dir: Path | None = None,
               _study: bool = True) -> Case:
    """Validate an already parsed case table."""
    if not raw:
        raise CaseError(f"{source}: the case is empty; it needs at least [gate], [[layers]] and [channel]")
    _check_keys(raw, TOP_KEYS, "")
    title = raw.get("title", Path(source).stem if not source.startswith("<") else "case")
    if not isinstance(title, str):
        raise CaseError(f"title: expected text, got {_fmt(title)}")
    temperature = _number(raw, "temperature_K", "", default=300.0, maximum=1500.0)
    if temperature < MIN_TEMPERATURE_K:
        raise CaseError(f"temperature_K: must be >= {MIN_TEMPERATURE_K:g} K, got {temperature:g} (below it the "
                        "channel's carrier statistics leave the range of double precision)")

    files = ()
    if "materials_file" in raw:
        mf = raw["materials_file"]
        if not isinstance(mf, str):
            raise CaseError(f"materials_file: expected a path as text, got {_fmt(mf)}")
        mp = Path(mf)
        if not mp.is_absolute():
            mp = (_base_dir or Path.cwd()) / mp
        if not mp.is_file():
            raise CaseError(f"materials_file: {mf!r} " + ("is a directory" if mp.is_dir() else "not found")
                            + f" (looked for {mp}; a relative path is taken from the case file's directory)")
        files = (mp,)
    overrides = raw.get("materials")
    if overrides is not None and not isinstance(overrides, dict):
        raise CaseError(f"materials: expected tables [materials.NAME], got {_fmt(overrides)}")
    lib = load_materials(files, overrides)

    for section in ("gate", "channel"):
        if section not in raw:
            raise CaseError(f"{section}: missing section [{section}]")
    if "layers" not in raw:
        raise CaseError("layers: missing; at least one [[layers]] table (gate side first) is needed")

    gate = _parse_gate(raw["gate"], lib, temperature)
    layers = _parse_layers(raw["layers"], lib)
    channel = _parse_channel(raw["channel"], lib)
    geometry = _parse_geometry(raw.get("geometry", {}), lib)
    mesh = _parse_mesh(raw.get("mesh", {}))
    bias = _parse_bias(raw.get("bias", {}))
    case = Case(title=title, temperature_K=temperature, gate=gate, layers=layers, channel=channel,
                geometry=geometry, mesh=mesh, bias=bias, study=None, text=text, source=source,
                raw=_freeze(copy.deepcopy(raw)), materials=lib)
    if "study" in raw and _study:
        case = replace(case, study=_parse_study(raw["study"], case))
    return case


def _parse_gate(t, lib, temperature) -> Gate:
    _check_keys(t, GATE_KEYS, "gate")
    name = _string(t, "material", "gate")
    mat = lib.get_kind(name, ("metal", "semiconductor"), "gate.material")
    if mat.kind == "metal":
        for key in ("donors_cm3", "acceptors_cm3"):
            if key in t:
                raise CaseError(f"gate.{key}: only a semiconductor (poly-Si) gate takes doping; {name} is a metal")
        wf = _number(t, "work_function_eV", "gate", default=mat.work_function_eV, minimum=0.0, maximum=10.0)
        return Gate("metal", mat, wf)
    nd = _number(t, "donors_cm3", "gate", default=0.0, minimum=0.0, exclusive=False, maximum=MAX_DOPING_CM3)
    na = _number(t, "acceptors_cm3", "gate", default=0.0, minimum=0.0, exclusive=False, maximum=MAX_DOPING_CM3)
    if nd == na:
        raise CaseError(f"gate: a {name} gate needs donors_cm3 (n+ poly) or acceptors_cm3 (p+ poly), "
                        f"got donors_cm3 = {nd:g}, acceptors_cm3 = {na:g}")
    if "work_function_eV" in t:
        wf = _number(t, "work_function_eV", "gate", minimum=0.0, maximum=10.0)
    else:
        # flat-band work function of the doped gate, Boltzmann estimate (Sze & Ng 2007, Sec. 4.2)
        from solver.units import BOLTZMANN_EV_K

        kt = BOLTZMANN_EV_K * temperature
        eg = mat.band_gap_eV(temperature)
        if nd > na:
            wf = mat.electron_affinity_eV + max(kt * math.log(mat.conduction_dos_cm3(temperature) / (nd - na)), 0.0)
        else:
            wf = mat.electron_affinity_eV + eg - max(kt * math.log(mat.valence_dos_cm3(temperature) / (na - nd)), 0.0)
    return Gate("semiconductor", mat, wf, nd, na)


def _parse_layers(t, lib) -> tuple[Layer, ...]:
    if isinstance(t, dict):
        raise CaseError("layers: write each layer as a [[layers]] table (a list), gate side first")
    if not isinstance(t, list) or not t:
        raise CaseError("layers: at least one dielectric layer is needed ([[layers]] with material and thickness_nm)")
    out, names = [], []
    for i, lt in enumerate(t):
        where = f"layers[{i}]"
        _check_keys(lt, LAYER_KEYS, where)
        mname = _string(lt, "material", where)
        mat = lib.get_kind(mname, ("dielectric",), f"{where}.material")
        name = lt.get("name", f"{mname.lower()}{i}")
        if not isinstance(name, str) or not name.strip() or "." in name or name.isdigit():
            raise CaseError(f"{where}.name: expected a short text without dots (not a number), got {_fmt(name)}")
        if name in names:
            raise CaseError(f"{where}.name: {name!r} is used by layers[{names.index(name)}]; names must be unique")
        names.append(name)
        thickness = _number(lt, "thickness_nm", where, required=True, minimum=0.0, maximum=1e4)
        charge = _number(lt, "charge_cm2", where, default=0.0, minimum=-1e15, exclusive=False, maximum=1e15)
        pos = _number(lt, "charge_position", where, default=0.5, minimum=0.0, exclusive=False, maximum=1.0)
        out.append(Layer(name, mat, thickness, charge, pos))
    return tuple(out)


def _parse_channel(t, lib) -> Channel:
    _check_keys(t, CHANNEL_KEYS, "channel")
    name = _string(t, "material", "channel", default="Si")
    mat = lib.get_kind(name, ("semiconductor",), "channel.material")
    orientation = _string(t, "orientation", "channel", default="100", choices=mat.orientations() or ("100",))
    na = _number(t, "acceptors_cm3", "channel", default=0.0, minimum=0.0, exclusive=False, maximum=MAX_DOPING_CM3)
    nd = _number(t, "donors_cm3", "channel", default=0.0, minimum=0.0, exclusive=False, maximum=MAX_DOPING_CM3)
    if na == nd:
        raise CaseError(f"channel: the channel needs a net doping: acceptors_cm3 (p-type) or donors_cm3 (n-type), "
                        f"got acceptors_cm3 = {na:g}, donors_cm3 = {nd:g}")
    ionization = _string(t, "ionization", "channel", default="complete", choices=("complete", "incomplete"))
    qf = _number(t, "interface_charge_cm2", "channel", default=0.0, minimum=-1e15, exclusive=False, maximum=1e15)
    dit = _number(t, "interface_trap_density_cm2_eV", "channel", default=0.0, minimum=0.0, exclusive=False,
                  maximum=1e15)
    return Channel(mat, orientation, na, nd, ionization, qf, dit)


def _parse_geometry(t, lib) -> Geometry:
    _check_keys(t, GEOMETRY_KEYS, "geometry")
    kind = _string(t, "kind", "geometry", default="planar", choices=("planar", "cylindrical"))
    if kind == "planar":
        for key in ("channel_radius_nm", "core_radius_nm", "core_material"):
            if key in t:
                raise CaseError(f"geometry.{key}: only for kind = \"cylindrical\"")
        return Geometry("planar")
    radius = _number(t, "channel_radius_nm", "geometry", required=True, minimum=0.0, maximum=1e5)
    core = _number(t, "core_radius_nm", "geometry", default=0.0, minimum=0.0, exclusive=False)
    if not core < radius:
        raise CaseError(f"geometry.core_radius_nm: must be < channel_radius_nm ({radius:g}), got {core:g}")
    core_mat = None
    if core > 0:
        cname = _string(t, "core_material", "geometry", default="SiO2")
        core_mat = lib.get_kind(cname, ("dielectric",), "geometry.core_material")
    elif "core_material" in t:
        raise CaseError("geometry.core_material: needs core_radius_nm > 0 (a hollow channel)")
    return Geometry("cylindrical", radius, core, core_mat)


def _parse_mesh(t) -> MeshSpec:
    _check_keys(t, MESH_KEYS, "mesh")
    d = MeshSpec()
    spacing = _number(t, "interface_spacing_nm", "mesh", default=d.interface_spacing_nm, minimum=0.0, maximum=10.0)
    max_spacing = _number(t, "max_spacing_nm", "mesh", default=d.max_spacing_nm, minimum=0.0, maximum=100.0)
    if max_spacing < spacing:
        raise CaseError(f"mesh.max_spacing_nm: must be >= interface_spacing_nm ({spacing:g}), got {max_spacing:g}")
    growth = _number(t, "growth", "mesh", default=d.growth, minimum=1.0, maximum=2.0)
    depth = _number(t, "depth_nm", "mesh", default=None, minimum=0.0, maximum=1e5)
    qdepth = _number(t, "quantum_depth_nm", "mesh", default=None, minimum=0.0, maximum=1e4)
    return MeshSpec(spacing, max_spacing, growth, depth, qdepth)


def _parse_bias(t) -> Bias:
    _check_keys(t, BIAS_KEYS, "bias")
    d = Bias()
    gate = _number(t, "gate_V", "bias", default=d.gate_V, minimum=-100.0, exclusive=False, maximum=100.0)
    start = _number(t, "sweep_start_V", "bias", default=d.sweep_start_V, minimum=-100.0, exclusive=False, maximum=100.0)
    stop = _number(t, "sweep_stop_V", "bias", default=d.sweep_stop_V, minimum=-100.0, exclusive=False, maximum=100.0)
    count = t.get("sweep_count", d.sweep_count)
    if isinstance(count, bool) or not isinstance(count, int) or not 2 <= count <= 100000:
        raise CaseError(f"bias.sweep_count: expected a whole number from 2 to 100000, got {_fmt(count)}")
    if start == stop:
        raise CaseError(f"bias.sweep_stop_V: must differ from sweep_start_V ({start:g})")
    pulse = _number(t, "pulse_s", "bias", default=d.pulse_s, minimum=0.0, maximum=1e4)
    return Bias(gate, start, stop, count, pulse)


def _literature_values(case: Case, key: str, where: str) -> list[float]:
    """(low, default, high) of a library parameter: the spread seen in the literature."""
    parts = _split(key)
    if parts[0] != "materials" or len(parts) != 3:
        raise CaseError(f"{where}.values: \"literature\" needs a key materials.<material>.<parameter>, got {key!r}")
    name, param = parts[1], parts[2]
    params = case.materials.parameters.get(name)
    if params is None:
        raise CaseError(f"{where}.key: unknown material {name!r}.{_hint(name, case.materials)}")
    if param not in params:
        raise CaseError(f"{where}.key: {name} has no parameter {param!r}.{_hint(param, params)}")
    p = params[param]
    if p.low is None or p.low == p.high:
        raise CaseError(f"{where}.values: {name}.{param} has no literature range in the materials data; "
                        "give the values as a list")
    return sorted({p.low, p.value, p.high})


def _parse_study(t, case: Case) -> Study:
    _check_keys(t, STUDY_KEYS, "study")
    mode = _string(t, "mode", "study", default="grid", choices=("grid", "zip"))
    # the computation is looked up in solver.study's registry when the study is planned
    # (plugins can add names); only its form is checked here
    compute = _string(t, "compute", "study", default="bands")
    if not compute.strip():
        raise CaseError(f"study.compute: expected a computation name such as {', '.join(map(repr, STUDY_COMPUTES))}, "
                        "got ''")
    keep = t.get("keep_profiles", False)
    if not isinstance(keep, bool):
        raise CaseError(f"study.keep_profiles: expected true or false, got {_fmt(keep)}")
    outputs = t.get("outputs", [])
    if not isinstance(outputs, list) or not all(isinstance(o, str) for o in outputs):
        raise CaseError(f"study.outputs: expected a list of output names, got {_fmt(outputs)}")
    axes_raw = t.get("axis")
    if not isinstance(axes_raw, list) or not axes_raw:
        raise CaseError("study.axis: at least one [[study.axis]] with key and values (or start/stop/count) is needed")
    axes = []
    for i, at in enumerate(axes_raw):
        where = f"study.axis[{i}]"
        _check_keys(at, AXIS_KEYS, where)
        key = _string(at, "key", where)
        if any(a.key == key for a in axes):
            raise CaseError(f"{where}.key: {key!r} appears twice")
        if "values" in at:
            for other in ("start", "stop", "count", "spacing"):
                if other in at:
                    raise CaseError(f"{where}.{other}: give either values or start/stop/count, not both")
            vals = at["values"]
            if vals == "literature":
                vals = _literature_values(case, key, where)
            if not isinstance(vals, list) or not vals:
                raise CaseError(f"{where}.values: expected a non-empty list of numbers, got {_fmt(vals)}")
            values = []
            for j, v in enumerate(vals):
                if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                    raise CaseError(f"{where}.values[{j}]: expected a finite number, got {_fmt(v)}")
                values.append(float(v))
            spacing = "list"
        else:
            start = _number(at, "start", where, required=True)
            stop = _number(at, "stop", where, required=True)
            count = at.get("count")
            if count is None:
                raise CaseError(f"{where}.count: missing; a range needs start, stop and count (a whole number >= 1)")
            if isinstance(count, bool) or not isinstance(count, int) or count < 1:
                raise CaseError(f"{where}.count: expected a whole number >= 1, got {_fmt(count)}")
            spacing = _string(at, "spacing", where, default="linear", choices=("linear", "log"))
            if count > 1 and start == stop:
                raise CaseError(f"{where}: empty range (start = stop = {start:g}) with count {count}; "
                                "allowed: stop different from start, or count = 1 for a single value")
            if spacing == "log":
                if not (start > 0 and stop > 0):
                    raise CaseError(f"{where}: a log range needs start and stop > 0, got {start:g}, {stop:g}")
                values = [start * (stop / start) ** (k / (count - 1)) if count > 1 else start for k in range(count)]
            else:
                values = [start + (stop - start) * k / (count - 1) if count > 1 else start for k in range(count)]
        if len(set(values)) != len(values):
            raise CaseError(f"{where}.values: repeated values")
        # every value must pass the case's own validation
        for v in (values[0], values[-1], min(values), max(values)):
            try:
                case.with_value(key, v)
            except CaseError as err:
                raise CaseError(f"{where} ({key} = {v:g}): {err}") from None
        axes.append(StudyAxis(key, tuple(values), spacing))
    if mode == "zip" and len({len(a.values) for a in axes}) != 1:
        raise CaseError("study.mode: \"zip\" needs axes of equal length, got "
                        + ", ".join(f"{a.key}: {len(a.values)}" for a in axes))
    return Study(tuple(axes), mode, compute, keep, tuple(outputs))


__all__ = ["Case", "Gate", "Layer", "Channel", "Geometry", "MeshSpec", "Bias", "Study", "StudyAxis",
           "load_case", "parse_case", "parse_dict"]
