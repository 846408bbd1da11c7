"""`tunnelstack breakdown CASE`: where WKB and Fowler–Nordheim break down.

Sweeps the field in the injecting layer (or the gate voltage), compares the
exact Tsu–Esaki current with WKB, Fowler–Nordheim and the trapezoid
direct-tunneling formula, names the regimes, maps the ratios over injecting-
layer thickness x field, and writes one HDF5 file with four PNG figures beside
it and a short table on the terminal. Planar and cylindrical (gate-all-around)
cells; in a cylinder every field is the one at the injecting interface and
the map varies the injecting layer at the case's channel radius.
"""
from __future__ import annotations

import sys

import numpy as np

from cli.common import CAUTION, add_quiet, info, table, bad_input, output_paths

NAME = "breakdown"
HELP = "exact vs WKB vs Fowler–Nordheim currents of a stack: J–F, FN plot, T(E), thickness x field map"

FIGURES = {
    "current_field": "current-field.png",
    "fowler_nordheim": "fowler-nordheim.png",
    "transmission": "transmission.png",
    "ratio_map": "ratio-map.png",
}


def add_arguments(parser):
    parser.add_argument("case", metavar="CASE", help="case file (TOML)")
    out = parser.add_mutually_exclusive_group()
    out.add_argument("--output-dir", metavar="DIR", default=None,
                     help="directory for breakdown.h5 and the figures (default: ./<case name>-breakdown)")
    out.add_argument("--output", metavar="FILE.h5", default=None,
                     help="HDF5 file to write; the figures go beside it as FILE-<figure>.png")
    parser.add_argument("--field-from", type=float, metavar="MV/cm", default=None,
                        help="first field in the injecting layer (magnitude, MV/cm)")
    parser.add_argument("--field-to", type=float, metavar="MV/cm", default=None,
                        help="last field in the injecting layer (magnitude, MV/cm)")
    parser.add_argument("--gate-from", type=float, metavar="V", default=None,
                        help="sweep the gate voltage instead: first value (V, signed)")
    parser.add_argument("--gate-to", type=float, metavar="V", default=None,
                        help="last gate voltage (V, signed)")
    parser.add_argument("--points", type=int, default=121, metavar="N",
                        help="points of the sweep (default 121, fine enough to resolve the oscillations)")
    parser.add_argument("--carrier", choices=("electron", "hole"), default="electron",
                        help="tunneling carrier (default electron)")
    parser.add_argument("--emitter", choices=("channel", "gate"),
                        default="channel",
                        help="emitting side: channel (electrons: gate positive, program) or gate "
                             "(electrons: gate negative, reverse polarity); default channel")
    parser.add_argument("--through", choices=("stack", "injecting-layer"), default="stack",
                        help="barrier: the whole stack to the far electrode (default), or only the "
                             "injecting layer, collected in the next layer's band")
    parser.add_argument("--image-force", action="store_true",
                        help="image-force lowering (optical permittivity, staircase profile; "
                             "Murphy–Good form for FN)")
    parser.add_argument("--map-thickness-from", type=float, metavar="nm", default=None,
                        help="thinnest injecting layer of the map (default 0.4 x the case's, >= 1 nm)")
    parser.add_argument("--map-thickness-to", type=float, metavar="nm", default=None,
                        help="thickest injecting layer of the map (default 2 x the case's)")
    parser.add_argument("--map-thicknesses", type=int, default=None, metavar="N",
                        help="thicknesses in the map (default 40; 20 with --image-force)")
    parser.add_argument("--map-fields", type=int, default=None, metavar="N",
                        help="fields in the map (default 60; 30 with --image-force)")
    parser.add_argument("--no-map", action="store_true", help="skip the thickness x field map")
    add_quiet(parser)


def _paths(args, case):
    return output_paths(args, case, "breakdown", FIGURES)


def _sweep(args, case, settings):
    from solver.breakdown import default_fields_MV_cm

    n = int(args.points)
    if n < 5 or n > 5000:
        raise bad_input(f"--points: {n} is out of range; allowed 5 .. 5000")
    gate = args.gate_from is not None or args.gate_to is not None
    field = args.field_from is not None or args.field_to is not None
    if gate and field:
        raise bad_input("--gate-from/--gate-to and --field-from/--field-to: give one sweep, not both")
    if gate:
        if args.gate_from is None or args.gate_to is None:
            raise bad_input("--gate-from and --gate-to: give both ends of the gate-voltage sweep")
        return None, np.linspace(args.gate_from, args.gate_to, n)
    default = default_fields_MV_cm(case, settings, count=n)
    lo = default[0] if args.field_from is None else args.field_from
    hi = default[-1] if args.field_to is None else args.field_to
    for flag, v in (("--field-from", lo), ("--field-to", hi)):
        if not (np.isfinite(v) and 0 < v <= 100):
            raise bad_input(f"{flag}: {v} MV/cm is out of range; allowed 0 < F <= 100 MV/cm (a magnitude)")
    if not hi > lo:
        raise bad_input(f"--field-to: {hi} must be above --field-from {lo}")
    return np.linspace(lo, hi, n), None


def _spectrum_fields(curve):
    """Three fields for T(E) (below, just above and well above the FN onset),
    within the emitting part of the sweep."""
    emitting = np.array([r != "none" for r in curve.regime]) & np.isfinite(curve.field_MV_cm)
    f = curve.field_MV_cm[emitting]
    lo, hi = float(f.min()), float(f.max())
    onset = curve.onset_field_MV_cm
    picks = [0.6 * onset, 1.15 * onset, 1.8 * onset] if np.isfinite(onset) else [lo, 0.5 * (lo + hi), hi]
    picks = sorted({round(float(np.clip(p, lo, hi)), 3) for p in picks})
    return picks


def _data(values, units, dims=(), description=""):
    from solver.store import Data

    return Data(values, units, dims, description)


def _groups(curve, spectra, bmap):
    fdim = ("field_MV_cm",)
    g = {
        "field_MV_cm": _data(curve.field_MV_cm, "MV/cm", fdim,
                             "field magnitude in the injecting layer at the emitter interface"),
        "gate_V": _data(curve.gate_V, "V", fdim, "gate voltage against the channel bulk"),
        "stack_V": _data(curve.stack_V, "V", fdim, "voltage across the dielectric stack, gate side minus channel side"),
        "injecting_voltage_V": _data(curve.injecting_drop_V, "V", fdim,
                                     "fall of the carrier's band edge across the injecting layer / q"),
        "surface_potential_V": _data(curve.surface_potential_V, "V", fdim,
                                     "channel band bending (classical surface-charge estimate)"),
        "layer": _data(np.array(curve.layer_names, dtype=object), "1", ("layer",), "layer name, gate first"),
        "layer_field_MV_cm": _data(curve.layer_fields_MV_cm, "MV/cm", fdim + ("layer",),
                                   "signed field along x (gate to channel) in each layer, channel-side segment"),
        "current_exact_A_cm2": _data(curve.current_exact_A_cm2, "A/cm^2", fdim,
                                     "Tsu–Esaki current with the exact transmission"),
        "current_wkb_A_cm2": _data(curve.current_wkb_A_cm2, "A/cm^2", fdim,
                                   "Tsu–Esaki current with the WKB transmission"),
        "current_fn_A_cm2": _data(curve.current_fn_A_cm2, "A/cm^2", fdim,
                                  "Fowler–Nordheim closed form of the injecting layer"),
        "current_trapezoid_A_cm2": _data(curve.current_trapezoid_A_cm2, "A/cm^2", fdim,
                                         "trapezoid (Schuegraf–Hu direct-tunneling) form of the injecting layer"),
        "ratio_exact_wkb": _data(curve.ratio("wkb"), "1", fdim, "J_exact / J_wkb"),
        "ratio_exact_fn": _data(curve.ratio("fn"), "1", fdim, "J_exact / J_fn"),
        "ratio_exact_trapezoid": _data(curve.ratio("trapezoid"), "1", fdim, "J_exact / J_trapezoid"),
        "regime": _data(np.array(curve.regime, dtype=object), "1", fdim,
                        "direct | fowler-nordheim | interference | none"),
    }
    groups = {"breakdown": g}
    sdim = ("spectrum_field_MV_cm", "energy_eV")
    groups["transmission"] = {
        "energy_eV": _data(spectra.energy_eV, "eV", ("energy_eV",),
                           "carrier energy above the emitter reference (metal: Fermi level, semiconductor: band edge)"),
        "spectrum_field_MV_cm": _data(spectra.field_MV_cm, "MV/cm", ("spectrum_field_MV_cm",),
                                      "field in the injecting layer of each spectrum"),
        "transmission_exact": _data(spectra.transmission_exact, "1", sdim, "exact transmission"),
        "transmission_wkb": _data(spectra.transmission_wkb, "1", sdim, "WKB transmission"),
        "emitter_fermi_eV": _data(spectra.emitter_fermi_eV, "eV", ("spectrum_field_MV_cm",),
                                  "emitter Fermi level above its reference"),
    }
    if bmap is not None:
        mdim = ("thickness_nm", "map_field_MV_cm")
        m = {
            "thickness_nm": _data(bmap.thickness_nm, "nm", ("thickness_nm",),
                                  f"thickness of the injecting layer ({bmap.layer_name})"),
            "map_field_MV_cm": _data(bmap.field_MV_cm, "MV/cm", ("map_field_MV_cm",),
                                     "field magnitude in the injecting layer"),
            "onset_field_MV_cm": _data(bmap.onset_field_MV_cm, "MV/cm", ("thickness_nm",),
                                       "Fowler–Nordheim onset (q V_layer = barrier height)"),
            "regime_code": _data(bmap.regime_code, "1", mdim, "0 direct, 1 fowler-nordheim, 2 interference"),
        }
        for key in ("exact", "wkb", "fn", "trapezoid"):
            m[f"current_{key}_A_cm2"] = _data(getattr(bmap, f"current_{key}_A_cm2"), "A/cm^2", mdim,
                                              f"{key} current density")
        for key in ("wkb", "fn", "trapezoid"):
            m[f"ratio_exact_{key}"] = _data(bmap.ratio(key), "1", mdim, f"J_exact / J_{key}")
            m[f"within_factor_2_{key}"] = _data(bmap.within_factor(key), "1", mdim,
                                                f"1 where J_{key} is within a factor 2 of J_exact")
        groups["map"] = m
    return groups


def _fmt(v, spec=".3e"):
    return "—" if not np.isfinite(v) else format(v, spec)


def _summary_rows(curve, count=7):
    idx = np.unique(np.linspace(0, curve.field_MV_cm.size - 1, count).round().astype(int))
    rows = []
    rw, rf = curve.ratio("wkb"), curve.ratio("fn")
    for i in idx:
        rows.append((_fmt(curve.field_MV_cm[i], ".2f"), _fmt(curve.gate_V[i], "+.2f"),
                     _fmt(curve.injecting_drop_V[i], ".2f"),
                     _fmt(curve.current_exact_A_cm2[i]), _fmt(curve.current_wkb_A_cm2[i]),
                     _fmt(curve.current_fn_A_cm2[i]), _fmt(rw[i], ".3g"), _fmt(rf[i], ".3g"),
                     curve.regime[i]))
    return rows


def run(args) -> int:
    from solver.breakdown import (REGIMES, BreakdownSettings, breakdown_curve, breakdown_map,
                                  replace_settings, transmission_spectra)
    from solver.case import load_case
    from solver.errors import ComputationError
    from solver.store import write_run
    from solver.tunneling.stack import stack_data

    case = load_case(args.case)
    data = stack_data(case)
    settings = BreakdownSettings(carrier=args.carrier, emitter=args.emitter, through=args.through,
                                 image_force=bool(args.image_force))
    fields, gates = _sweep(args, case, settings)
    h5, figures = _paths(args, case)
    curve = breakdown_curve(data, field_MV_cm=fields, gate_V=gates, settings=settings)
    if all(r == "none" for r in curve.regime):
        raise bad_input("--gate-from/--gate-to: no point of the sweep emits "
                   f"{args.carrier}s from the {args.emitter}; use gate voltages of the other sign")
    if not np.any(np.isfinite(curve.current_exact_A_cm2)):
        raise ComputationError(f"the exact current did not converge at any of the {curve.field_MV_cm.size} "
                               "points of the sweep")
    spectra = transmission_spectra(data, _spectrum_fields(curve), settings=settings)
    inj = curve.injecting_layer
    bmap = None
    if not args.no_map:
        t0 = data.thickness_nm[inj]
        t_hi = args.map_thickness_to if args.map_thickness_to is not None else 2.0 * t0
        t_lo = args.map_thickness_from if args.map_thickness_from is not None else min(max(1.0, 0.4 * t0),
                                                                                        0.5 * t_hi)
        if not (0 < t_lo < t_hi <= 100):
            raise bad_input(f"--map-thickness-from/--map-thickness-to: {t_lo}..{t_hi} nm; allowed 0 < from < to <= 100")
        # the image-force staircase costs several times more per point
        n_t = args.map_thicknesses if args.map_thicknesses is not None else (20 if args.image_force else 40)
        n_f = args.map_fields if args.map_fields is not None else (30 if args.image_force else 60)
        for flag, n in (("--map-thicknesses", n_t), ("--map-fields", n_f)):
            if not 2 <= n <= 1000:
                raise bad_input(f"{flag}: {n} is out of range; allowed 2 .. 1000")
        f_ok = curve.field_MV_cm[np.isfinite(curve.current_exact_A_cm2)]
        bmap = breakdown_map(data, np.linspace(t_lo, t_hi, n_t),
                             np.linspace(f_ok.min(), f_ok.max(), n_f),
                             settings=replace_settings(settings, rtol=1e-3))

    from cli.cmd_bands import command_line

    attrs = {
        "carrier": settings.carrier, "emitter": settings.emitter, "through": settings.through,
        "image_force": settings.image_force, "injecting_layer": data.names[inj],
        "injecting_thickness_nm": curve.injecting_thickness_nm,
        "barrier_height_eV": curve.barrier_height_eV, "onset_field_MV_cm": curve.onset_field_MV_cm,
        "temperature_K": curve.temperature_K, "failed_points": curve.failed_points,
        "map_failed_points": bmap.failed_points if bmap is not None else 0,
        "regimes": list(REGIMES),
        "geometry": data.geometry,
        "caution": CAUTION,
    }
    if data.cylindrical:
        attrs.update(channel_radius_nm=data.channel_radius_nm, core_radius_nm=data.core_radius_nm,
                     current_area="per area of the emitting surface")
    write_run(h5, case_text=case.text, command=command_line(args, NAME),
              groups=_groups(curve, spectra, bmap), attrs=attrs)

    from solver.plots.breakdown import (current_field_figure, fowler_nordheim_figure, ratio_map_figure,
                                        transmission_figure)

    carrier = f"{settings.carrier}s from the {settings.emitter}"
    what = (f"{case.title}\n{carrier} through "
            f"{'the stack' if settings.through == 'stack' else 'the ' + data.names[inj] + ' layer'}")
    field_label = "field in the injecting layer (MV/cm)"
    if data.cylindrical:
        what += f", cylinder r0 = {data.channel_radius_nm:g} nm"
        side = "channel" if settings.emitter == "channel" else "gate"
        field_label = f"field in the injecting layer at the {side} interface (MV/cm)"
    ref = ("Fermi level" if settings.emitter == "gate" and data.gate_kind == "metal" else "band edge")
    transmission_figure(figures["transmission"], energy_eV=spectra.energy_eV, field_MV_cm=spectra.field_MV_cm,
                        transmission_exact=spectra.transmission_exact,
                        transmission_wkb=spectra.transmission_wkb,
                        barrier_height_eV=spectra.barrier_height_eV,
                        emitter_fermi_eV=spectra.emitter_fermi_eV, title=f"Transmission T(E): {what}",
                        energy_label=f"{settings.carrier} energy above the emitter {ref} (eV)")
    # the figures over field show the emitting points only: a wrong-polarity point of a
    # gate sweep has no current, and its field magnitude would fold onto the emitting ones
    emit = np.array([r != "none" for r in curve.regime])
    regime = tuple(r for r, e in zip(curve.regime, emit) if e)
    current_field_figure(figures["current_field"], field_MV_cm=curve.field_MV_cm[emit],
                         current_exact_A_cm2=curve.current_exact_A_cm2[emit],
                         current_wkb_A_cm2=curve.current_wkb_A_cm2[emit],
                         current_fn_A_cm2=curve.current_fn_A_cm2[emit],
                         current_trapezoid_A_cm2=curve.current_trapezoid_A_cm2[emit], regime=regime,
                         onset_field_MV_cm=curve.onset_field_MV_cm, gate_V=curve.gate_V[emit],
                         title=f"Current density vs field: {what}", field_label=field_label)
    fowler_nordheim_figure(figures["fowler_nordheim"], field_MV_cm=curve.field_MV_cm[emit],
                           current_exact_A_cm2=curve.current_exact_A_cm2[emit],
                           current_wkb_A_cm2=curve.current_wkb_A_cm2[emit],
                           current_fn_A_cm2=curve.current_fn_A_cm2[emit],
                           onset_field_MV_cm=curve.onset_field_MV_cm, title=f"Fowler–Nordheim plot, {what}")
    written = [h5, figures["current_field"], figures["fowler_nordheim"], figures["transmission"]]
    if bmap is not None:
        ratio_map_figure(figures["ratio_map"], thickness_nm=bmap.thickness_nm, field_MV_cm=bmap.field_MV_cm,
                         ratios={k: bmap.ratio(k) for k in ("wkb", "fn", "trapezoid")},
                         onset_field_MV_cm=bmap.onset_field_MV_cm,
                         layer_label=f"{bmap.layer_name} layer", field_label=field_label,
                         title=f"Within a factor 2 of exact? {what}".replace("\n", ": "))
        written.append(figures["ratio_map"])

    info(args, f"{case.title}  [{case.source}]")
    info(args, f"{carrier}; barrier: {'whole stack' if settings.through == 'stack' else 'injecting layer only'}"
               f"{', image force' if settings.image_force else ''}; injecting layer '{data.names[inj]}' "
               f"{curve.injecting_thickness_nm:g} nm, barrier height {curve.barrier_height_eV:.3f} eV, "
               f"tunneling mass {curve.injecting_mass:g} m0, T = {curve.temperature_K:g} K")
    if data.cylindrical:
        core = (f"hollow, core radius {data.core_radius_nm:g} nm" if data.core_radius_nm > 0 else "solid")
        info(args, f"cylindrical cell: channel radius {data.channel_radius_nm:g} nm ({core}); fields at the "
                   f"injecting interface (radius {data.radii_nm[-1 if settings.emitter == 'channel' else 0]:g} nm), "
                   "currents per area of the emitting surface")
    info(args, "")
    info(args, table(_summary_rows(curve),
                     ["F_MV_cm", "gate_V", "V_layer", "J_exact", "J_WKB", "J_FN", "exact/WKB", "exact/FN",
                      "regime"], [">"] * 8 + ["<"]))
    info(args, "(J in A/cm^2; F and V_layer: field and voltage across the injecting layer)")
    info(args, "")
    info(args, f"Fowler–Nordheim onset (q V_layer = {curve.barrier_height_eV:.3f} eV): "
               f"{curve.onset_field_MV_cm:.2f} MV/cm; direct tunneling below it")
    rng = curve.interference_range_MV_cm()
    info(args, "interference oscillations of the exact current (not in WKB): "
               + (f"{rng[0]:.2f} .. {rng[1]:.2f} MV/cm" if rng else "none resolved in this sweep"))
    if bmap is not None:
        parts = [f"{k.upper() if k != 'trapezoid' else 'trapezoid'} {100 * float(np.mean(bmap.within_factor(k))):.0f} %"
                 for k in ("wkb", "fn", "trapezoid")]
        info(args, f"map {bmap.thickness_nm.size} x {bmap.field_MV_cm.size} "
                   f"({bmap.thickness_nm[0]:.2f}..{bmap.thickness_nm[-1]:.2f} nm x "
                   f"{bmap.field_MV_cm[0]:.2f}..{bmap.field_MV_cm[-1]:.2f} MV/cm): within a factor 2 of exact: "
                   + ", ".join(parts))
    failed = curve.failed_points + (bmap.failed_points if bmap is not None else 0)
    if failed:
        print(f"warning: {failed} point(s) whose energy integral did not converge are stored as NaN",
              file=sys.stderr)
    info(args, "wrote " + ", ".join(str(p) for p in written))
    info(args, CAUTION)
    return 0
