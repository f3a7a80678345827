"""``slipsense run``: a whole analysis from a project file."""
from __future__ import annotations

import argparse
import importlib
import json
import sys

DESCRIPTION = (
    "Run a whole analysis from a project file (TOML): [inputs] names the files (paths relative to "
    "the file), [[steps]] are ordinary slipsense commands with their options as keys (command = "
    "\"trace-planes\", window = 1500; '@name' refers to an input or to the layers an earlier step "
    "wrote), [outputs] names the results GeoPackage and the HTML report, [analysis] gives a name, "
    "a seed for every step that takes one and an optional quality gate (fail_below = \"fair\": exit "
    "code 3 when any result is poor or ill-posed). Everything is checked before any work starts; "
    "the results and the report are written atomically at the end, each layer with provenance and "
    "a default QGIS style. Exit codes: 0 done, 2 bad input, 3 a result below the gate, 130 "
    "interrupted."
)


def add_arguments(p):
    p.add_argument("file", metavar="ANALYSIS.toml", help="the analysis file")
    p.add_argument("--out-dir", metavar="DIR",
                   help="folder for the outputs (default: [outputs] folder, relative to the analysis file)")
    p.add_argument("--overwrite", action="store_true", help="replace existing results, report and figures")
    p.add_argument("--fail-below", choices=("good", "fair", "poor", "ill-posed"), metavar="WORD",
                   help="exit 3 when any result is worse than WORD (good, fair, poor, ill-posed); "
                        "overrides [analysis] fail_below")
    p.add_argument("--check", action="store_true", help="check the file and print the steps; compute nothing")
    p.add_argument("--keep-work", action="store_true", help="keep the work folder (snapshots) for inspection")
    p.add_argument("--json", action="store_true", help="print a machine-readable summary on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress and no warnings on stderr")


def step_commands():
    """Every subcommand of the CLI except ``run``, as pipeline :class:`Command` objects."""
    from ..pipeline import Command
    from .common import CONVENTIONS
    from .main import COMMANDS

    out = {}
    for name, (module, helptext) in COMMANDS.items():
        if name == "run":
            continue
        mod = importlib.import_module(f".{module}", __package__)
        parser = argparse.ArgumentParser(prog=f"slipsense {name}", description=mod.DESCRIPTION + " " + CONVENTIONS)
        mod.add_arguments(parser)
        out[name] = Command(name, parser, mod.run)
    return out


def run(args):
    from ..pipeline import load_analysis, run_plan
    from ..tools.common import CAUTION

    commands = step_commands()
    plan = load_analysis(args.file, commands, out_dir=args.out_dir, overwrite=True if args.overwrite else None,
                         fail_below=args.fail_below)
    if args.check:
        if args.json:
            print(json.dumps(plan.record(), sort_keys=True, default=str))
        else:
            print(f"analysis {plan.name!r} ({args.file}): {len(plan.steps)} steps, checked")
            for s in plan.steps:
                print(f"  {s.index}. {s.name}: {s.display()}")
            print(f"results: {plan.results}")
            if plan.report:
                print(f"report: {plan.report}")
        return 0
    show = sys.stderr.isatty() and not args.quiet and not args.json
    result = run_plan(plan, commands, show_progress=show, quiet=args.quiet)
    if args.json:
        print(json.dumps(result.summary(), sort_keys=True, default=str))
        return result.exit_code
    print(f"analysis {plan.name!r}: {len(result.steps)} steps in {result.seconds:.1f} s")
    width = max(len(s.name) for s in result.steps)
    cw = max(len(s.command) for s in result.steps)
    for s in result.steps:
        layers = ", ".join(_note(n, s.quality.get(n)) for n in s.layers) or "no layers"
        print(f"  {s.name:<{width}}  {s.command:<{cw}}  {layers}" + (f"  [{len(s.warnings)} warnings]" if s.warnings else ""))
    print("quality: " + ", ".join(f"{w} {n}" for w, n in result.quality.items()))
    if result.gate != "off":
        detail = "; ".join(f"{lyr}: {n} {w}" for lyr, w, n in result.worse)
        print(f"quality gate (fail_below = {plan.fail_below!r}): {result.gate}" + (f": {detail}" if detail else ""))
    print(f"results: {result.results}")
    if result.report:
        print(f"report: {result.report}")
    if result.figures:
        print(f"figures: {plan.figures_dir}")
    print(f"Caution: {CAUTION}")
    return result.exit_code


def _note(name, q):
    if not q:
        return name
    return f"{name} (" + ", ".join(f"{w} {n}" for w, n in q.items() if n) + ")"
