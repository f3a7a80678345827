"""``slipsense outcrop-trace``."""
from __future__ import annotations

import time

from .common import Progress, add_dem_options, add_output_options, report

DESCRIPTION = (
    "Predict where each fitted plane crops out: the line where the plane meets the DEM surface, "
    "kept within a distance of the mapped trace (where the fault should continue under cover)."
)


def add_arguments(p):
    p.add_argument("--planes", required=True, metavar="GPKG", help="GeoPackage with a plane layer (from trace-planes)")
    p.add_argument("--layer", default="trace_planes", help="plane layer (default trace_planes)")
    add_dem_options(p)
    p.add_argument("--distance", type=float, default=1000.0, metavar="METRES",
                   help="keep the predicted trace within this distance of the mapped trace, m (default 1000)")
    add_output_options(p, "outcrop_traces")


def run(args):
    from ..tools.planes import outcrop_trace_file

    t0 = time.time()
    step = outcrop_trace_file(
        args.planes, args.dem, args.out, layer=args.layer, band=args.band, z_factor=args.z_factor,
        max_distance_m=args.distance, out_layer=args.out_layer, overwrite=args.overwrite,
        progress=Progress("outcrop-trace", not args.quiet),
    )
    report(args, step, args.out, t0)
    return 0
