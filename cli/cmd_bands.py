"""`tunnelstack bands CASE`: self-consistent band diagram at one gate voltage."""
from __future__ import annotations

import numpy as np

from cli.common import add_quiet, info, table

NAME = "bands"
HELP = "solve one gate voltage self-consistently; band diagram, subbands, layer fields"


def add_arguments(parser):
    parser.add_argument("case", metavar="CASE", help="case file (TOML)")
    parser.add_argument("--gate-V", type=float, default=None, metavar="V",
                        help="gate voltage (default: the case's bias.gate_V)")
    parser.add_argument("--classical", action="store_true",
                        help="classical channel charge, no Schrödinger solution")
    parser.add_argument("--boltzmann", action="store_true",
                        help="Boltzmann statistics instead of Fermi–Dirac")
    parser.add_argument("--output", metavar="FILE.h5", default=None, help="write the results (HDF5)")
    parser.add_argument("--figure", metavar="FILE.png", default=None, help="write the band diagram (PNG)")
    parser.add_argument("--current", action="store_true",
                        help="also the tunneling current the channel emits through the stack: per subband "
                             "(exact and WKB transmission) and the 3-D Tsu–Esaki estimate on the same "
                             "self-consistent barrier (electrons for a positive tunnel-layer field, holes "
                             "for a negative one)")
    add_quiet(parser)


# ---------------------------------------------------------------------- helpers shared with cmd_cv
def structure_of(case):
    """The mesh structure of a case (region extents for the figure)."""
    from solver.mesh import structure_from_case

    return structure_from_case(case)


def spans_of(structure, case):
    """Regions in x order as plot spans (nm); a metal gate, which has no
    nodes, gets a thin strip beyond the gate boundary."""
    from solver.plots.bands import Span

    x_nm = np.asarray(structure.x_m) * 1e9
    spans = []
    for reg in structure.regions:
        material = reg.material
        if reg.kind == "channel":
            material = f"{case.channel.material.name}({case.channel.orientation})"
        elif reg.kind == "gate":
            g = case.gate
            material = f"{'n+' if g.donors_cm3 > g.acceptors_cm3 else 'p+'} poly-{g.material.name}"
        spans.append(Span(reg.name, material, reg.kind, float(x_nm[reg.lo]), float(x_nm[reg.hi])))
    if case.gate.kind == "metal":
        strip = 0.05 * (x_nm[-1] - x_nm[0])
        if structure.geometry == "planar":
            x0 = float(x_nm[structure.gate_node])
            spans.insert(0, Span("gate", case.gate.material.name, "gate", x0 - strip, x0))
        else:
            x0 = float(x_nm[structure.gate_node])
            spans.append(Span("gate", case.gate.material.name, "gate", x0, x0 + strip))
    return spans


def layer_table(solution):
    """Rows (name, material, field_MV_cm, drop_V) per layer, gate first."""
    return list(zip(solution.layer_names, solution.layer_materials,
                    solution.layer_fields_MV_cm, solution.layer_voltages_V))


def shown_subbands(solution, per_valley=3, max_curves=8, floor=1e-3):
    """Indices of the subbands worth listing and drawing: the first
    `per_valley` of each valley set (the solution lists each set from its
    band edge up) that hold at least `floor` of the most populated one; at
    most `max_curves`, the most populated."""
    subbands = solution.subbands
    if not subbands:
        return []
    top = max(p for _, _, p in subbands)
    count, keep = {}, []
    for k, (valley, _e, pop) in enumerate(subbands):
        if count.get(valley, 0) >= per_valley or pop < floor * top:
            continue
        count[valley] = count.get(valley, 0) + 1
        keep.append(k)
    if len(keep) > max_curves:  # the most populated ones, listed in the solution's order
        keep = sorted(sorted(keep, key=lambda k: -subbands[k][2])[:max_curves])
    return keep


def subband_curves(solution):
    """SubbandCurve (|psi|^2 on the nodes of the Schrödinger box) per subband shown."""
    from solver.plots.bands import SubbandCurve

    psi2 = np.asarray(solution.wavefunctions, dtype=float)
    x = np.asarray(solution.x_nm, dtype=float)
    curves = []
    for k in shown_subbands(solution):
        col = psi2[:, k]
        nz = np.nonzero(col)[0]
        if nz.size == 0:
            continue
        sl = slice(nz.min(), nz.max() + 1)
        valley, energy, _ = solution.subbands[k]
        # a hole subband lies below midgap where its state is concentrated
        peak = int(np.argmax(col))
        midgap = 0.5 * (solution.conduction_band_eV[peak] + solution.valence_band_eV[peak])
        curves.append(SubbandCurve(str(valley), float(energy), x[sl], col[sl], hole=bool(energy < midgap)))
    return curves


def command_line(args, name) -> str:
    """The command line that reproduces this run (stored in the HDF5 root)."""
    parts = ["tunnelstack", name, str(args.case)]
    for key, value in sorted(vars(args).items()):
        if key in ("case", "command", "_run") or value in (None, False):
            continue
        flag = "--" + key.replace("_", "-")
        parts.append(flag if value is True else f"{flag} {value}")
    return " ".join(parts)


def _data(values, units, dims=(), description=""):
    from solver.store import Data

    return Data(values, units, dims, description)


def band_groups(solution, case):
    """The store groups of one solved bias: bands, summary, layers, subbands."""
    pos = ("position_nm",)
    arr = np.asarray
    groups = {
        "bands": {
            "position_nm": _data(arr(solution.x_nm), "nm", pos,
                                 "node position: depth from the gate (planar) or radius (cylindrical)"),
            "potential_V": _data(arr(solution.potential_V), "V", pos, "electrostatic potential"),
            "conduction_band_eV": _data(arr(solution.conduction_band_eV), "eV", pos,
                                        "conduction band edge (vacuum scale of the neutral channel)"),
            "valence_band_eV": _data(arr(solution.valence_band_eV), "eV", pos, "valence band edge"),
            "electron_density_cm3": _data(arr(solution.electron_density_cm3), "cm^-3", pos,
                                          "electron density"),
            "hole_density_cm3": _data(arr(solution.hole_density_cm3), "cm^-3", pos, "hole density"),
        },
        "summary": {
            "gate_V": _data(float(solution.gate_V), "V", (), "gate voltage"),
            "fermi_level_eV": _data(float(solution.fermi_level_eV), "eV", (), "channel Fermi level"),
            "gate_fermi_level_eV": _data(float(solution.gate_fermi_level_eV), "eV", (), "gate Fermi level"),
            "flatband_V": _data(float(solution.flatband_V), "V", (), "flat-band voltage of the stack"),
            "surface_potential_V": _data(float(solution.surface_potential_V), "V", (),
                                         "band bending at the dielectric/channel interface"),
            "semiconductor_charge_C_cm2": _data(float(solution.semiconductor_charge_C_cm2), "C/cm^2", (),
                                                "net charge per area in the semiconductor"),
            "inversion_charge_cm2": _data(float(solution.inversion_charge_cm2), "cm^-2", (),
                                          f"minority carriers ({solution.minority_carrier}) per area"),
            "majority_excess_cm2": _data(float(solution.majority_excess_cm2), "cm^-2", (),
                                         "majority carriers per area beyond the neutral density "
                                         "(positive: accumulation)"),
            "charge_centroid_nm": _data(float(solution.charge_centroid_nm), "nm", (),
                                        "minority-carrier centroid from the interface"),
            "iterations": _data(int(solution.iterations), "1", (), "self-consistent iterations"),
        },
    }
    if solution.quantum:
        for carrier in ("electron", "hole"):
            groups["summary"][f"{carrier}_subband_dos_scale"] = _data(
                float(getattr(solution, f"{carrier}_subband_dos_scale")), "1", (),
                f"factor on every {carrier} subband's 2-D density of states so that a wide "
                "flat box reproduces the bulk effective density of states")
    lay = ("layer",)
    groups["layers"] = {
        "layer": _data(np.array(solution.layer_names, dtype=object), "1", lay, "layer name, gate first"),
        "material": _data(np.array(solution.layer_materials, dtype=object), "1", lay, "layer material"),
        "thickness_nm": _data(np.array([L.thickness_nm for L in case.layers]), "nm", lay, "layer thickness"),
        "field_MV_cm": _data(np.array(solution.layer_fields_MV_cm), "MV/cm", lay,
                             "field toward the channel, at the channel-side edge of the layer"),
        "voltage_drop_V": _data(np.array(solution.layer_voltages_V), "V", lay,
                                "potential drop across the layer, gate side minus channel side"),
    }
    if solution.subbands:
        sb = ("subband",)
        psi2 = np.asarray(solution.wavefunctions, dtype=float)
        rows = np.nonzero(np.any(psi2 != 0, axis=1))[0]
        rows = np.arange(rows.min(), rows.max() + 1) if rows.size else np.arange(0)
        groups["subbands"] = {
            "subband": _data(np.arange(len(solution.subbands)), "1", sb,
                             "subband index (the order of the subband list)"),
            "valley": _data(np.array([str(s[0]) for s in solution.subbands], dtype=object), "1", sb,
                            "valley set or hole band"),
            "energy_eV": _data(np.array([float(s[1]) for s in solution.subbands]), "eV", sb,
                               "subband energy (same scale as the band edges)"),
            "population_cm2": _data(np.array([float(s[2]) for s in solution.subbands]), "cm^-2", sb,
                                    "carriers per area in the subband"),
            "position_nm": _data(np.asarray(solution.x_nm)[rows], "nm", ("position_nm",),
                                 "nodes of the Schrödinger box"),
            "probability_density_nm": _data(psi2[rows], "nm^-1", ("position_nm", "subband"),
                                            "|psi|^2 of each subband, trapezoid integral over x = 1"),
        }
    return groups


def _format_summary(solution, case) -> str:
    q = 1.602176634e-19  # C (scipy.constants.e, exact)
    mode = "quantum" if solution.quantum else "classical"
    lines = [f"{case.title}  [{case.source}]",
             f"gate {solution.gate_V:+.3f} V (flat band {solution.flatband_V:+.3f} V), {mode} channel, "
             f"{solution.statistics} statistics, {solution.iterations} iterations",
             f"surface potential {solution.surface_potential_V:+.4f} V; semiconductor charge "
             f"{solution.semiconductor_charge_C_cm2:+.4e} C/cm^2 ({solution.semiconductor_charge_C_cm2 / q:+.4e} q/cm^2)",
             f"inversion ({solution.minority_carrier}) {solution.inversion_charge_cm2:.4e} cm^-2, "
             f"centroid {solution.charge_centroid_nm:.2f} nm; majority excess "
             f"{solution.majority_excess_cm2:+.4e} cm^-2",
             ""]
    rows = [(name, mat, f"{L.thickness_nm:.3f}", f"{f:+.4f}", f"{d:+.4f}")
            for (name, mat, f, d), L in zip(layer_table(solution), case.layers)]
    lines.append(table(rows, ["layer", "material", "thickness_nm", "field_MV_cm", "drop_V"]))
    shown = shown_subbands(solution)
    if shown:
        lines.append("")
        ef = solution.fermi_level_eV
        rows = []
        for k in shown:
            v, e, p = solution.subbands[k]
            rows.append((str(v), f"{e:.4f}", f"{(e - ef) * 1e3:+.1f}", f"{p:.4e}"))
        lines.append(table(rows, ["valley", "energy_eV", "E-E_F_meV", "population_cm2"]))
        total = sum(p for _, _, p in solution.subbands)
        lines.append(f"({len(shown)} of {len(solution.subbands)} subbands listed; "
                     f"all hold {total:.4e} cm^-2; the store has every one)")
    if solution.quantum:
        lines.append(f"subband densities of states scaled to the bulk N_c, N_v of the data: "
                     f"electrons x{solution.electron_subband_dos_scale:.3f}, "
                     f"holes x{solution.hole_subband_dos_scale:.3f}")
    return "\n".join(lines)


# ---------------------------------------------------------------------- --current
def emitted_carrier(solution) -> str:
    """The carrier the channel emits toward the gate: electrons when the field in
    the channel-side layer points to the channel (gate positive), else holes."""
    return "electron" if solution.layer_fields_MV_cm[-1] >= 0 else "hole"


def current_group(result):
    """The store group of a SubbandCurrent (solver.tunneling.subband)."""
    sb = ("subband",)
    arr = np.asarray
    per = {
        "subband": (np.arange(len(result.valley)), "1", "subband index (the order of the subband list)"),
        "valley": (np.array(result.valley, dtype=object), "1", "valley set or hole band"),
        "energy_eV": (arr(result.energy_eV), "eV", "subband energy (scale of the band edges)"),
        "population_cm2": (arr(result.population_cm2), "cm^-2", "carriers per area in the subband"),
        "quantization_mass": (arr(result.quantization_mass), "m0", "mass along the quantization axis"),
        "impact_frequency_Hz": (arr(result.impact_frequency_transit_Hz), "Hz",
                                "impacts on the interface per second (semiclassical transit time)"),
        "impact_frequency_wavefunction_Hz": (arr(result.impact_frequency_wavefunction_Hz), "Hz",
                                             "impacts per second from the wavefunction at the interface "
                                             "(cross-check)"),
        "transmission": (arr(result.transmission), "1", "exact transmission at the subband energy"),
        "transmission_wkb": (arr(result.transmission_wkb), "1", "WKB transmission at the subband energy"),
        "net_factor": (arr(result.net_factor), "1",
                       "share of the population not balanced by the gate's back-flow (detailed balance)"),
        "current_A_cm2": (arr(result.current_A_cm2), "A/cm^2", "emission current of the subband, exact T"),
        "current_wkb_A_cm2": (arr(result.current_wkb_A_cm2), "A/cm^2", "emission current of the subband, WKB T"),
    }
    group = {name: _data(v, u, sb, d) for name, (v, u, d) in per.items()}
    for name, value, desc in (
            ("total_A_cm2", result.total_A_cm2, "subband-resolved emission current, exact T"),
            ("total_wkb_A_cm2", result.total_wkb_A_cm2, "subband-resolved emission current, WKB T"),
            ("tsu_esaki_A_cm2", result.tsu_esaki_A_cm2,
             "3-D Tsu–Esaki current on the same barrier (classical channel lead), exact T"),
            ("tsu_esaki_wkb_A_cm2", result.tsu_esaki_wkb_A_cm2, "3-D Tsu–Esaki current, WKB T")):
        group[name] = _data(float(value), "A/cm^2", (), desc + "; positive: emission from the channel")
    return group


def _format_current(result, solution) -> str:
    from cli.common import CAUTION

    ef = solution.fermi_level_eV
    lines = ["", f"tunneling current emitted by the channel ({result.carrier}s; positive: from the channel "
                 f"toward the gate; impact frequency from the transit time)"]
    if result.valley:
        keep = [k for k in range(len(result.valley))
                if result.population_cm2[k] >= 1e-3 * result.population_cm2.max()]
        rows = [(result.valley[k], f"{(result.energy_eV[k] - ef) * 1e3:+.1f}",
                 f"{result.population_cm2[k]:.3e}", f"{result.impact_frequency_Hz[k]:.3e}",
                 f"{result.transmission[k]:.3e}", f"{result.transmission_wkb[k]:.3e}",
                 f"{result.current_A_cm2[k]:.3e}", f"{result.current_wkb_A_cm2[k]:.3e}") for k in keep]
        lines.append(table(rows, ["valley", "E-E_F_meV", "population_cm2", "impact_Hz", "T_exact", "T_wkb",
                                  "J_exact_A_cm2", "J_wkb_A_cm2"]))
        lines.append(f"({len(keep)} of {len(result.valley)} subbands listed; the store has every one)")
    else:
        lines.append(f"no quantized {result.carrier} subbands: no subband current")
    lines.append(f"subband total    exact {result.total_A_cm2:+.4e} A/cm^2   WKB {result.total_wkb_A_cm2:+.4e} A/cm^2")
    lines.append(f"3-D Tsu–Esaki    exact {result.tsu_esaki_A_cm2:+.4e} A/cm^2   WKB "
                 f"{result.tsu_esaki_wkb_A_cm2:+.4e} A/cm^2  (same barrier, classical channel lead)")
    lines.append(CAUTION)
    return "\n".join(lines)


def run(args) -> int:
    from solver import load_case, solve

    from cli.common import check_output_file

    case = load_case(args.case)
    check_output_file(args.output, "--output")
    check_output_file(args.figure, "--figure")
    gate_V = case.bias.gate_V if args.gate_V is None else float(args.gate_V)
    quantum = not args.classical
    statistics = "boltzmann" if args.boltzmann else "fermi-dirac"
    solution = solve(case, gate_V, quantum=quantum, statistics=statistics)
    info(args, _format_summary(solution, case))
    emitted = None
    if getattr(args, "current", False):
        from solver.tunneling.subband import channel_subband_current

        emitted = channel_subband_current(case, solution, carrier=emitted_carrier(solution))
        info(args, _format_current(emitted, solution))
    if args.output:
        from solver.store import write_run

        groups = band_groups(solution, case)
        attrs = {"gate_V": gate_V, "quantum": quantum, "statistics": statistics}
        if emitted is not None:
            from solver.caution import CAUTION

            groups["current"] = current_group(emitted)
            attrs.update(current_carrier=emitted.carrier, caution=CAUTION)
        path = write_run(args.output, case_text=case.text, command=command_line(args, NAME),
                         groups=groups, attrs=attrs)
        info(args, f"wrote {path}")
    if args.figure:
        from solver.plots.bands import band_diagram

        path = band_diagram(
            args.figure, x_nm=solution.x_nm, conduction_band_eV=solution.conduction_band_eV,
            valence_band_eV=solution.valence_band_eV, fermi_level_eV=solution.fermi_level_eV,
            spans=spans_of(structure_of(case), case), subbands=subband_curves(solution),
            gate_fermi_level_eV=solution.gate_fermi_level_eV,
            title=f"{case.title}\nV_g = {gate_V:+.2f} V, {'quantum' if quantum else 'classical'}",
            radial=solution.geometry == "cylindrical")
        info(args, f"wrote {path}")
    return 0
