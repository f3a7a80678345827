"""``slipsense plane-depth``."""
from __future__ import annotations

import time

from .common import add_output_options, report

DESCRIPTION = (
    "Depth to fitted planes below collars: where a vertical hole (or one inclined by trend/plunge "
    "fields) from each collar meets each plane, with the along-hole distance, the vertical depth "
    "below the collar and the 3-D intersection point."
)


def add_arguments(p):
    p.add_argument("--collars", required=True, metavar="VECTOR", help="point layer of collars")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD", help="collar identifier field (default: feature id)")
    p.add_argument("--trend-field", metavar="FIELD", help="hole trend, degrees (default: vertical holes)")
    p.add_argument("--plunge-field", metavar="FIELD", help="hole plunge, degrees down (90 = vertical)")
    p.add_argument("--plane-field", metavar="FIELD",
                   help="field naming the plane (trace_id/plane_id) each collar is paired with (default: every plane)")
    p.add_argument("--planes", required=True, metavar="GPKG", help="GeoPackage with a plane layer")
    p.add_argument("--planes-layer", default="trace_planes", help="plane layer (default trace_planes)")
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--dem", metavar="DEM", help="collar elevations from this DEM")
    src.add_argument("--z-field", metavar="FIELD", help="collar elevations from this field, m")
    p.add_argument("--band", type=int, default=1, help="DEM band (default 1)")
    p.add_argument("--z-factor", type=float, default=1.0, metavar="F", help="DEM values x F = metres")
    add_output_options(p, "plane_depths")


def run(args):
    from ..tools.planes import plane_depth_file

    t0 = time.time()
    step = plane_depth_file(
        args.collars, args.planes, args.out, layer=args.layer, planes_layer=args.planes_layer,
        id_field=args.id_field, trend_field=args.trend_field, plunge_field=args.plunge_field,
        plane_field=args.plane_field, dem=args.dem, z_field=args.z_field, band=args.band,
        z_factor=args.z_factor, out_layer=args.out_layer, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
