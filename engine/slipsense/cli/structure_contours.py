"""``slipsense structure-contours``."""
from __future__ import annotations

import time

from .common import add_output_options, report

DESCRIPTION = (
    "Draw structure contours (strike lines) of fitted planes at a regular elevation interval, as "
    "3-D lines at their elevation, spanning each plane's trace along strike."
)


def add_arguments(p):
    p.add_argument("--planes", required=True, metavar="GPKG", help="GeoPackage with a plane layer (from trace-planes or three-point)")
    p.add_argument("--layer", default="trace_planes", help="plane layer (default trace_planes)")
    p.add_argument("--interval", type=float, default=50.0, metavar="METRES", help="contour interval, m (default 50)")
    p.add_argument("--depth", type=float, default=500.0, metavar="METRES",
                   help="draw contours from this far below to this far above each plane's centroid, m (default 500)")
    p.add_argument("--z-min", type=float, metavar="METRES", help="lowest contour elevation (overrides --depth)")
    p.add_argument("--z-max", type=float, metavar="METRES", help="highest contour elevation (overrides --depth)")
    add_output_options(p, "structure_contours")


def run(args):
    from ..tools.planes import structure_contours_file

    t0 = time.time()
    step = structure_contours_file(
        args.planes, args.out, layer=args.layer, interval_m=args.interval, depth_m=args.depth,
        z_min=args.z_min, z_max=args.z_max, out_layer=args.out_layer, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
