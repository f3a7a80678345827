"""``slipsense anderson``."""
from __future__ import annotations

import time

from .common import add_station_options, add_report_options, report

DESCRIPTION = (
    "Andersonian check of faults with known slip. For a friction coefficient mu (default 0.6, Byerlee "
    "1978) a new fault forms at theta = 45 - arctan(mu)/2 to sigma1 (29.5 degrees for 0.6): normal faults "
    "dip 90 - theta, thrusts theta, strike-slip faults are vertical (Anderson 1951). For each station: the "
    "fault type from its rake (oblique slip has no Andersonian type), the predicted dip, the departure of the "
    "measured dip, a flag beyond --tolerance (a prompt to look again: reactivation of an older structure, "
    "rotation, or another friction; not a verdict), and the sigma1/sigma2/sigma3 axes that would drive the "
    "measured slip (sigma1 at theta to the fault in the plane of its normal and slip). With --shmax-azimuth and "
    "--regime the summary also gives the predicted conjugate planes."
)


def add_arguments(p):
    add_station_options(p, group=False)
    p.add_argument("--friction", type=float, default=0.6, metavar="MU",
                   help="friction coefficient (default 0.6; 0.6-0.85 usual for crustal rocks, Byerlee 1978)")
    p.add_argument("--tolerance", type=float, default=15.0, metavar="DEG",
                   help="flag dips further than this from the Andersonian dip of their type, degrees (default 15)")
    p.add_argument("--shmax-azimuth", type=float, metavar="DEG", help="SHmax azimuth for the predicted conjugate planes")
    p.add_argument("--regime", metavar="NF|SS|TF", help="regime for the predicted conjugate planes")
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--out-layer", default="anderson", metavar="NAME", help="output layer (default anderson)")
    p.add_argument("--overwrite", action="store_true", help="replace the output layer if it exists")
    add_report_options(p)


def run(args):
    from ..tools.stress import anderson_file

    t0 = time.time()
    step = anderson_file(
        args.stations, args.out, layer=args.layer, id_field=args.id_field, dip_dir_field=args.dip_dir_field,
        dip_field=args.dip_field, trend_field=args.trend_field, plunge_field=args.plunge_field,
        rake_field=args.rake_field, pitch_field=args.pitch_field, pitch_end_field=args.pitch_end_field,
        sense_field=args.sense_field, misfit_tol_deg=args.misfit_tol, friction=args.friction,
        tolerance_deg=args.tolerance, shmax_azimuth=args.shmax_azimuth, regime=args.regime,
        out_layer=args.out_layer, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
