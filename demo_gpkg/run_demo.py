"""Run the main slipsense job on the demo scenario and say where the results are.

Usage: python demo_gpkg/run_demo.py [--out-dir demo_out]

Each step is an ordinary ``slipsense`` command (printed before it runs), so this script is also a
worked example of the CLI.  Results go to ``<out-dir>/demo_results.gpkg`` (replaced on each run).
The demo is an invented scenario; its numbers are interpretations for screening only.
"""
from __future__ import annotations

import argparse
import json
import os
import shlex
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def _slipsense(*args):
    from slipsense.cli.main import main

    print("$ slipsense " + " ".join(shlex.quote(str(a)) for a in args), flush=True)
    code = main([str(a) for a in args])
    if code != 0:
        sys.exit(code)


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--out-dir", default="demo_out")
    a = p.parse_args(argv)
    out_dir = Path(a.out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    out = out_dir / "demo_results.gpkg"
    if out.exists():
        out.unlink()  # the demo's own output, rebuilt on every run
    gpkg = HERE / "demo.gpkg"
    dem = HERE / "dem.tif"
    if not gpkg.exists() or not dem.exists():
        sys.exit(f"demo data missing: run python {HERE / 'generate_demo.py'} first")

    _slipsense("trace-planes", "--dem", dem, "--traces", gpkg, "--layer", "fault_traces",
               "--id-field", "fault_id", "--draws", "200",
               "--window", "1500", "--out", out, "--quiet")
    planes_file = out_dir / "demo_planes_only.gpkg"
    # Derived layers read the plane layer; inputs are never written, so they read a copy.
    import shutil

    shutil.copyfile(out, planes_file)
    _slipsense("structure-contours", "--planes", planes_file, "--interval", "100", "--depth", "600",
               "--out", out, "--quiet")
    _slipsense("outcrop-trace", "--planes", planes_file, "--dem", dem, "--distance", "1500",
               "--out", out, "--quiet")
    _slipsense("plane-depth", "--collars", gpkg, "--layer", "borehole_collars", "--id-field", "hole_id",
               "--trend-field", "trend", "--plunge-field", "plunge", *_target_field(gpkg),
               "--planes", planes_file, "--dem", dem, "--out", out, "--quiet")
    _slipsense("three-point", "--points", gpkg, "--layer", "contact_points", "--group-field", "group_id",
               "--z-field", "z_m", "--sigma-xy", "3", "--sigma-z", "2", "--draws", "200",
               "--out", out, "--quiet")
    _slipsense("orientations", "--points", gpkg, "--layer", "bedding", "--id-field", "station_id",
               "--dip-dir-field", "dip_dir", "--dip-field", "dip", "--out", out, "--quiet")
    os.remove(planes_file)
    _print_summary(out)
    print(f"\nresults: {out.resolve()}")
    print("Caution: results are interpretations for screening; have them checked by a qualified "
          "professional against local codes and licensed practice.")
    return 0


def _target_field(gpkg):
    import pyogrio

    cols = pyogrio.read_info(str(gpkg), layer="borehole_collars")["fields"]
    return ["--plane-field", "target_fault"] if "target_fault" in cols else []


def _print_summary(out):
    import pyogrio

    truth = {}
    tpath = HERE / "ground_truth.json"
    if tpath.exists():
        for f in json.loads(tpath.read_text()).get("faults", []):
            truth[f["fault_id"]] = f
    df = pyogrio.read_dataframe(str(out), layer="trace_planes", read_geometry=False)
    print("\nfault  dip_dir [95% interval]      dip [95% interval]    quality  misfit  truth (invented scenario)")
    for r in df.itertuples():
        t = truth.get(r.trace_id, {})
        tt = f"{t['dip_dir']:.1f}/{t['dip']:.1f}" if t else ""
        if r.quality == "ill-posed":
            print(f"{r.trace_id:5}  ill-posed: {r.reason}")
            continue
        print(f"{r.trace_id:5}  {r.dip_dir:6.2f} [{r.dip_dir_lo95:6.2f}, {r.dip_dir_hi95:6.2f}]  "
              f"{r.dip:5.2f} [{r.dip_lo95:5.2f}, {r.dip_hi95:5.2f}]  {r.quality:7}  {r.misfit_ratio:5.2f}   {tt}")
    layers = [n for n, _ in pyogrio.list_layers(str(out))]
    print("layers: " + ", ".join(layers))


if __name__ == "__main__":
    sys.exit(main())
