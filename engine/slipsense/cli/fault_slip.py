"""``slipsense fault-slip``."""
from __future__ import annotations

import time

from .common import add_station_options, add_report_options, report

DESCRIPTION = (
    "Fault-slip data: for each station a fault plane (dip direction/dip) with a slip lineation "
    "(trend/plunge of the slickenline, a rake, or a field pitch from a named strike end) and a "
    "sense (normal, reverse, dextral, sinistral, two of them such as normal-dextral, or the azimuth "
    "the hanging wall moved toward). Writes the canonical rake (Aki & Richards), the direction the "
    "hanging wall moved (trend/plunge, plunge + down, - up), the misfit of the lineation to its "
    "plane (projected when within --misfit-tol, rejected beyond), the sense and fault type in "
    "words, a status (consistent / contradicts / ambiguous / rejected) and the P, T and B axes "
    "(Marrett & Allmendinger 1990); and per group the axes of the summed kinematic tensor with "
    "95%% bootstrap confidence cones. Only consistent data enter the groups. Per-station problems "
    "are flagged, not fatal."
)


def add_arguments(p):
    add_station_options(
        p, group="one population (axes row) per value of this field, e.g. phase or fault_id (default: all data)",
        fault_field=True)
    p.add_argument("--resamples", type=int, default=500, metavar="N",
                   help="bootstrap resamples for the 95%% cones of the population axes (default 500; 0 = none)")
    p.add_argument("--seed", type=int, default=0, help="random seed; results are reproducible for a seed (default 0)")
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--out-layer", default="fault_slip", metavar="NAME", help="per-station layer (default fault_slip)")
    p.add_argument("--axes-layer", default="kinematic_axes", metavar="NAME",
                   help="population axes layer (default kinematic_axes)")
    p.add_argument("--overwrite", action="store_true", help="replace the output layers if they exist")
    add_report_options(p)


def run(args):
    from ..tools.kinematics import fault_slip_file

    t0 = time.time()
    step = fault_slip_file(
        args.stations, args.out, layer=args.layer, id_field=args.id_field,
        dip_dir_field=args.dip_dir_field, dip_field=args.dip_field, trend_field=args.trend_field,
        plunge_field=args.plunge_field, rake_field=args.rake_field, pitch_field=args.pitch_field,
        pitch_end_field=args.pitch_end_field, sense_field=args.sense_field, fault_field=args.fault_field,
        group_field=args.group_field, misfit_tol_deg=args.misfit_tol, resamples=args.resamples,
        seed=args.seed, out_layer=args.out_layer, axes_layer=args.axes_layer, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
