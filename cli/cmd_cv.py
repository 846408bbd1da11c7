"""`tunnelstack cv CASE`: quasi-static C–V, classical and quantum channel overlaid."""
from __future__ import annotations

import numpy as np

from cli.cmd_bands import _data, command_line
from cli.common import add_quiet, info, table
from solver.units import EPSILON0_F_M, SIO2_PERMITTIVITY_FOR_EOT

NAME = "cv"
HELP = "quasi-static C–V sweep, classical and quantum (Schrödinger–Poisson) channel overlaid"

# capacitance-equivalent thickness uses the SiO2 permittivity (common practice)
_EPS_SIO2_F_CM = SIO2_PERMITTIVITY_FOR_EOT * EPSILON0_F_M * 1e-2


def add_arguments(parser):
    parser.add_argument("case", metavar="CASE", help="case file (TOML)")
    parser.add_argument("--from", dest="from_V", type=float, default=None, metavar="V",
                        help="first gate voltage (default: the case's bias.sweep_start_V)")
    parser.add_argument("--to", dest="to_V", type=float, default=None, metavar="V",
                        help="last gate voltage (default: bias.sweep_stop_V)")
    parser.add_argument("--count", type=int, default=None, metavar="N",
                        help="number of gate voltages, >= 3 (default: bias.sweep_count)")
    parser.add_argument("--boltzmann", action="store_true",
                        help="Boltzmann statistics instead of Fermi–Dirac")
    parser.add_argument("--output", metavar="FILE.h5", default=None, help="write the sweep (HDF5)")
    parser.add_argument("--figure", metavar="FILE.png", default=None, help="write the C–V figure (PNG)")
    add_quiet(parser)


def _sweep(case, args):
    from solver.errors import CaseError

    start = case.bias.sweep_start_V if args.from_V is None else args.from_V
    stop = case.bias.sweep_stop_V if args.to_V is None else args.to_V
    count = case.bias.sweep_count if args.count is None else args.count
    if not (np.isfinite(start) and np.isfinite(stop)) or start == stop:
        where = ("--from/--to" if args.from_V is not None or args.to_V is not None
                 else "bias.sweep_start_V/sweep_stop_V")
        raise CaseError(f"{where}: need two different finite voltages, got {start:g} and {stop:g}")
    if count < 3:
        where = "--count" if args.count is not None else "bias.sweep_count"
        raise CaseError(f"{where}: the C–V sweep needs at least 3 gate voltages, got {count}")
    return np.linspace(start, stop, count)


def cv_groups(classical, quantum):
    ax = ("gate_V",)
    g = {"gate_V": _data(np.asarray(classical.gate_V), "V", ax, "gate voltage")}
    for tag, r in (("classical", classical), ("quantum", quantum)):
        g[f"capacitance_{tag}_F_cm2"] = _data(np.asarray(r.capacitance_F_cm2), "F/cm^2", ax,
                                              f"quasi-static capacitance, {tag} channel")
        g[f"gate_charge_{tag}_C_cm2"] = _data(np.asarray(r.gate_charge_C_cm2), "C/cm^2", ax,
                                              f"gate charge per area, {tag} channel")
        g[f"surface_potential_{tag}_V"] = _data(np.asarray(r.surface_potential_V), "V", ax,
                                                f"band bending at the interface, {tag} channel")
        g[f"inversion_charge_{tag}_cm2"] = _data(np.asarray(r.inversion_charge_cm2), "cm^-2", ax,
                                                 f"minority carriers per area, {tag} channel")
        g[f"iterations_{tag}"] = _data(np.asarray(r.iterations), "1", ax,
                                       f"self-consistent iterations, {tag} channel")
    g["oxide_capacitance_F_cm2"] = _data(float(classical.oxide_capacitance_F_cm2), "F/cm^2", (),
                                         "series capacitance of the dielectric stack")
    g["flatband_V"] = _data(float(classical.flatband_V), "V", (), "flat-band voltage")
    return {"cv": g}


def _format(case, classical, quantum) -> str:
    v = classical.gate_V
    cox = classical.oxide_capacitance_F_cm2
    step = max(1, int(np.ceil(v.size / 11)))
    picks = sorted(set(range(0, v.size, step)) | {v.size - 1})
    rows = []
    for i in picks:
        cc, cq = classical.capacitance_F_cm2[i], quantum.capacitance_F_cm2[i]
        rows.append((f"{v[i]:+.3f}", f"{cc * 1e6:.4f}", f"{cq * 1e6:.4f}", f"{cc / cox:.3f}", f"{cq / cox:.3f}",
                     f"{quantum.surface_potential_V[i]:+.4f}"))
    lines = [f"{case.title}  [{case.source}]",
             f"{v.size} gate voltages {v[0]:+.3f} .. {v[-1]:+.3f} V, {classical.statistics} statistics; "
             f"stack capacitance {cox * 1e6:.4f} uF/cm^2, flat band {classical.flatband_V:+.3f} V", "",
             table(rows, ["gate_V", "C_classical_uF_cm2", "C_quantum_uF_cm2", "C_cl/C_stack",
                          "C_qm/C_stack", "psi_s_quantum_V"])]
    # capacitance-equivalent thickness at the sweep end with the strongest inversion
    end = int(np.argmax(np.abs(quantum.inversion_charge_cm2)))
    cet_q = _EPS_SIO2_F_CM / quantum.capacitance_F_cm2[end] * 1e7
    cet_c = _EPS_SIO2_F_CM / classical.capacitance_F_cm2[end] * 1e7
    lines.append("")
    eot = f"EOT {case.eot_nm:.3f} nm"
    if case.geometry.kind == "cylindrical":  # compare with the coaxial stack's own equivalent thickness
        eot += f"; planar-equivalent at the channel surface {_EPS_SIO2_F_CM / cox * 1e7:.3f} nm"
    lines.append(f"at {v[end]:+.3f} V: capacitance-equivalent thickness {cet_q:.3f} nm quantum, "
                 f"{cet_c:.3f} nm classical ({eot})")
    return "\n".join(lines)


def run(args) -> int:
    from solver import load_case
    from solver.cv import capacitance_voltage

    from cli.common import check_output_file

    case = load_case(args.case)
    gate_V = _sweep(case, args)
    check_output_file(args.output, "--output")
    check_output_file(args.figure, "--figure")
    statistics = "boltzmann" if args.boltzmann else "fermi-dirac"
    classical = capacitance_voltage(case, gate_V, quantum=False, statistics=statistics)
    quantum = capacitance_voltage(case, gate_V, quantum=True, statistics=statistics)
    info(args, _format(case, classical, quantum))
    if args.output:
        from solver.store import write_run

        path = write_run(args.output, case_text=case.text, command=command_line(args, NAME),
                         groups=cv_groups(classical, quantum), attrs={"statistics": statistics})
        info(args, f"wrote {path}")
    if args.figure:
        from solver.plots.bands import cv_figure

        path = cv_figure(args.figure, gate_V=gate_V,
                         curves={"classical": classical.capacitance_F_cm2,
                                 "quantum (Schrödinger–Poisson)": quantum.capacitance_F_cm2},
                         oxide_capacitance_F_cm2=classical.oxide_capacitance_F_cm2,
                         title=f"{case.title}\nquasi-static C–V, {statistics}")
        info(args, f"wrote {path}")
    return 0
