"""``slipsense fault-slip``."""
from __future__ import annotations

import time

from .common import add_report_options, report

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
    p.add_argument("--stations", required=True, metavar="VECTOR", help="point layer of fault-slip stations")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD", help="station identifier field (default: feature id)")
    p.add_argument("--dip-dir-field", default="dip_dir", metavar="FIELD",
                   help="fault dip direction, degrees 0-360 (default dip_dir)")
    p.add_argument("--dip-field", default="dip", metavar="FIELD", help="fault dip, degrees 0-90 (default dip)")
    p.add_argument("--trend-field", metavar="FIELD", help="slickenline trend, degrees (with --plunge-field)")
    p.add_argument("--plunge-field", metavar="FIELD",
                   help="slickenline plunge, degrees 0-90 down (an axis: the sense picks its end)")
    p.add_argument("--rake-field", metavar="FIELD",
                   help="rake, degrees -180..180 (Aki & Richards: +90 reverse, -90 normal, 0 sinistral, 180 dextral)")
    p.add_argument("--pitch-field", metavar="FIELD", help="field pitch of the lineation, degrees 0-90 (with --pitch-end-field)")
    p.add_argument("--pitch-end-field", metavar="FIELD",
                   help="strike end the pitch is measured from: compass point (N, SW, NNE, ...) or azimuth")
    p.add_argument("--sense-field", metavar="FIELD",
                   help="sense: normal, reverse, thrust, dextral, sinistral, 'normal-dextral', ... or the "
                        "azimuth the hanging wall moved toward (needed with trend/plunge and pitch)")
    p.add_argument("--fault-field", metavar="FIELD", help="fault name copied to fault_id (default: fault_id if present)")
    p.add_argument("--group-field", metavar="FIELD",
                   help="one population (axes row) per value of this field, e.g. phase or fault_id (default: all data)")
    p.add_argument("--misfit-tol", type=float, default=None, metavar="DEG",
                   help="largest angle between a lineation and its plane, degrees; smaller misfits are "
                        "projected onto the plane, larger ones rejected (default 20)")
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
