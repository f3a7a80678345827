"""``slipsense stress-inversion``."""
from __future__ import annotations

import time

from .common import add_station_options, add_report_options, report

DESCRIPTION = (
    "Invert fault-slip data (planes with slickenlines and a sense) for the reduced stress tensor: the "
    "sigma1, sigma2, sigma3 axes (trend/plunge) and the stress ratio phi = (s2 - s3)/(s1 - s3). Method: "
    "the linear least-squares inversion of Michael (1984, JGR 89) assuming slip parallel to the resolved "
    "shear traction (Wallace 1951, Bott 1959), refined by rescaling each datum by its predicted shear "
    "(--no-refine for plain Michael 1984, which assumes equal shear on all planes and biases phi); "
    "95%% confidence cones of the axes and the phi interval by bootstrap resampling (Michael 1987); "
    "per-datum misfit angles; the stress regime and SHmax azimuth (Zoback 1992 World Stress Map "
    "criteria; SHmax from the full tensor, Lund & Townend 2007); and an independent estimate of sigma1 "
    "and sigma3 by right dihedra (Angelier & Mechler 1977). Compression positive. Fewer than 4 usable "
    "data or planes of too few orientations are ill-posed and get no stress. Data of mixed stress "
    "phases give large misfits and a warning: invert each phase separately (--group-field). A "
    "palaeostress from fault-slip data is an interpretation, to be checked by a qualified professional."
)


def add_arguments(p):
    add_station_options(p)
    p.add_argument("--resamples", type=int, default=1000, metavar="N",
                   help="bootstrap resamples for the 95%% cones and the phi interval (default 1000; 0 = none)")
    p.add_argument("--seed", type=int, default=0, help="random seed; results are reproducible for a seed (default 0)")
    p.add_argument("--no-refine", action="store_true",
                   help="plain Michael (1984): assume equal shear stress on every plane (no rescaling)")
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--out-layer", default="stress_axes", metavar="NAME",
                   help="stress axes layer, one point per group (default stress_axes)")
    p.add_argument("--misfits-layer", default="stress_misfits", metavar="NAME",
                   help="per-datum misfit layer (default stress_misfits)")
    p.add_argument("--overwrite", action="store_true", help="replace the output layers if they exist")
    add_report_options(p)


def run(args):
    from ..tools.stress import stress_inversion_file

    t0 = time.time()
    step = stress_inversion_file(
        args.stations, args.out, layer=args.layer, id_field=args.id_field, dip_dir_field=args.dip_dir_field,
        dip_field=args.dip_field, trend_field=args.trend_field, plunge_field=args.plunge_field,
        rake_field=args.rake_field, pitch_field=args.pitch_field, pitch_end_field=args.pitch_end_field,
        sense_field=args.sense_field, group_field=args.group_field, misfit_tol_deg=args.misfit_tol,
        resamples=args.resamples, seed=args.seed, refine=not args.no_refine, out_layer=args.out_layer,
        misfits_layer=args.misfits_layer, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
