"""``slipsense three-point``."""
from __future__ import annotations

import time

from .common import add_error_options, add_output_options, report

DESCRIPTION = (
    "Fit a plane through each group of points: the exact three-point solution for three points, "
    "total least squares for more (Fernández 2005), with quality words; collinear points are "
    "ill-posed. Elevations from a z field (metres) or from a DEM."
)


def add_arguments(p):
    p.add_argument("--points", required=True, metavar="VECTOR", help="point layer")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--group-field", required=True, metavar="FIELD", help="field naming the plane each point belongs to")
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--z-field", metavar="FIELD", help="field with elevations in metres")
    src.add_argument("--dem", metavar="DEM", help="take elevations from this DEM")
    p.add_argument("--band", type=int, default=1, help="DEM band (default 1)")
    p.add_argument("--z-factor", type=float, default=1.0, metavar="F", help="DEM values x F = metres")
    add_output_options(p, "point_planes")
    add_error_options(p, sxy=0.0, sz=0.0, draws=0)


def run(args):
    from ..tools.planes import three_point_file

    t0 = time.time()
    step = three_point_file(
        args.points, args.out, layer=args.layer, group_field=args.group_field, z_field=args.z_field,
        dem=args.dem, band=args.band, z_factor=args.z_factor, out_layer=args.out_layer,
        sigma_xy_m=args.sigma_xy, sigma_z_m=args.sigma_z, draws=args.draws, seed=args.seed,
        overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
