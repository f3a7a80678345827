"""Running a checked :class:`~slipsense.pipeline.spec.Plan`: the steps, one work GeoPackage,
snapshots for later steps, and the atomic hand-over of the results.

Design (documented in the README, "Analysis files"):

* A private work folder is made inside the output folder (``.slipsense-run-*``, removed at the
  end).  Every step writes its layers into one **work GeoPackage** there, with its own
  provenance rows and default styles, exactly as the command would on its own.
* A step that reads an earlier step (``planes = "@faults"``) reads a **snapshot**: a copy of the
  work GeoPackage taken right after that step finished.  Inputs are never written, so a step
  never reads the file it writes, and what a step saw is fixed and hashed in its provenance.
* Folders a step writes (options with a ``DIR`` value, e.g. section figures) go to the work
  folder too.
* When every step has succeeded, the provenance records are rewritten to name snapshots as
  ``@step`` (their SHA-256 kept), a ``slipsense_run`` table records the analysis file (its
  text and SHA-256), every step's command line, the versions and the quality counts, and the
  report is written.  Then the work GeoPackage is **renamed** over the results file and the
  report and folders are moved into place: an interrupted or failed run leaves the earlier
  results intact.
"""
from __future__ import annotations

import contextlib
import io
import json
import os
import shutil
import sqlite3
import sys
import tempfile
import time
from dataclasses import dataclass, field

from ..errors import SlipsenseError
from .spec import QUALITY_ORDER

__all__ = ["StepError", "StepOutcome", "RunResult", "run_plan", "quality_counts", "versions", "GATE_EXIT_CODE"]

#: exit code of ``slipsense run`` when a result is worse than ``fail_below``
GATE_EXIT_CODE = 3
PROVENANCE = "slipsense_provenance"
RUN_TABLE = "slipsense_run"


class StepError(SlipsenseError, ValueError):
    """A step failed; nothing of this run was written to the outputs."""


@dataclass
class StepOutcome:
    name: str
    command: str
    command_line: str
    seconds: float
    summary: dict
    warnings: list
    layers: list
    quality: dict = field(default_factory=dict)


@dataclass
class RunResult:
    plan: object
    steps: list
    quality: dict
    quality_by_layer: dict
    gate: str                 # "off", "passed" or "failed"
    worse: list               # (layer, word, count) below the gate
    exit_code: int
    results: str
    report: str | None
    figures: list
    seconds: float

    def summary(self):
        """JSON-able summary (what ``--json`` prints)."""
        return {
            "analysis": self.plan.name,
            "file": self.plan.file,
            "results": self.results,
            "report": self.report,
            "figures": self.figures,
            "steps": [{"name": s.name, "command": s.command, "command_line": s.command_line,
                       "seconds": round(s.seconds, 3), "layers": s.layers, "quality": s.quality,
                       "warnings": len(s.warnings), "summary": s.summary} for s in self.steps],
            "quality": self.quality,
            "quality_by_layer": self.quality_by_layer,
            "fail_below": self.plan.fail_below,
            "gate": self.gate,
            "below_gate": [{"layer": a, "quality": b, "count": c} for a, b, c in self.worse],
            "exit_code": self.exit_code,
            "seconds": round(self.seconds, 3),
        }


class _StepStderr(io.TextIOBase):
    """stderr of a step: progress bars (lines drawn with ``\\r``) go to the terminal when shown;
    everything else is kept (``warning: ...`` lines become the step's warnings)."""

    def __init__(self, real, show):
        self.real = real
        self.show = show
        self.kept = []
        self._bar = False

    def isatty(self):
        return self.show

    def writable(self):
        return True

    def write(self, s):
        if s.startswith("\r") or (self._bar and s == "\n"):
            self._bar = s.startswith("\r") and not s.endswith("\n")
            if self.show:
                self.real.write(s)
                self.real.flush()
        else:
            self.kept.append(s)
        return len(s)

    def lines(self):
        return [ln for ln in "".join(self.kept).splitlines() if ln.strip()]


def quality_counts(gpkg):
    """``{layer: {word: count}}`` for every feature layer of ``gpkg`` with a ``quality`` field."""
    out = {}
    if not os.path.exists(gpkg):
        return out
    con = sqlite3.connect(gpkg)
    try:
        tables = [r[0] for r in con.execute("SELECT table_name FROM gpkg_contents WHERE data_type='features' "
                                            "ORDER BY rowid")]
        for t in tables:
            cols = {r[1] for r in con.execute(f'PRAGMA table_info("{t}")')}
            if "quality" not in cols:
                continue
            counts = {w: 0 for w in QUALITY_ORDER}
            for word, n in con.execute(f'SELECT quality, COUNT(*) FROM "{t}" GROUP BY quality'):
                if word in counts:
                    counts[word] = int(n)
            out[t] = counts
    finally:
        con.close()
    return out


def versions():
    """Versions of slipsense and the libraries that make its numbers and files."""
    import platform

    from .. import __version__

    v = {"slipsense": __version__, "python": platform.python_version()}
    for mod in ("numpy", "pyogrio", "pyproj", "rasterio", "shapely", "geopandas", "matplotlib"):
        try:
            m = __import__(mod)
            v[mod] = getattr(m, "__version__", "?")
        except ImportError:
            v[mod] = None
    try:
        import pyogrio

        v["gdal"] = pyogrio.__gdal_version_string__
    except (ImportError, AttributeError):
        pass
    try:
        import pyproj

        v["proj"] = pyproj.proj_version_str
    except (ImportError, AttributeError):
        pass
    return v


def _say(stream, text):
    stream.write(text + "\n")
    stream.flush()


def run_plan(plan, commands, *, show_progress=False, quiet=False, stream=None, keep_work=False):
    """Run ``plan`` (a checked :class:`Plan`) with ``commands`` (name -> Command).

    ``show_progress``: per-step lines and the commands' progress bars on ``stream`` (stderr).
    ``quiet``: no warnings on ``stream``.  Returns a :class:`RunResult`; raises
    :class:`StepError` when a step fails (the outputs are then untouched).
    """
    from ..io.vector import list_layers

    stream = stream or sys.stderr
    t_start = time.time()
    os.makedirs(plan.out_folder, exist_ok=True)
    work = tempfile.mkdtemp(prefix=".slipsense-run-", dir=plan.out_folder)
    gpkg = os.path.join(work, "work.gpkg")
    later_reads = {r for s in plan.steps for r in s.reads_steps}
    snapshots = {}
    outcomes = []
    dirs = {}
    try:
        for step in plan.steps:
            argv = []
            for a in step.argv:
                if isinstance(a, tuple) and a[0] == "step":
                    argv.append(snapshots[a[1]])
                elif isinstance(a, tuple) and a[0] == "input":
                    argv.append(a[2])
                elif isinstance(a, tuple):
                    d = os.path.join(work, "dirs", f"{step.index:02d}-{step.name}-{a[1]}")
                    os.makedirs(d, exist_ok=True)
                    dirs[d] = a[2]
                    argv.append(d)
                else:
                    argv.append(a)
            cmd = commands[step.command]
            parser = cmd.parser
            index = {o for act in parser._actions for o in act.option_strings}
            if step.has_out:
                argv += ["--out", gpkg]
            if "--json" in index:
                argv += ["--json"]
            args = parser.parse_args(argv)
            before = set(list_layers(gpkg)) if os.path.exists(gpkg) else set()
            if show_progress:
                _say(stream, f"[{step.index}/{len(plan.steps)}] {step.name}: slipsense {step.command}")
            out, err = io.StringIO(), _StepStderr(stream, show_progress)
            t0 = time.time()
            try:
                with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
                    code = cmd.run(args) or 0
            except (SlipsenseError, OSError, ValueError) as exc:
                raise StepError(f"step {step.index} {step.name!r} ({step.command}) failed: {exc}; "
                                "the outputs were not written (earlier results are intact)") from exc
            if code:
                raise StepError(f"step {step.index} {step.name!r} ({step.command}) ended with exit code {code}; "
                                "the outputs were not written")
            seconds = time.time() - t0
            summary = _last_json(out.getvalue())
            lines = err.lines()
            warnings = [ln[len("warning: "):] for ln in lines if ln.startswith("warning: ")]
            after = [n for n in (list_layers(gpkg) if os.path.exists(gpkg) else [])
                     if n not in before and n not in (PROVENANCE, "layer_styles")]
            q = {k: v for k, v in quality_counts(gpkg).items() if k in after}
            outcomes.append(StepOutcome(step.name, step.command, step.display(), seconds, summary, warnings, after, q))
            if not quiet:
                for w in warnings:
                    _say(stream, f"warning: [{step.name}] {w}")
            if show_progress:
                _say(stream, f"    done in {seconds:.1f} s: " + (", ".join(_layer_note(n, q.get(n)) for n in after)
                                                              or "no layers"))
            if step.name in later_reads:
                if not os.path.exists(gpkg):
                    raise StepError(f"step {step.name!r} wrote no GeoPackage, but a later step reads it")
                snap = os.path.join(work, f"after-{step.index:02d}-{step.name}.gpkg")
                shutil.copyfile(gpkg, snap)
                snapshots[step.name] = snap
        if not os.path.exists(gpkg):
            raise StepError("no step wrote any layer: nothing to assemble")
        return _finish(plan, outcomes, work, gpkg, snapshots, dirs, t_start, show_progress, stream)
    finally:
        if keep_work:
            _say(stream, f"work folder kept: {work}")
        else:
            shutil.rmtree(work, ignore_errors=True)


def _layer_note(name, q):
    if not q:
        return name
    parts = [f"{w} {n}" for w, n in q.items() if n]
    return f"{name} ({', '.join(parts)})"


def _last_json(text):
    for line in reversed(text.strip().splitlines()):
        line = line.strip()
        if line.startswith("{"):
            try:
                return json.loads(line)
            except ValueError:
                continue
    return {"output": text.strip()[-500:]} if text.strip() else {}


def _rewrite_provenance(gpkg, plan, outcomes, snapshots, work):
    """Name snapshots as ``@step`` in every provenance record and add the analysis to each."""
    names = {os.path.realpath(p): n for n, p in snapshots.items()}
    by_layer = {}
    for o in outcomes:
        for lyr in o.layers:
            by_layer[lyr] = o
    con = sqlite3.connect(gpkg)
    try:
        with con:
            have = con.execute("SELECT name FROM sqlite_master WHERE type='table' AND name=?", (PROVENANCE,)).fetchone()
            if not have:
                return
            rows = list(con.execute(f'SELECT rowid, layer, record FROM "{PROVENANCE}"'))
            for rowid, layer, record in rows:
                try:
                    rec = json.loads(record)
                except (TypeError, ValueError):
                    continue

                def fix(v):
                    if isinstance(v, str) and v.startswith(work):
                        n = names.get(os.path.realpath(v))
                        return f"@{n}" if n else "(work file of slipsense run)"
                    if isinstance(v, dict):
                        return {k: fix(x) for k, x in v.items()}
                    if isinstance(v, list):
                        return [fix(x) for x in v]
                    return v

                for inp in rec.get("inputs", []):
                    n = names.get(os.path.realpath(str(inp.get("path", ""))))
                    if n:
                        inp["file"] = f"@{n}"
                        inp["path"] = f"layers of this GeoPackage as they were after step {n!r}"
                rec = fix(rec)
                o = by_layer.get(layer)
                rec["analysis"] = {"file": os.path.basename(plan.file), "path": plan.file, "sha256": plan.sha256,
                                   "name": plan.name, "step": o.name if o else None,
                                   "command_line": o.command_line if o else None}
                con.execute(f'UPDATE "{PROVENANCE}" SET record=? WHERE rowid=?',
                            (json.dumps(rec, sort_keys=True, default=str), rowid))
    finally:
        con.close()


def _write_run_table(gpkg, plan, outcomes, quality):
    import pandas as pd
    import pyogrio

    import datetime as _dt

    from ..tools.common import CAUTION

    record = plan.record()
    record["versions"] = versions()
    record["steps_run"] = [{"name": o.name, "command": o.command, "command_line": o.command_line,
                            "seconds": round(o.seconds, 3), "layers": o.layers, "warnings": o.warnings,
                            "summary": o.summary} for o in outcomes]
    record["quality"] = quality
    record["time_utc"] = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
    record["caution"] = CAUTION
    df = pd.DataFrame([{"analysis": plan.name, "file": os.path.basename(plan.file), "sha256": plan.sha256,
                        "record": json.dumps(record, sort_keys=True, default=str), "analysis_text": plan.text}])
    pyogrio.write_dataframe(df, gpkg, layer=RUN_TABLE, driver="GPKG")
    return record


def _step_images(dirs, plan):
    """PNG figures the steps wrote into their output folders, for the report."""
    by_dir = {}
    for s in plan.steps:
        for key, final in s.out_dirs.items():
            by_dir[final] = (s, key)
    out = []
    for src, dst in dirs.items():
        if dst not in by_dir:
            continue
        step, key = by_dir[dst]
        for fn in sorted(os.listdir(src)):
            if fn.lower().endswith(".png"):
                with open(os.path.join(src, fn), "rb") as f:
                    data = f.read()
                stem = os.path.splitext(fn)[0]
                out.append((f"{step.name}_{stem}", f"{stem} (step {step.name}, {step.command})",
                            f"Figure written by step {step.name!r} into {os.path.relpath(dst, plan.out_folder)}/{fn}.",
                            data))
    return out


def _finish(plan, outcomes, work, gpkg, snapshots, dirs, t_start, show_progress, stream):
    _rewrite_provenance(gpkg, plan, outcomes, snapshots, work)
    by_layer = quality_counts(gpkg)
    total = {w: sum(c[w] for c in by_layer.values()) for w in QUALITY_ORDER}
    gate, worse = "off", []
    if plan.fail_below:
        limit = QUALITY_ORDER.index(plan.fail_below)
        gated = by_layer if plan.fail_layers is None else {k: v for k, v in by_layer.items() if k in plan.fail_layers}
        missing = [n for n in (plan.fail_layers or []) if n not in by_layer]
        if missing:
            raise StepError(f"{os.path.basename(plan.file)}: [analysis] fail_layers names {missing[0]!r}, which the "
                            f"run did not write (layers with quality words: {', '.join(by_layer) or 'none'})")
        worse = [(lyr, w, n) for lyr, c in gated.items() for w, n in c.items()
                 if n and QUALITY_ORDER.index(w) > limit]
        gate = "failed" if worse else "passed"
    record = _write_run_table(gpkg, plan, outcomes, by_layer)
    record.update(text=plan.text, description=plan.description, gate_result=None if gate == "off" else gate,
                  results=plan.results)
    report_tmp = None
    figure_files = []
    if plan.report or plan.figures_dir:
        from ..report import build_report

        if show_progress:
            _say(stream, "report: drawing figures")
        html, figs = build_report(gpkg, record, plan.figures, images=_step_images(dirs, plan))
        if plan.report:
            report_tmp = os.path.join(work, "report.html")
            with open(report_tmp, "w", encoding="utf-8") as f:
                f.write(html)
        if plan.figures_dir:
            fd = os.path.join(work, "figures")
            os.makedirs(fd, exist_ok=True)
            for name, png in figs.items():
                with open(os.path.join(fd, f"{name}.png"), "wb") as f:
                    f.write(png)
                figure_files.append(os.path.join(plan.figures_dir, f"{name}.png"))
            dirs[fd] = plan.figures_dir
    # Hand over: the results file first (one rename), then the report and folders.
    os.makedirs(os.path.dirname(plan.results), exist_ok=True)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(gpkg, 0o666 & ~umask)  # temporary files are private; the results are an ordinary file
    os.replace(gpkg, plan.results)
    if report_tmp:
        os.makedirs(os.path.dirname(plan.report), exist_ok=True)
        os.replace(report_tmp, plan.report)
    for src, dst in dirs.items():
        if os.path.isdir(dst):
            shutil.rmtree(dst)
        os.makedirs(os.path.dirname(dst), exist_ok=True)
        os.replace(src, dst)
    code = GATE_EXIT_CODE if gate == "failed" else 0
    return RunResult(plan, outcomes, total, by_layer, gate, worse, code, plan.results, plan.report if report_tmp else None,
                     figure_files, time.time() - t_start)
