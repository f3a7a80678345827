"""Run the demo analysis and compare the fitted fault planes with the scenario's truth.

Usage: python demo_gpkg/run_demo.py [--out-dir demo_out]

The analysis itself is demo_gpkg/demo_analysis.toml, run exactly as ``make demo`` runs it::

    slipsense run demo_gpkg/demo_analysis.toml --out-dir demo_out

This script adds a table of the fitted planes next to the invented truth (ground_truth.json).
Results go to ``<out-dir>/demo_results.gpkg`` and ``<out-dir>/demo_report.html`` (the demo's own
outputs, replaced on each run).  The demo is an invented scenario; its numbers are
interpretations for screening only.
"""
from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main(argv=None):
    from slipsense.cli.main import main as slipsense

    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--out-dir", default="demo_out")
    a = p.parse_args(argv)
    if not (HERE / "demo.gpkg").exists() or not (HERE / "dem.tif").exists():
        sys.exit(f"demo data missing: run python {HERE / 'generate_demo.py'} first")
    args = ["run", str(HERE / "demo_analysis.toml"), "--out-dir", a.out_dir]
    print("$ slipsense " + " ".join(args), flush=True)
    code = slipsense(args)
    if code != 0:
        return code
    _print_truth(Path(a.out_dir) / "demo_results.gpkg")
    return 0


def _print_truth(out):
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


if __name__ == "__main__":
    sys.exit(main())
