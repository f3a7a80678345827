"""``slipsense map-slip``."""
from __future__ import annotations

import time

from .common import Progress, add_dem_options, add_report_options, report

DESCRIPTION = (
    "Net slip of fitted fault planes from mapped marker contacts over a DEM. For each plane of a "
    "trace-planes layer, the marker contact pieces that come within --reach of its trace are its "
    "cut-off pieces; their vertices within --distance of the trace are lifted onto the DEM, each "
    "piece is put in the hanging wall (points above the fitted plane; the dip-direction side of a "
    "vertical plane) or the footwall, and each marker is fitted as two parallel planes, one per "
    "side. Each marker gives m.u = m.(c_HW - c_FW); two markers with non-parallel cutoffs give the "
    "slip vector, and slip stations of the fault (slickenlines, optional) add its direction. A "
    "piece fitting much worse than the stated errors explain is set aside (bent or in another "
    "block). Writes net_slip (a point at the trace: net slip, rake, trend/plunge, strike-slip, "
    "dip-slip, throw, heave, map offset, sense, status, 95%% intervals), slip_vectors (3-D line "
    "from the footwall piercing point to the hanging-wall one) and marker_fits (the marker "
    "attitudes, separations and cutoff lines found, with the contact vertices used)."
)


def add_arguments(p):
    p.add_argument("--planes", required=True, metavar="GPKG", help="GeoPackage with a plane layer from trace-planes")
    p.add_argument("--planes-layer", default="trace_planes", help="plane layer (default trace_planes)")
    p.add_argument("--contacts", required=True, metavar="VECTOR",
                   help="line layer of marker contacts, one piece per feature")
    p.add_argument("--contacts-layer", metavar="NAME", help="layer name in VECTOR")
    p.add_argument("--marker-field", default="marker_id", metavar="FIELD",
                   help="field naming the marker of each contact (default marker_id)")
    p.add_argument("--piece-field", metavar="FIELD",
                   help="field naming each contact piece (default piece_id when present, else the feature id)")
    add_dem_options(p)
    p.add_argument("--stations", metavar="VECTOR", help="point layer of slip stations (optional)")
    p.add_argument("--stations-layer", metavar="NAME", help="layer name in the stations file")
    p.add_argument("--station-fault-field", default="fault_id", metavar="FIELD",
                   help="field naming the fault of each station (default fault_id)")
    p.add_argument("--station-dip-dir-field", default="dip_dir", metavar="FIELD",
                   help="station plane dip direction (default dip_dir)")
    p.add_argument("--station-dip-field", default="dip", metavar="FIELD", help="station plane dip (default dip)")
    p.add_argument("--station-trend-field", default="trend", metavar="FIELD", help="slickenline trend (default trend)")
    p.add_argument("--station-plunge-field", default="plunge", metavar="FIELD", help="slickenline plunge (default plunge)")
    p.add_argument("--station-sense-field", default="sense", metavar="FIELD", help="sense word (default sense)")
    p.add_argument("--station-rake-field", metavar="FIELD",
                   help="read the slip direction from this rake field instead of trend/plunge/sense")
    p.add_argument("--distance", type=float, default=1000.0, metavar="METRES",
                   help="use contact vertices within this map distance of the trace, m (default 1000)")
    p.add_argument("--reach", type=float, default=100.0, metavar="METRES",
                   help="a contact piece is a cut-off piece when it comes this close to the trace, m (default 100)")
    p.add_argument("--sigma-xy", type=float, default=5.0, metavar="METRES",
                   help="1-sigma horizontal mapping/digitising error of each contact vertex, m (default 5)")
    p.add_argument("--sigma-z", type=float, default=2.0, metavar="METRES", help="1-sigma DEM error, m (default 2)")
    p.add_argument("--marker-attitude", action="append", metavar="MARKER=DIPDIR/DIP",
                   help="use this attitude (degrees, e.g. the mean of bedding readings) for a marker instead of "
                        "fitting it; repeat for several markers")
    p.add_argument("--sigma-attitude", type=float, default=2.0, metavar="DEG",
                   help="1-sigma error of a given marker attitude, degrees per axis (default 2)")
    p.add_argument("--draws", type=int, default=200, metavar="N",
                   help="Monte Carlo draws for the 95%% intervals (default 200; 0 = none)")
    p.add_argument("--seed", type=int, default=0, help="random seed; results are reproducible for a seed (default 0)")
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--out-layer", default="net_slip", metavar="NAME", help="net-slip layer (default net_slip)")
    p.add_argument("--vectors-layer", default="slip_vectors", metavar="NAME",
                   help="slip-vector layer (default slip_vectors)")
    p.add_argument("--fits-layer", default="marker_fits", metavar="NAME", help="marker-fit layer (default marker_fits)")
    p.add_argument("--overwrite", action="store_true", help="replace the output layers if they exist")
    add_report_options(p)


def run(args):
    from ..tools.netslip import map_slip_file

    t0 = time.time()
    step = map_slip_file(
        args.planes, args.contacts, args.dem, args.out, planes_layer=args.planes_layer,
        contacts_layer=args.contacts_layer, marker_field=args.marker_field, piece_field=args.piece_field,
        stations=args.stations, stations_layer=args.stations_layer,
        station_fault_field=args.station_fault_field, station_dip_dir_field=args.station_dip_dir_field,
        station_dip_field=args.station_dip_field, station_trend_field=args.station_trend_field,
        station_plunge_field=args.station_plunge_field, station_sense_field=args.station_sense_field,
        station_rake_field=args.station_rake_field, band=args.band, z_factor=args.z_factor,
        window_m=args.distance, reach_m=args.reach, sigma_xy_m=args.sigma_xy, sigma_z_m=args.sigma_z,
        marker_attitudes=args.marker_attitude, sigma_attitude_deg=args.sigma_attitude,
        draws=args.draws, seed=args.seed, out_layer=args.out_layer, vectors_layer=args.vectors_layer,
        fits_layer=args.fits_layer, overwrite=args.overwrite,
        progress=Progress("map-slip", not args.quiet),
    )
    report(args, step, args.out, t0)
    return 0
