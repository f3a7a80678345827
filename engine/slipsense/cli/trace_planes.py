"""``slipsense trace-planes``."""
from __future__ import annotations

import time

from .common import Progress, add_dem_options, add_error_options, add_output_options, report

DESCRIPTION = (
    "Fit a best-fit fault plane to each mapped trace from the way it crosses the topography "
    "(densify to the DEM cell size, sample the DEM bilinearly, total least squares; Fernández 2005), "
    "with Monte Carlo 95% intervals from the mapping and DEM errors and a quality word "
    "(good, fair, poor, ill-posed: a straight trace on planar ground or relief below the DEM error "
    "is ill-posed and gets no orientation). MultiLineString traces are fitted as one plane."
)


def add_arguments(p):
    add_dem_options(p)
    p.add_argument("--traces", required=True, metavar="VECTOR", help="line layer of fault traces")
    p.add_argument("--layer", help="layer name in VECTOR")
    p.add_argument("--id-field", metavar="FIELD", help="field identifying each trace (default: feature id)")
    add_output_options(p, "trace_planes")
    add_error_options(p)
    p.add_argument("--spacing", type=float, metavar="METRES", help="densification spacing, m (default: DEM cell size)")
    p.add_argument("--window", type=float, metavar="METRES",
                   help="also fit planes in along-trace windows of this length (50%% overlap), written to --windows-layer")
    p.add_argument("--windows-layer", default="trace_windows", metavar="NAME", help="layer for window planes")
    run = p.add_argument_group("speed and scale (the numbers are the same whichever way the work runs)")
    run.add_argument("--threads", type=int, default=1, metavar="N",
                     help="run spatial tiles of traces on N threads in this process (default 1)")
    run.add_argument("--workers", type=int, metavar="N",
                     help="run the tiles on a local Dask cluster of N worker processes on 127.0.0.1 "
                          "(needs: pip install 'slipsense[dask]')")
    run.add_argument("--scheduler", metavar="ADDRESS",
                     help="run the tiles on a running dask.distributed cluster, e.g. tcp://host:8786; "
                          "every worker must have slipsense installed and read the DEM at the same path")
    run.add_argument("--cache-mb", type=float, default=512.0, metavar="MB",
                     help="DEM block cache per process, MB (default 512; blocks are dropped as soon as no "
                          "remaining trace needs them)")


def run(args):
    from ..tools.planes import trace_planes_file

    t0 = time.time()
    step = trace_planes_file(
        args.dem, args.traces, args.out, layer=args.layer, id_field=args.id_field,
        out_layer=args.out_layer, windows_layer=args.windows_layer, band=args.band,
        z_factor=args.z_factor, spacing_m=args.spacing, sigma_xy_m=args.sigma_xy,
        sigma_z_m=args.sigma_z, draws=args.draws, seed=args.seed, window_m=args.window,
        overwrite=args.overwrite, progress=Progress("trace-planes", not args.quiet),
        threads=args.threads, workers=args.workers, scheduler=args.scheduler, cache_mb=args.cache_mb,
    )
    report(args, step, args.out, t0)
    return 0
