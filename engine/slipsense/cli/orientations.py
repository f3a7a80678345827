"""``slipsense orientations``."""
from __future__ import annotations

import time

from .common import add_output_options, report

DESCRIPTION = (
    "Read plane measurements from a point layer — text like 'N30E 45SE' or '030/45SE', or "
    "dip-direction/dip or strike/dip(/quadrant) fields — and write them as dip direction/dip "
    "referred to grid north of the layer's CRS. Measured from true north: corrected by the "
    "meridian convergence at each point; from magnetic north: corrected first by the declination "
    "(east positive) you give, or from the World Magnetic Model for a year. Unreadable "
    "measurements are flagged per feature. A bare strike with no dip quadrant is ambiguous and "
    "flagged unless --right-hand-rule is given."
)


def add_arguments(p):
    p.add_argument("--points", required=True, metavar="VECTOR", help="point layer of measurements")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD", help="station identifier field (default: feature id)")
    form = p.add_mutually_exclusive_group(required=True)
    form.add_argument("--text-field", metavar="FIELD", help="plane written as text, e.g. 'N30E 45SE'")
    form.add_argument("--dip-dir-field", metavar="FIELD", help="dip direction, degrees")
    form.add_argument("--strike-field", metavar="FIELD", help="strike, degrees")
    p.add_argument("--dip-field", metavar="FIELD", help="dip, degrees (with --dip-dir-field or --strike-field)")
    p.add_argument("--quadrant-field", metavar="FIELD", help="dip quadrant (N, NE, E, ...) with --strike-field")
    p.add_argument("--right-hand-rule", action="store_true", help="strikes follow the right-hand rule (no quadrant needed)")
    p.add_argument("--north", choices=("grid", "true", "magnetic"), default="grid",
                   help="north the azimuths were measured from (default grid)")
    p.add_argument("--declination", type=float, metavar="DEGREES", help="magnetic declination, east positive")
    p.add_argument("--model-year", type=float, metavar="YEAR",
                   help="decimal year for the World Magnetic Model declination (instead of --declination)")
    add_output_options(p, "orientations")


def run(args):
    from ..tools.orientations import orientations_file

    t0 = time.time()
    step = orientations_file(
        args.points, args.out, layer=args.layer, id_field=args.id_field, text_field=args.text_field,
        dip_dir_field=args.dip_dir_field, strike_field=args.strike_field, dip_field=args.dip_field,
        quadrant_field=args.quadrant_field, right_hand_rule=args.right_hand_rule, north=args.north,
        declination=args.declination, model_year=args.model_year, out_layer=args.out_layer,
        overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
