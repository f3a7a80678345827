"""``slipsense`` command: dispatches to one module per subcommand."""
from __future__ import annotations

import argparse
import importlib
import sys

from .common import CONVENTIONS

#: subcommand -> (module, one-line help)
COMMANDS = {
    "trace-planes": ("trace_planes", "fault planes (strike/dip with 95%% intervals) from map traces over a DEM"),
    "three-point": ("three_point", "planes through groups of 3 or more points (three-point problem, least squares)"),
    "structure-contours": ("structure_contours", "strike lines of fitted planes at an elevation interval"),
    "outcrop-trace": ("outcrop_trace", "predicted outcrop trace of fitted planes across the DEM"),
    "plane-depth": ("plane_depth", "depth to fitted planes below collars (vertical or inclined holes)"),
    "orientations": ("orientations", "read plane measurements (quadrant or azimuth notation) and refer them to grid north"),
    "run": ("run", "run a whole analysis from a project file (TOML): steps, one results GeoPackage, a report"),
    "fault-slip": ("fault_slip", "fault-slip data: rake, slip direction, sense, fault type, P/T/B axes and population axes"),
    "net-slip": ("net_slip", "net slip of faults from a table of marker separations, slip directions and piercing points"),
    "map-slip": ("map_slip", "net slip of fitted faults from mapped marker contacts over a DEM (and slip stations)"),
    "stress-inversion": ("stress_inversion", "palaeostress (sigma1-3 axes, phi, regime, SHmax) from fault-slip data, with bootstrap cones"),
    "slip-tendency": ("slip_tendency", "slip and dilation tendency and pore pressure to failure of mapped faults in a stress"),
    "anderson": ("anderson", "Andersonian check of fault dips for their slip type, and the axes that would drive them"),
    "cross-section": ("cross_section", "cross-sections along section lines: profile, apparent dips, projected data, apparent offsets and net slip"),
}


def build_parser():
    parser = argparse.ArgumentParser(
        prog="slipsense",
        description="Fault geometry from mapped geology. " + CONVENTIONS,
    )
    from .. import __version__

    parser.add_argument("--version", action="version", version=f"slipsense {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (module, helptext) in COMMANDS.items():
        mod = importlib.import_module(f".{module}", __package__)
        p = sub.add_parser(name, help=helptext, description=mod.DESCRIPTION + " " + CONVENTIONS)
        mod.add_arguments(p)
        p.set_defaults(_run=mod.run)
    return parser


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return 2
    from ..errors import SlipsenseError

    try:
        return args._run(args) or 0
    except SlipsenseError as exc:
        print(f"slipsense {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except (OSError, ValueError) as exc:
        print(f"slipsense {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"slipsense {args.command}: interrupted; earlier outputs are intact", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
