"""`tunnelstack cell CASE`: program, erase, ISPP and retention of a charge-trap cell.

Tabulates the tunneling currents of the case's stack once, then integrates the
stored charge during a program pulse, an erase pulse from the programmed
state, an ISPP staircase from the case's stored charge, and the retention of
both states at a temperature; prints a short table and writes one HDF5 file
with three PNG figures beside it. The physics and its assumptions are in
solver/cell.py.
"""
from __future__ import annotations


import numpy as np

from cli.common import add_quiet, info, table, bad_input, output_paths

NAME = "cell"
HELP = "charge-trap cell: program / erase transients, ISPP, retention and the threshold window"

FIGURES = {"transients": "transients.png", "ispp": "ispp.png", "retention": "retention.png"}

# Defaults for the demo planar cell (cases/demo-cell.toml): ISPP 14..20 V in 0.5 V
# steps of 10 us and an 18 V program pulse keep the tunnel field below ~15 MV/cm
# (physics-data Sec. 5.2: ISPP from 14-16 V up to ~20 V, 10-20 us steps; common practice).
DEFAULTS = dict(program_V=18.0, pulse_s=1e-4, erase_V=-18.0, erase_s=1e-3, ispp_start_V=14.0,
                ispp_step_V=0.5, ispp_pulse_s=1e-5, ispp_count=13, retention_K=328.15, retention_years=10.0)


def add_arguments(parser):
    d = DEFAULTS
    parser.add_argument("case", metavar="CASE", help="case file (TOML)")
    parser.add_argument("--program-V", type=float, default=d["program_V"], metavar="V",
                        help=f"program pulse gate voltage (default {d['program_V']:g} V)")
    parser.add_argument("--pulse-s", type=float, default=d["pulse_s"], metavar="S",
                        help=f"program pulse length (default {d['pulse_s']:g} s)")
    parser.add_argument("--erase-V", type=float, default=d["erase_V"], metavar="V",
                        help=f"erase pulse gate voltage, negative (default {d['erase_V']:g} V)")
    parser.add_argument("--erase-s", type=float, default=d["erase_s"], metavar="S",
                        help=f"erase pulse length (default {d['erase_s']:g} s)")
    parser.add_argument("--ispp-start-V", type=float, default=d["ispp_start_V"], metavar="V",
                        help=f"first ISPP pulse (default {d['ispp_start_V']:g} V)")
    parser.add_argument("--ispp-step-V", type=float, default=d["ispp_step_V"], metavar="V",
                        help=f"ISPP step (default {d['ispp_step_V']:g} V)")
    parser.add_argument("--ispp-pulse-s", type=float, default=d["ispp_pulse_s"], metavar="S",
                        help=f"length of each ISPP pulse (default {d['ispp_pulse_s']:g} s)")
    parser.add_argument("--ispp-count", type=int, default=d["ispp_count"], metavar="N",
                        help=f"number of ISPP pulses (default {d['ispp_count']})")
    parser.add_argument("--retention-K", type=float, default=d["retention_K"], metavar="K",
                        help=f"storage temperature (default {d['retention_K']:g} K = 55 °C)")
    parser.add_argument("--retention-years", type=float, default=d["retention_years"], metavar="Y",
                        help=f"storage time (default {d['retention_years']:g} years)")
    parser.add_argument("--trap-spread-eV", type=float, default=0.0, metavar="EV",
                        help="Gaussian width of the trap depths for retention (default 0: one depth)")
    parser.add_argument("--capture", choices=("complete", "cross-section"), default="complete",
                        help="capture of injected electrons: complete (default) or on a straight crossing "
                             "of the empty traps (material's cross-section and density; traps fill)")
    parser.add_argument("--poole-frenkel", action="store_true",
                        help="lower the thermal emission barrier by the Poole–Frenkel term")
    out = parser.add_mutually_exclusive_group()
    out.add_argument("--output-dir", metavar="DIR", default=None,
                     help="directory for cell.h5 and the figures (default: ./<case name>-cell)")
    out.add_argument("--output", metavar="FILE.h5", default=None,
                     help="HDF5 file to write; the figures go beside it as FILE-<figure>.png")
    add_quiet(parser)


def _paths(args, case):
    return output_paths(args, case, "cell", FIGURES)


def _check(args):
    for flag, v in (("--pulse-s", args.pulse_s), ("--erase-s", args.erase_s), ("--ispp-pulse-s", args.ispp_pulse_s)):
        if not (np.isfinite(v) and 0 < v <= 1e3):
            raise bad_input(f"{flag}: {v:g} s is out of range; allowed 0 < pulse <= 1000 s")
    if not (np.isfinite(args.program_V) and 0 < args.program_V <= 60):
        raise bad_input(f"--program-V: {args.program_V:g} V is out of range; allowed 0 < V <= 60")
    if not (np.isfinite(args.erase_V) and -60 <= args.erase_V < 0):
        raise bad_input(f"--erase-V: {args.erase_V:g} V is out of range; allowed -60 <= V < 0 (a negative gate)")
    if not (np.isfinite(args.retention_K) and 200 <= args.retention_K <= 600):
        raise bad_input(f"--retention-K: {args.retention_K:g} K is out of range; allowed 200 .. 600 K")
    if not (np.isfinite(args.retention_years) and 1e-6 <= args.retention_years <= 100):
        raise bad_input(f"--retention-years: {args.retention_years:g} is out of range; allowed 1e-6 .. 100")
    if not 2 <= args.ispp_count <= 200:
        raise bad_input(f"--ispp-count: {args.ispp_count} is out of range; allowed 2 .. 200")
    if not (np.isfinite(args.ispp_step_V) and 0 < args.ispp_step_V <= 5):
        raise bad_input(f"--ispp-step-V: {args.ispp_step_V:g} V is out of range; allowed 0 < step <= 5 V")
    if not (np.isfinite(args.ispp_start_V) and 0 < args.ispp_start_V <= 60):
        raise bad_input(f"--ispp-start-V: {args.ispp_start_V:g} V is out of range; allowed 0 < V <= 60")
    if not (np.isfinite(args.trap_spread_eV) and 0 <= args.trap_spread_eV <= 1):
        raise bad_input(f"--trap-spread-eV: {args.trap_spread_eV:g} is out of range; allowed 0 .. 1 eV")


def _data(values, units, dims=(), description=""):
    from solver.store import Data

    return Data(values, units, dims, description)


def _transient_group(tr, what):
    from solver.cell import FLUX_DESCRIPTIONS, FLUX_SIGNS

    tdim = ("time_s",)
    g = {
        "time_s": _data(tr.time_s, "s", tdim, f"time since the start of the {what}"),
        "threshold_V": _data(tr.threshold_V, "V", tdim, "threshold voltage"),
        "charge_cm2": _data(tr.charge_cm2, "q/cm^2", tdim, "net stored charge in the trap layer (negative: electrons)"),
        "tunnel_field_MV_cm": _data(tr.tunnel_field_MV_cm, "MV/cm", tdim,
                                    "field in the tunnel layer at the channel, along gate -> channel"),
        "blocking_field_MV_cm": _data(tr.blocking_field_MV_cm, "MV/cm", tdim,
                                      "field in the blocking layer at the gate, along gate -> channel"),
    }
    for name, values in tr.currents_A_cm2.items():
        sign = "adds electrons" if FLUX_SIGNS[name] < 0 else "removes electrons"
        g[f"current_{name}_A_cm2"] = _data(values, "A/cm^2", tdim, f"{FLUX_DESCRIPTIONS[name]} ({sign})")
    return g


def _groups(cell, summary, prog, ers, ispp_result, keep_p, keep_e):
    s = summary
    cell_group = {
        "layer": _data(np.array(cell.layer_names, dtype=object), "1", ("layer",), "layer name, gate first"),
        "neutral_threshold_V": _data(s.neutral_threshold_V, "V", (), "threshold of the neutral cell"),
        "programmed_threshold_V": _data(s.programmed_threshold_V, "V", (), "V_T after the program pulse"),
        "erased_threshold_V": _data(s.erased_threshold_V, "V", (), "V_T after the erase pulse"),
        "window_V": _data(s.window_V, "V", (), "programmed minus erased V_T"),
        "programmed_after_V": _data(s.programmed_after_V, "V", (), "programmed V_T after the storage time"),
        "erased_after_V": _data(s.erased_after_V, "V", (), "erased V_T after the storage time"),
        "window_after_V": _data(s.window_after_V, "V", (), "window left after the storage time"),
        "programmed_charge_cm2": _data(s.programmed_charge_cm2, "q/cm^2", (), "stored charge, programmed"),
        "erased_charge_cm2": _data(s.erased_charge_cm2, "q/cm^2", (), "stored charge, erased"),
        "ispp_slope_V_per_V": _data(ispp_result.slope_V_per_V, "1", (),
                                    f"dV_T/dV_pgm over the last {ispp_result.fit_steps} ISPP steps"),
        "threshold_shift_V_cm2": _data(cell.shift_V_per_cm2, "V cm^2", (), "Delta V_T per stored q/cm^2"),
    }
    idim = ("ispp_gate_V",)
    ispp_group = {
        "ispp_gate_V": _data(ispp_result.gate_V, "V", idim, "gate voltage of each ISPP pulse"),
        "threshold_V": _data(ispp_result.threshold_V, "V", idim, "V_T after each pulse"),
        "charge_cm2": _data(ispp_result.charge_cm2, "q/cm^2", idim, "stored charge after each pulse"),
        "start_tunnel_field_MV_cm": _data(ispp_result.max_tunnel_field_MV_cm, "MV/cm", idim,
                                          "tunnel-layer field at the start of each pulse"),
    }
    tdim = ("time_s",)
    ret = {
        "time_s": _data(keep_p.time_s, "s", tdim, "storage time"),
        "programmed_threshold_V": _data(keep_p.threshold_V, "V", tdim, "V_T of the programmed state"),
        "erased_threshold_V": _data(keep_e.threshold_V, "V", tdim, "V_T of the erased state"),
        "programmed_charge_cm2": _data(keep_p.charge_cm2, "q/cm^2", tdim, "stored charge, programmed state"),
        "erased_charge_cm2": _data(keep_e.charge_cm2, "q/cm^2", tdim, "stored charge, erased state"),
    }
    for name, values in keep_p.currents_A_cm2.items():
        ret[f"programmed_current_{name}_A_cm2"] = _data(values, "A/cm^2", tdim, f"programmed state: {name}")
    return {"cell": cell_group, "program": _transient_group(prog, "program pulse"),
            "erase": _transient_group(ers, "erase pulse"), "ispp": ispp_group, "retention": ret}


def run(args) -> int:
    import time

    from solver.case import load_case
    from solver.cell import (BREAKDOWN_FIELD_MV_CM, CAUTION, SECONDS_PER_YEAR, CellSettings, design_window,
                             ispp, prepare_cell)
    from solver.store import write_run

    t_start = time.perf_counter()
    _check(args)
    case = load_case(args.case)
    settings = CellSettings(trap_spread_eV=float(args.trap_spread_eV), poole_frenkel=bool(args.poole_frenkel),
                            capture=args.capture)
    cell = prepare_cell(case, settings)
    h5, figures = _paths(args, case)
    years = float(args.retention_years)
    summary, prog, ers, keep_p, keep_e = design_window(
        cell, program_V=args.program_V, program_s=args.pulse_s, erase_V=args.erase_V, erase_s=args.erase_s,
        retention_K=args.retention_K, retention_s=years * SECONDS_PER_YEAR)
    steps = ispp(cell, args.ispp_start_V, args.ispp_step_V, args.ispp_pulse_s, int(args.ispp_count))
    elapsed = time.perf_counter() - t_start

    from cli.cmd_bands import command_line

    s = summary
    attrs = {
        "caution": CAUTION, "trap_layer": cell.layer_names[cell.trap_layer],
        "trap_depth_eV": cell.trap_depth_eV, "attempt_frequency_Hz": cell.attempt_frequency_Hz,
        "trap_spread_eV": settings.trap_spread_eV, "poole_frenkel": settings.poole_frenkel,
        "capture": settings.capture,
        "temperature_K": cell.temperature_K, "program_V": s.program_V, "program_s": s.program_s,
        "erase_V": s.erase_V, "erase_s": s.erase_s, "retention_K": s.retention_K, "retention_s": s.retention_s,
        "ispp_start_V": float(args.ispp_start_V), "ispp_step_V": float(args.ispp_step_V),
        "ispp_pulse_s": float(args.ispp_pulse_s), "ispp_count": int(args.ispp_count),
        "table_build_s": cell.build_seconds,
    }
    write_run(h5, case_text=case.text, command=command_line(args, NAME),
              groups=_groups(cell, summary, prog, ers, steps, keep_p, keep_e), attrs=attrs)

    from solver.plots.cell import ispp_figure, retention_figure, transient_figure

    written = [str(h5)]
    written.append(transient_figure(
        figures["transients"],
        program={"time_s": prog.time_s, "threshold_V": prog.threshold_V, "gate_V": prog.gate_V,
                 "start_threshold_V": prog.start_threshold_V},
        erase={"time_s": ers.time_s, "threshold_V": ers.threshold_V, "gate_V": ers.gate_V,
               "start_threshold_V": ers.start_threshold_V},
        neutral_threshold_V=cell.neutral_threshold_V, title=f"{case.title}\nprogram and erase transients",
        caution=CAUTION))
    written.append(ispp_figure(
        figures["ispp"], gate_V=steps.gate_V, threshold_V=steps.threshold_V, slope_V_per_V=steps.slope_V_per_V,
        fit_steps=steps.fit_steps, pulse_s=steps.pulse_s, start_threshold_V=steps.start_threshold_V,
        title=f"{case.title}\nISPP, {args.ispp_step_V:g} V steps", caution=CAUTION))
    written.append(retention_figure(
        figures["retention"],
        curves=[{"label": f"programmed ({s.programmed_threshold_V:.2f} V)", "time_s": keep_p.time_s,
                 "threshold_V": keep_p.threshold_V, "start_threshold_V": s.programmed_threshold_V},
                {"label": f"erased ({s.erased_threshold_V:.2f} V)", "time_s": keep_e.time_s,
                 "threshold_V": keep_e.threshold_V, "start_threshold_V": s.erased_threshold_V}],
        temperature_K=s.retention_K, target_s=s.retention_s, neutral_threshold_V=cell.neutral_threshold_V,
        title=f"{case.title}\nretention at {s.retention_K - 273.15:.0f} °C, gate grounded", caution=CAUTION))

    celsius = s.retention_K - 273.15
    rows = [
        ("neutral cell", "", "", f"{s.neutral_threshold_V:.3f}", ""),
        ("program", f"{s.program_V:+.2f}", f"{s.program_s:.3g}", f"{s.programmed_threshold_V:.3f}",
         f"{s.programmed_charge_cm2:.3e}"),
        ("erase", f"{s.erase_V:+.2f}", f"{s.erase_s:.3g}", f"{s.erased_threshold_V:.3f}",
         f"{s.erased_charge_cm2:.3e}"),
        (f"programmed after {years:g} y", "0", f"{s.retention_s:.3g}", f"{s.programmed_after_V:.3f}",
         f"{keep_p.final_charge_cm2:.3e}"),
        (f"erased after {years:g} y", "0", f"{s.retention_s:.3g}", f"{s.erased_after_V:.3f}",
         f"{keep_e.final_charge_cm2:.3e}"),
    ]
    info(args, f"{case.title}: trap layer {cell.layer_names[cell.trap_layer]!r}, "
               f"trap depth {cell.trap_depth_eV:g} eV"
               + (f" (spread {settings.trap_spread_eV:g} eV)" if settings.trap_spread_eV else "")
               + f", Delta V_T {-cell.shift_V_per_cm2 * 1e12:.4f} V per 1e12 electrons/cm^2")
    info(args, table(rows, ["state", "gate V", "time s", "V_T V", "charge q/cm^2"]))
    info(args, f"window {s.window_V:.3f} V; after {years:g} years at {s.retention_K:g} K ({celsius:.0f} °C): "
               f"{s.window_after_V:.3f} V")
    info(args, f"ISPP {args.ispp_start_V:g}..{steps.gate_V[-1]:g} V in {args.ispp_step_V:g} V steps of "
               f"{args.ispp_pulse_s:g} s: V_T {steps.start_threshold_V:.3f} -> {steps.threshold_V[-1]:.3f} V, "
               f"slope {steps.slope_V_per_V:.3f} V/V over the last {steps.fit_steps} steps")
    ispp_field = float(np.max(np.abs(steps.max_tunnel_field_MV_cm)))
    info(args, f"largest fields: tunnel {s.max_tunnel_field_MV_cm:.1f} MV/cm, blocking "
               f"{s.max_blocking_field_MV_cm:.1f} MV/cm (ISPP tunnel {ispp_field:.1f})")
    if max(s.max_tunnel_field_MV_cm, s.max_blocking_field_MV_cm, ispp_field) > BREAKDOWN_FIELD_MV_CM:
        info(args, f"note: the fields exceed {BREAKDOWN_FIELD_MV_CM:g} MV/cm, beyond dielectric breakdown of "
                   "thin oxides (common practice); lower --program-V / --erase-V / the ISPP staircase "
                   "for this cell")
    if settings.capture == "complete" and s.trap_fill_fraction is not None and s.trap_fill_fraction > 0.3:
        info(args, f"note: the programmed charge is {100 * s.trap_fill_fraction:.0f} % of the trap sheet "
                   "capacity N_T t; complete capture ignores trap filling, so the programmed V_T is an upper "
                   "estimate (--capture cross-section lets the traps fill)")
    info(args, f"tables {cell.build_seconds:.2f} s, total {elapsed:.2f} s")
    info(args, "wrote " + ", ".join(written))
    info(args, CAUTION)
    return 0
