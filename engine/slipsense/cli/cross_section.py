"""``slipsense cross-section``."""
from __future__ import annotations

import time

from .common import Progress, add_dem_options, add_error_options, add_report_options, report

DESCRIPTION = (
    "Vertical cross-sections along section lines (bent lines are handled leg by leg): the "
    "topographic profile at DEM resolution; fault planes and planar contacts as their lines of "
    "intersection with each leg's vertical plane, with apparent dips (tan a = tan d sin b, Ragan "
    "2009), from the ground down to --depth below the section's lowest ground point; planes that do "
    "not reach the section within --distance of their mapped extent are left out and said so; "
    "bedding readings, fault-slip stations and borehole intersections within --distance projected "
    "onto the section (along the strike of the measured plane by default, or perpendicular to the "
    "section) as dip ticks; the apparent offsets of each marker across each fault (separation along "
    "the fault's line in the section, vertical and horizontal separation) and the net slip behind "
    "them (with 95%% intervals), or the word under-determined when one marker and no slip "
    "direction leave it open. Layers in map coordinates are 3-D lines in the section's vertical "
    "plane; the *_xz twins are in section coordinates (x = distance, y = elevation)."
)


def add_arguments(p):
    p.add_argument("--sections", required=True, metavar="VECTOR", help="line layer of section lines")
    p.add_argument("--sections-layer", metavar="NAME", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD", help="section identifier field (default: feature id)")
    add_dem_options(p)
    p.add_argument("--planes", metavar="GPKG", help="plane layer (trace_planes of trace-planes, or point_planes)")
    p.add_argument("--planes-layer", default="trace_planes", metavar="NAME", help="default trace_planes")
    p.add_argument("--contacts", metavar="VECTOR", help="line layer of marker contact pieces (one piece per fault block)")
    p.add_argument("--contacts-layer", metavar="NAME")
    p.add_argument("--marker-field", default="marker_id", metavar="FIELD", help="marker of each piece (default marker_id)")
    p.add_argument("--piece-field", default="piece_id", metavar="FIELD",
                   help="piece identifier (default piece_id; feature id when absent)")
    p.add_argument("--marker-attitude", action="append", metavar="MARKER=DD/DIP",
                   help="use this dip direction/dip (degrees) for a marker instead of fitting its pieces over "
                        "the DEM; MARKER=bedding takes the mean of the --bedding readings (repeatable)")
    p.add_argument("--bedding", metavar="VECTOR", help="point layer of bedding readings (fields dip_dir, dip)")
    p.add_argument("--bedding-layer", metavar="NAME")
    p.add_argument("--stations", metavar="VECTOR",
                   help="point layer of fault-slip stations (dip_dir, dip, fault_id, and trend/plunge/sense or rake)")
    p.add_argument("--stations-layer", metavar="NAME")
    p.add_argument("--station-fault-field", default="fault_id", metavar="FIELD",
                   help="fault each station belongs to (default fault_id); gives that fault its slip direction")
    p.add_argument("--boreholes", metavar="VECTOR", help="point layer of borehole collars")
    p.add_argument("--boreholes-layer", metavar="NAME")
    p.add_argument("--hole-id-field", default="hole_id", metavar="FIELD")
    p.add_argument("--hole-trend-field", default="trend", metavar="FIELD", help="hole trend, degrees (default 0)")
    p.add_argument("--hole-plunge-field", default="plunge", metavar="FIELD",
                   help="hole plunge, degrees down (default 90 = vertical)")
    p.add_argument("--hole-depth-field", default="total_depth_m", metavar="FIELD",
                   help="length of the hole, m (default: down to the section's base)")
    p.add_argument("--hole-target-field", default="target_fault", metavar="FIELD",
                   help="fault each hole is meant to meet (default: every fault in the section)")
    p.add_argument("--distance", type=float, default=500.0, metavar="METRES",
                   help="reach of planes beyond their mapped extent along strike, and the largest distance of "
                        "contacts and point data from the section line, m (default 500)")
    p.add_argument("--depth", type=float, default=1000.0, metavar="METRES",
                   help="draw down to this depth below the lowest ground point of each section, m (default 1000)")
    p.add_argument("--projection", choices=("strike", "perpendicular"), default="strike",
                   help="move point data onto the section along the strike of their plane (default) or "
                        "perpendicular to the section; both keep the elevation")
    p.add_argument("--spacing", type=float, metavar="METRES", help="profile step, m (default: the DEM cell size)")
    p.add_argument("--tick", type=float, default=100.0, metavar="METRES",
                   help="length of the dip ticks in the map layers, m (default 100)")
    add_error_options(p)
    p.add_argument("--exaggeration", type=float, default=1.0, metavar="VE",
                   help="vertical exaggeration of the figures (default 1 = true scale; the figure says which)")
    p.add_argument("--figures", metavar="DIR", help="write section_<id>.png and .svg for each section into DIR")
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--prefix", default="", metavar="TEXT",
                   help="prefix of the output layer names (default none: section_faults, ...)")
    p.add_argument("--overwrite", action="store_true", help="replace existing output layers and figures")
    add_report_options(p)


def run(args):
    from ..tools.sections import cross_section_file

    t0 = time.time()
    step = cross_section_file(
        args.sections, args.dem, args.out, sections_layer=args.sections_layer, id_field=args.id_field,
        planes=args.planes, planes_layer=args.planes_layer, contacts=args.contacts,
        contacts_layer=args.contacts_layer, marker_field=args.marker_field, piece_field=args.piece_field,
        marker_attitudes=args.marker_attitude, bedding=args.bedding, bedding_layer=args.bedding_layer,
        stations=args.stations, stations_layer=args.stations_layer, station_fault_field=args.station_fault_field,
        boreholes=args.boreholes, boreholes_layer=args.boreholes_layer, hole_id_field=args.hole_id_field,
        hole_trend_field=args.hole_trend_field, hole_plunge_field=args.hole_plunge_field,
        hole_depth_field=args.hole_depth_field, hole_target_field=args.hole_target_field, band=args.band,
        z_factor=args.z_factor, distance_m=args.distance, depth_m=args.depth, projection=args.projection,
        spacing_m=args.spacing, sigma_xy_m=args.sigma_xy, sigma_z_m=args.sigma_z, draws=args.draws,
        seed=args.seed, tick_m=args.tick, exaggeration=args.exaggeration, figures=args.figures,
        prefix=args.prefix, overwrite=args.overwrite, progress=Progress("cross-section", not args.quiet),
    )
    if not args.json:
        step.summary = {k: v for k, v in step.summary.items() if k != "per_section"}
    report(args, step, args.out, t0)
    return 0
