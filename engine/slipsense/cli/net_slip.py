"""``slipsense net-slip``."""
from __future__ import annotations

import time

from .common import add_output_options, report

DESCRIPTION = (
    "Net slip of faults from a table of marker separations (GeoPackage table or point layer, CSV, "
    "any GDAL vector format), one row per measurement. Fields: fault_id; observation = strike | dip "
    "| vertical | horizontal | 'section AZ' | 'line T/P' (the direction the separation is measured "
    "along: the fault's strike, up its dip, straight up, horizontally toward its dip direction, up "
    "the fault's line in a vertical section of azimuth AZ, or along the line of trend T / plunge P), "
    "or 'rake' (a slip direction) or 'piercing' (a piercing-point pair); marker_id, marker_dip_dir, "
    "marker_dip; fault_dip_dir, fault_dip (at least one row per fault); separation_m (from the "
    "footwall marker to the hanging-wall marker along the observation direction, signed: + along "
    "strike / up-dip / up / toward the dip direction / along the line); sigma_m (1-sigma, m); rake "
    "and rake_sigma (degrees, Aki & Richards) on 'rake' rows; fw_x, fw_y, fw_z, hw_x, hw_y, hw_z on "
    "'piercing' rows. Each separation gives m.u = S (m.o) (Xu et al. 2007); all rows of a fault are "
    "solved by weighted least squares. Status: unique, over-determined (with residuals), "
    "ill-conditioned (constraint lines within 10 degrees) or under-determined (one cutoff direction: "
    "no net slip; the family min_slip_m, dip_slip_only_m, strike_slip_only_m instead). 95%% "
    "intervals by Monte Carlo over separations, marker and fault attitudes and rakes."
)


def add_arguments(p):
    p.add_argument("--table", required=True, metavar="VECTOR", help="table of separations (see above)")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--sigma", type=float, default=None, metavar="METRES",
                   help="1-sigma of separations whose sigma_m is empty, m (default: sigma_m is required)")
    p.add_argument("--sigma-marker", type=float, default=2.0, metavar="DEG",
                   help="1-sigma error of marker attitudes, degrees per axis (default 2)")
    p.add_argument("--sigma-fault", type=float, default=2.0, metavar="DEG",
                   help="1-sigma error of fault attitudes, degrees per axis (default 2)")
    p.add_argument("--sigma-rake", type=float, default=10.0, metavar="DEG",
                   help="1-sigma of rakes whose rake_sigma is empty, degrees (default 10)")
    p.add_argument("--draws", type=int, default=200, metavar="N",
                   help="Monte Carlo draws for the 95%% intervals (default 200; 0 = none)")
    p.add_argument("--seed", type=int, default=0, help="random seed; results are reproducible for a seed (default 0)")
    add_output_options(p, "net_slip")


def run(args):
    from ..tools.netslip import net_slip_file

    t0 = time.time()
    step = net_slip_file(
        args.table, args.out, layer=args.layer, out_layer=args.out_layer, sigma_m=args.sigma,
        sigma_marker_deg=args.sigma_marker, sigma_fault_deg=args.sigma_fault,
        rake_sigma_deg=args.sigma_rake, draws=args.draws, seed=args.seed, overwrite=args.overwrite,
    )
    report(args, step, args.out, t0)
    return 0
