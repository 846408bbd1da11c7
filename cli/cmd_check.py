"""`tunnelstack check CASE`: validate a case and print its stack."""
from __future__ import annotations

from cli.common import table

NAME = "check"
HELP = "validate a case file and print the stack: thickness, permittivity, band offsets, EOT"


def add_arguments(parser):
    parser.add_argument("case", metavar="CASE", help="case file (TOML)")


def run(args) -> int:
    from solver.case import load_case
    from solver.stack import summarize

    case = load_case(args.case)
    if case.study is not None:
        from solver.study import plan_study

        plan_study(case)  # the computation name and outputs are checked against the registry
    s = summarize(case)
    ch = case.channel
    cyl = case.geometry.kind == "cylindrical"
    print(f"{case.title}  [{case.source}]")
    gate = case.gate
    gdesc = (f"{gate.material.name} (metal)" if gate.kind == "metal" else
             f"{gate.material.name} poly-Si gate, N_D = {gate.donors_cm3:.3g}, N_A = {gate.acceptors_cm3:.3g} cm^-3")
    print(f"gate: {gdesc}, work function {gate.work_function_eV:.3f} eV")
    doping = (f"N_A = {ch.acceptors_cm3:.3g} cm^-3" if ch.doping_type == "p" else f"N_D = {ch.donors_cm3:.3g} cm^-3")
    print(f"channel: {ch.material.name}({ch.orientation}), {ch.doping_type}-type, {doping}, "
          f"Eg = {ch.material.band_gap_eV(case.temperature_K):.4f} eV at {case.temperature_K:g} K")
    if cyl:
        g = case.geometry
        core = f", core {g.core_material.name} r < {g.core_radius_nm:g} nm" if g.core_radius_nm > 0 else " (solid)"
        print(f"geometry: cylindrical, channel radius {g.channel_radius_nm:g} nm{core}")
    else:
        print("geometry: planar")
    print()
    headers = ["#", "layer", "material", "thickness_nm", "eps_r", "CBO_eV", "VBO_eV", "EOT_nm"]
    if cyl:
        headers += ["r_in_nm", "r_out_nm"]
    rows = []
    for i, l in enumerate(s.layers):
        row = [i, l.name, l.material, f"{l.thickness_nm:.3f}", f"{l.relative_permittivity:.3g}",
               f"{l.conduction_offset_eV:.3f}", f"{l.valence_offset_eV:.3f}", f"{l.eot_nm:.3f}"]
        if cyl:
            row += [f"{l.inner_radius_nm:.2f}", f"{l.outer_radius_nm:.2f}"]
        rows.append(row)
    rows.append(["", "total", "", f"{s.thickness_nm:.3f}", "", "", "", f"{sum(l.eot_nm for l in s.layers):.3f}"]
                + (["", ""] if cyl else []))
    print(table(rows, headers, [">", "<", "<"] + [">"] * (len(headers) - 3)))
    print("(offsets: dielectric band edge above the channel conduction band / below its valence band; "
          "EOT = t * 3.9 / eps_r)")
    print()
    if cyl:
        print(f"coaxial capacitance per channel area: {s.capacitance_F_cm2:.4g} F/cm^2 "
              f"(planar-equivalent EOT at the channel surface {s.eot_nm:.3f} nm)")
    else:
        print(f"stack capacitance: {s.capacitance_F_cm2:.4g} F/cm^2")
    print(f"flat-band voltage (work functions and sheet charges, Boltzmann): {s.flat_band_V:+.3f} V")
    if case.study is not None:
        st = case.study
        print(f"study: {st.mode} of {' x '.join(str(n) for n in st.shape)} points computing '{st.compute}' over "
              + ", ".join(f"{a.key} [{a.values[0]:g} .. {a.values[-1]:g}]" for a in st.axes))
    print("case OK")
    return 0
