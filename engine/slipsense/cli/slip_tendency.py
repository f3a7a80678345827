"""``slipsense slip-tendency``."""
from __future__ import annotations

import argparse
import time

from .common import add_report_options, report

DESCRIPTION = (
    "Reactivation screening of mapped faults: normal and shear stress, slip tendency tau/sigma_n' (Morris, "
    "Ferrill & Henderson 1996), dilation tendency (sigma1 - sigma_n)/(sigma1 - sigma3) (Ferrill et al. 1999), "
    "the pore-pressure increase to Coulomb failure (tau = c + mu sigma_n'), the predicted slip direction "
    "(Wallace-Bott) and a flag (near failure, at failure, tensile) for every plane of a layer with dip_dir/dip "
    "fields (trace planes, windows, measured planes). The stress is given one of three ways: principal "
    "magnitudes and axes (--sigma1/2/3, --sigma1-axis, --sigma3-axis, --pore-pressure); SHmax azimuth and "
    "gradients (--shmax-azimuth, --sv-gradient, --shmax-gradient, --shmin-gradient, --pp-gradient, optional "
    "--regime check) with --depth; or an inversion result (--inversion) with stated magnitudes (frictional "
    "limit from --sv-gradient and --pp-gradient, or --sigma1/--sigma3/--pore-pressure). Compression "
    "positive, MPa. Reactivation screening is NOT a hazard assessment: the stress, friction and pore "
    "pressure are assumptions, and results must be reviewed by a qualified professional under local "
    "regulation."
)


def axis(text):
    """'TREND/PLUNGE' (degrees) -> (trend, plunge)."""
    try:
        t, p = text.replace(",", "/").split("/")
        return float(t), float(p)
    except ValueError:
        raise argparse.ArgumentTypeError(f"an axis is TREND/PLUNGE in degrees, e.g. 035/00, got {text!r}") from None


def add_arguments(p):
    p.add_argument("--planes", required=True, metavar="VECTOR",
                   help="layer of planes with dip_dir and dip fields (e.g. trace_planes or trace_windows of trace-planes)")
    p.add_argument("--planes-layer", metavar="NAME", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD",
                   help="plane identifier (default trace_id / plane_id / station_id / fault_id, with window_no "
                        "for windows; else the feature id)")
    p.add_argument("--dip-dir-field", default="dip_dir", metavar="FIELD", help="dip direction field (default dip_dir)")
    p.add_argument("--dip-field", default="dip", metavar="FIELD", help="dip field (default dip)")
    g = p.add_argument_group("principal stresses (total, MPa, compression positive)")
    g.add_argument("--sigma1", type=float, metavar="MPA", help="sigma1 magnitude")
    g.add_argument("--sigma2", type=float, metavar="MPA", help="sigma2 magnitude")
    g.add_argument("--sigma3", type=float, metavar="MPA", help="sigma3 magnitude")
    g.add_argument("--sigma1-axis", type=axis, metavar="TREND/PLUNGE", help="sigma1 axis, degrees (e.g. 035/00)")
    g.add_argument("--sigma3-axis", type=axis, metavar="TREND/PLUNGE", help="sigma3 axis, perpendicular to sigma1")
    g.add_argument("--pore-pressure", type=float, metavar="MPA", help="pore pressure, MPa (0 for dry rock)")
    g = p.add_argument_group("Andersonian stress from gradients (zero at the surface)")
    g.add_argument("--shmax-azimuth", type=float, metavar="DEG", help="azimuth of the maximum horizontal stress")
    g.add_argument("--regime", metavar="NF|SS|TF", help="optional check: normal, strike-slip or thrust regime")
    g.add_argument("--sv-gradient", type=float, metavar="MPA/KM", help="vertical stress gradient (about 25 MPa/km)")
    g.add_argument("--shmax-gradient", type=float, metavar="MPA/KM", help="SHmax gradient")
    g.add_argument("--shmin-gradient", type=float, metavar="MPA/KM", help="Shmin gradient")
    g.add_argument("--pp-gradient", type=float, metavar="MPA/KM", help="pore-pressure gradient (hydrostatic about 10)")
    g.add_argument("--depth", type=float, metavar="METRES",
                   help="depth of interest below the ground surface, m, for all planes (needed with gradients)")
    g.add_argument("--depth-field", metavar="FIELD", help="per-plane depth below the surface, m (instead of --depth)")
    g = p.add_argument_group("stress from an inversion (axes and phi; magnitudes by assumption)")
    g.add_argument("--inversion", metavar="GPKG", help="output of stress-inversion")
    g.add_argument("--inversion-layer", default="stress_axes", metavar="NAME", help="its axes layer (default stress_axes)")
    g.add_argument("--group", metavar="NAME", help="the group (e.g. phase) to use when the layer has several")
    p.add_argument("--friction", type=float, default=0.6, metavar="MU",
                   help="friction coefficient of the faults (default 0.6; 0.6-0.85 usual, Byerlee 1978)")
    p.add_argument("--cohesion", type=float, default=0.0, metavar="MPA", help="cohesion, MPa (default 0)")
    p.add_argument("--near-failure", type=float, default=0.8, metavar="F",
                   help="flag 'near failure' when shear reaches this fraction of the frictional strength (default 0.8)")
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--out-layer", default="slip_tendency", metavar="NAME", help="output layer (default slip_tendency)")
    p.add_argument("--overwrite", action="store_true", help="replace the output layer if it exists")
    add_report_options(p)


def run(args):
    from ..tools.stress import slip_tendency_file

    t0 = time.time()
    step = slip_tendency_file(
        args.planes, args.out, planes_layer=args.planes_layer, id_field=args.id_field,
        dip_dir_field=args.dip_dir_field, dip_field=args.dip_field, depth_m=args.depth,
        depth_field=args.depth_field, sigma1_mpa=args.sigma1, sigma2_mpa=args.sigma2, sigma3_mpa=args.sigma3,
        sigma1_axis=args.sigma1_axis, sigma3_axis=args.sigma3_axis, pore_pressure_mpa=args.pore_pressure,
        shmax_azimuth=args.shmax_azimuth, regime=args.regime, sv_gradient=args.sv_gradient,
        shmax_gradient=args.shmax_gradient, shmin_gradient=args.shmin_gradient,
        pore_pressure_gradient=args.pp_gradient, inversion=args.inversion, inversion_layer=args.inversion_layer,
        group=args.group, friction=args.friction, cohesion_mpa=args.cohesion, near_failure=args.near_failure,
        out_layer=args.out_layer, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
