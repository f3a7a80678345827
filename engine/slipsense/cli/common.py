"""Options and output handling shared by every subcommand."""
from __future__ import annotations

import json
import math
import sys
import time

CONVENTIONS = (
    "Conventions: x east, y north, z up, metres; angles in degrees; planes as dip direction/dip "
    "(0-360/0-90) with right-hand-rule strike; azimuths from grid north of the working projected "
    "CRS (the DEM's). Results are interpretations for screening and must be checked by a qualified "
    "professional against local codes and licensed practice."
)


def add_output_options(p, default_layer):
    p.add_argument("--out", required=True, metavar="OUT.gpkg", help="output GeoPackage (other layers in it are kept)")
    p.add_argument("--out-layer", default=default_layer, metavar="NAME", help=f"output layer name (default {default_layer})")
    p.add_argument("--overwrite", action="store_true", help="replace the output layer if it exists")
    add_report_options(p)


def add_report_options(p):
    p.add_argument("--json", action="store_true", help="print a machine-readable summary on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress bar and no warnings on stderr")


def add_dem_options(p, required=True):
    p.add_argument("--dem", required=required, metavar="DEM", help="DEM raster (GeoTIFF, GeoPackage raster, VRT) in a projected CRS, metres")
    p.add_argument("--band", type=int, default=1, help="DEM band (default 1)")
    p.add_argument("--z-factor", type=float, default=1.0, metavar="F",
                   help="multiply DEM values by F to get metres (0.3048 for a DEM in feet; default 1)")


def add_error_options(p, sxy=5.0, sz=2.0, draws=200):
    p.add_argument("--sigma-xy", type=float, default=sxy, metavar="METRES",
                   help=f"1-sigma horizontal mapping/digitising error of each vertex, m (default {sxy:g})")
    p.add_argument("--sigma-z", type=float, default=sz, metavar="METRES",
                   help=f"1-sigma DEM/elevation error, m (default {sz:g})")
    p.add_argument("--draws", type=int, default=draws, metavar="N",
                   help=f"Monte Carlo draws for the 95%% intervals (default {draws}; 0 = none)")
    p.add_argument("--seed", type=int, default=0, help="random seed; results are reproducible for a seed (default 0)")


class Progress:
    """A one-line progress bar on stderr, shown only on a terminal and without --quiet."""

    def __init__(self, label, enabled):
        self.label = label
        self.enabled = enabled and sys.stderr.isatty()
        self.last = -1

    def __call__(self, fraction):
        if not self.enabled:
            return
        pct = int(math.floor(fraction * 100))
        if pct == self.last:
            return
        self.last = pct
        bar = "#" * (pct // 4)
        sys.stderr.write(f"\r{self.label} [{bar:<25}] {pct:3d}%")
        if pct >= 100:
            sys.stderr.write("\n")
        sys.stderr.flush()


def report(args, step, out, started):
    """Print warnings (stderr) and a summary (JSON or text, stdout)."""
    if not args.quiet:
        for w in step.warnings:
            print(f"warning: {w}", file=sys.stderr)
    summary = dict(step.summary)
    summary["output"] = out
    summary["warnings"] = len(step.warnings)
    summary["seconds"] = round(time.time() - started, 3)
    if args.json:
        print(json.dumps(summary, sort_keys=True))
    else:
        parts = [f"{k}: {v}" for k, v in summary.items() if k not in ("seconds",)]
        print("; ".join(parts))


def add_station_options(p, group="one inversion per value of this field, e.g. a deformation phase (default: all data)", fault_field=False):
    """Options naming the fault-slip fields (fault-slip, stress-inversion, anderson).

    ``group``: a help text for ``--group-field`` (False: no such option)."""
    p.add_argument("--stations", required=True, metavar="VECTOR", help="point layer of fault-slip stations")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD", help="station identifier field (default: feature id)")
    p.add_argument("--dip-dir-field", default="dip_dir", metavar="FIELD",
                   help="fault dip direction, degrees 0-360 (default dip_dir)")
    p.add_argument("--dip-field", default="dip", metavar="FIELD", help="fault dip, degrees 0-90 (default dip)")
    p.add_argument("--trend-field", metavar="FIELD", help="slickenline trend, degrees (with --plunge-field)")
    p.add_argument("--plunge-field", metavar="FIELD",
                   help="slickenline plunge, degrees 0-90 down (an axis: the sense picks its end)")
    p.add_argument("--rake-field", metavar="FIELD",
                   help="rake, degrees -180..180 (Aki & Richards: +90 reverse, -90 normal, 0 sinistral, 180 dextral)")
    p.add_argument("--pitch-field", metavar="FIELD", help="field pitch of the lineation, degrees 0-90 (with --pitch-end-field)")
    p.add_argument("--pitch-end-field", metavar="FIELD",
                   help="strike end the pitch is measured from: compass point (N, SW, NNE, ...) or azimuth")
    p.add_argument("--sense-field", metavar="FIELD",
                   help="sense: normal, reverse, thrust, dextral, sinistral, 'normal-dextral', ... or the azimuth "
                        "the hanging wall moved toward (needed with trend/plunge and pitch)")
    p.add_argument("--misfit-tol", type=float, default=None, metavar="DEG",
                   help="largest angle between a lineation and its plane, degrees; smaller misfits are projected "
                        "onto the plane, larger ones rejected (default 20)")
    if fault_field:
        p.add_argument("--fault-field", metavar="FIELD",
                       help="fault name copied to fault_id (default: fault_id if present)")
    if group:
        p.add_argument("--group-field", metavar="FIELD", help=group)
