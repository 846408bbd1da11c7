"""`tunnelstack materials`: the materials library with sources."""
from __future__ import annotations

import json

from cli.common import table

NAME = "materials"
HELP = "list the materials library (parameters, literature ranges and sources)"


def add_arguments(parser):
    parser.add_argument("names", nargs="*", metavar="MATERIAL",
                        help="show every parameter of these materials with its source and range")
    parser.add_argument("--json", action="store_true", help="print as JSON: the named materials, or the whole library")
    parser.add_argument("--materials-file", action="append", default=[], metavar="FILE",
                        help="merge a materials file of your own (TOML, same format as the library)")


def _g(v, fmt="{:.3g}"):
    return "-" if v is None else fmt.format(v)


def run(args) -> int:
    from solver.materials import load_materials

    lib = load_materials(args.materials_file)
    for name in args.names:
        if name not in lib:
            lib.get_kind(name, ("metal", "dielectric", "semiconductor"), "materials")  # CaseError with a hint
    if args.json:
        out = {}
        for name, mat in lib.items():
            if args.names and name not in args.names:
                continue
            out[name] = {"kind": mat.kind, "description": getattr(mat, "description", ""),
                         "parameters": {k: {"value": p.value, "source": p.source,
                                            "reference": lib.references.get(p.source, p.source),
                                            "status": p.status, "low": p.low, "high": p.high, "note": p.note}
                                        for k, p in lib.parameters[name].items()}}
            if mat.kind == "semiconductor":
                out[name]["valleys"] = [dict(orientation=o, **v.__dict__) for o, v in mat.valleys]
                out[name]["hole_bands"] = [v.__dict__ for v in mat.hole_bands]
        print(json.dumps(out, indent=2))
        return 0
    if args.names:
        for name in args.names:
            mat = lib[name]
            print(f"{name} ({mat.kind}): {getattr(mat, 'description', '')}")
            rows = []
            for k, p in lib.parameters[name].items():
                rng = "" if p.low is None else f"{p.low:.4g} .. {p.high:.4g}"
                rows.append([k, f"{p.value:.4g}", rng, p.status, p.source])
            print(table(rows, ["parameter", "value", "range", "status", "source"], ["<", ">", ">", "<", "<"]))
            if mat.kind == "semiconductor":
                vrows = [[o, v.label, v.degeneracy, f"{v.quantization_mass:.3f}", f"{v.dos_mass:.3f}"]
                         for o, v in mat.valleys]
                vrows += [["holes", v.label, v.degeneracy, f"{v.quantization_mass:.3f}", f"{v.dos_mass:.3f}"]
                          for v in mat.hole_bands]
                print(table(vrows, ["surface", "valley set", "g_v", "m_z", "m_d"]))
            used = sorted({p.source for p in lib.parameters[name].values()})
            print("sources:")
            for key in used:
                print(f"  {key}: {lib.references.get(key, key)}")
            print()
        return 0
    si = next((m for m in lib.values() if m.kind == "semiconductor"), None)
    print("Dielectrics (offsets to Si from the electron affinities; masses in m0)")
    rows = []
    for name, m in lib.items():
        if m.kind != "dielectric":
            continue
        cbo = m.conduction_offset_eV(si) if si else None
        vbo = m.valence_offset_eV(si) if si else None
        rows.append([name, _g(m.relative_permittivity), _g(m.band_gap_eV), _g(m.electron_affinity_eV),
                     _g(cbo), _g(vbo), _g(m.electron_mass), _g(m.hole_mass), _g(m.trap_depth_eV),
                     _g(m.trap_density_cm3)])
    print(table(rows, ["name", "eps_r", "Eg_eV", "affinity_eV", "CBO_eV", "VBO_eV", "m_e", "m_h",
                       "trap_depth_eV", "traps_cm3"]))
    print("\nSemiconductors (300 K)")
    rows = [[n, _g(m.relative_permittivity), _g(m.band_gap_eV(300.0), "{:.4f}"), _g(m.electron_affinity_eV),
             _g(m.conduction_dos_cm3(300.0)), _g(m.valence_dos_cm3(300.0)), _g(m.intrinsic_density_cm3(300.0)),
             ", ".join(m.orientations())]
            for n, m in lib.items() if m.kind == "semiconductor"]
    print(table(rows, ["name", "eps_r", "Eg_eV", "affinity_eV", "Nc_cm3", "Nv_cm3", "ni_cm3", "surfaces"]))
    print("\nGate metals")
    rows = [[n, _g(m.work_function_eV)] for n, m in lib.items() if m.kind == "metal"]
    print(table(rows, ["name", "work_function_eV"]))
    n_assumed = sum(p.source == "assumed" for ps in lib.parameters.values() for p in ps.values())
    n_total = sum(len(ps) for ps in lib.parameters.values())
    print(f"\n{n_total} parameters, each with a source; {n_assumed} marked 'assumed'. "
          "`tunnelstack materials NAME` shows sources and literature ranges.")
    return 0
