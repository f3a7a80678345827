"""Reading and checking an analysis file (TOML) into a :class:`Plan`, before any work starts.

The analysis file names its inputs, its steps (each an ordinary ``slipsense`` subcommand with its
options as keys) and its outputs.  Everything that can be checked without computing is checked
here: the file's own keys, every step's command and options (parsed by that command's own
argparse parser, so a new command is available as a step as soon as it is in the CLI), the input
files, declared layers and fields, the references between steps, and the outputs (never silently
overwritten).  Paths are relative to the analysis file; outputs to ``--out-dir`` when given.

The library does not import the CLI: the caller (``slipsense run``) passes the commands as
:class:`Command` objects.
"""
from __future__ import annotations

import contextlib
import difflib
import hashlib
import io
import os
import re
from dataclasses import dataclass, field

from ..errors import DataError, FileFormatError, InputError, OutputExistsError

__all__ = [
    "AnalysisError",
    "Command",
    "InputFile",
    "StepPlan",
    "Plan",
    "QUALITY_ORDER",
    "load_analysis",
    "plan_analysis",
]

#: quality words from best to worst
QUALITY_ORDER = ("good", "fair", "poor", "ill-posed")

TOP_KEYS = {"analysis", "inputs", "outputs", "figures", "steps"}
ANALYSIS_KEYS = {"name", "description", "seed", "fail_below", "fail_layers"}
OUTPUT_KEYS = {"folder", "gpkg", "report", "figures", "overwrite"}
FIGURE_KEYS = {"enabled", "kamb_sigma", "rose_bin_deg", "dpi"}
INPUT_KEYS = {"path", "layers"}
STEP_META = {"command", "name"}
#: options the pipeline sets itself
RESERVED = {
    "out": "steps write where slipsense run tells them; name the results file in [outputs] gpkg",
    "overwrite": "each run writes fresh files; replacing results is [outputs] overwrite (or --overwrite)",
    "json": "slipsense run collects every step's summary itself (use slipsense run --json)",
    "quiet": "use slipsense run --quiet",
    "help": "not a step option",
    "version": "not a step option",
}
#: metavars of options that name files to read
FILE_METAVARS = {"VECTOR", "DEM", "GPKG", "RASTER", "FILE", "PATH", "CSV", "TABLE"}
#: metavars of options that name folders a step writes into
DIR_METAVARS = {"DIR", "FOLDER"}
PATH_SUFFIXES = (".gpkg", ".tif", ".tiff", ".vrt", ".geojson", ".json", ".shp", ".csv", ".fgb", ".asc", ".img")
RASTER_SUFFIXES = (".tif", ".tiff", ".vrt", ".asc", ".img")


class AnalysisError(InputError):
    """The analysis file is wrong (a key, a value, an input, an output); nothing was computed."""


@dataclass(frozen=True)
class Command:
    """A subcommand as the pipeline sees it: its argparse parser and its ``run(args)`` function."""

    name: str
    parser: object
    run: object


@dataclass
class InputFile:
    name: str
    path: str
    layers: dict = field(default_factory=dict)  # layer -> list of required fields


@dataclass
class StepPlan:
    """One checked step.

    ``argv`` holds plain strings and, for references to earlier steps, ``("step", name)``
    tuples, for named inputs ``("input", name, path)`` and for output folders
    ``("dir", key, path)`` tuples; :meth:`Runner` turns them
    into paths when the step runs.
    """

    index: int
    name: str
    command: str
    keys: dict
    argv: list
    reads_steps: list
    input_files: list
    out_dirs: dict          # key -> final folder path
    out_layer: str | None
    has_out: bool

    def display(self):
        """The step as a command line (references shown as @name)."""
        parts = ["slipsense", self.command]
        for a in self.argv:
            if isinstance(a, tuple):
                parts.append("@" + a[1] if a[0] in ("step", "input") else a[2])
            else:
                parts.append(a)
        return " ".join(_quote(p) for p in parts)


@dataclass
class Plan:
    file: str
    folder: str
    sha256: str
    name: str
    description: str
    seed: int | None
    fail_below: str | None
    fail_layers: list | None
    inputs: dict
    steps: list
    out_folder: str
    results: str
    report: str | None
    figures_dir: str | None
    overwrite: bool
    figures: dict
    text: str

    def record(self):
        """A JSON-able description of the plan (for provenance and --json)."""
        return {
            "analysis": self.name,
            "file": os.path.basename(self.file),
            "path": os.path.abspath(self.file),
            "sha256": self.sha256,
            "seed": self.seed,
            "fail_below": self.fail_below,
            "fail_layers": self.fail_layers,
            "inputs": {k: {"path": v.path, "layers": v.layers} for k, v in self.inputs.items()},
            "steps": [{"name": s.name, "command": s.command, "options": s.keys, "command_line": s.display()}
                      for s in self.steps],
            "results": self.results,
            "report": self.report,
        }


def _quote(s):
    s = str(s)
    return s if re.fullmatch(r"[\w@%+=:,./-]+", s) else "'" + s.replace("'", "'\\''") + "'"


def _suggest(word, options):
    close = difflib.get_close_matches(str(word), sorted(options), n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _check_keys(where, table, allowed, fname):
    if not isinstance(table, dict):
        raise AnalysisError(f"{fname}: {where} must be a table, got {type(table).__name__}")
    for k in table:
        if k not in allowed:
            raise AnalysisError(f"{fname}: unknown key {k!r} in {where}{_suggest(k, allowed)}; "
                                f"allowed: {', '.join(sorted(allowed))}")


def load_analysis(path, commands, out_dir=None, overwrite=None, fail_below=None):
    """Read and check the analysis file ``path``; returns a :class:`Plan`.

    ``commands``: dict name -> :class:`Command`.  ``out_dir``, ``overwrite`` and ``fail_below``
    override the file's ``[outputs] folder``, ``[outputs] overwrite`` and ``[analysis]
    fail_below``.  Raises :class:`AnalysisError` (an ``InputError``) naming the file, the table
    and the key.
    """
    import tomllib

    if not os.path.isfile(path):
        raise FileFormatError(f"analysis file not found: {path}")
    with open(path, "rb") as f:
        raw = f.read()
    try:
        text = raw.decode("utf-8")
        data = tomllib.loads(text)
    except UnicodeDecodeError as exc:
        raise AnalysisError(f"{path}: not UTF-8 text ({exc})") from exc
    except tomllib.TOMLDecodeError as exc:
        raise AnalysisError(f"{path}: not valid TOML: {exc}") from exc
    return plan_analysis(data, path, commands, out_dir=out_dir, overwrite=overwrite, fail_below=fail_below,
                         sha256=hashlib.sha256(raw).hexdigest(), text=text)


def plan_analysis(data, path, commands, out_dir=None, overwrite=None, fail_below=None, sha256="", text=""):
    """Check parsed analysis ``data`` (a dict as from tomllib) read from ``path``."""
    fname = os.path.basename(path)
    folder = os.path.dirname(os.path.abspath(path))
    _check_keys("the file (top level)", data, TOP_KEYS, fname)
    ana = data.get("analysis", {})
    _check_keys("[analysis]", ana, ANALYSIS_KEYS, fname)
    name = str(ana.get("name", os.path.splitext(fname)[0]))
    seed = ana.get("seed")
    if seed is not None and (not isinstance(seed, int) or isinstance(seed, bool) or seed < 0):
        raise AnalysisError(f"{fname}: [analysis] seed must be a whole number >= 0, got {seed!r}")
    gate = fail_below if fail_below is not None else ana.get("fail_below")
    if gate is not None and gate not in QUALITY_ORDER:
        raise AnalysisError(f"{fname}: [analysis] fail_below must be one of {', '.join(QUALITY_ORDER)}, "
                            f"got {gate!r}{_suggest(gate, QUALITY_ORDER)}")
    fail_layers = ana.get("fail_layers")
    if fail_layers is not None and (not isinstance(fail_layers, list) or not all(isinstance(x, str) for x in fail_layers)):
        raise AnalysisError(f"{fname}: [analysis] fail_layers must be a list of layer names")

    inputs = _read_inputs(data.get("inputs", {}), folder, fname)
    outs = data.get("outputs", {})
    _check_keys("[outputs]", outs, OUTPUT_KEYS, fname)
    figs = data.get("figures", {})
    _check_keys("[figures]", figs, FIGURE_KEYS, fname)
    figures = {"enabled": True, "kamb_sigma": 3.0, "rose_bin_deg": 10.0, "dpi": 110}
    for k, v in figs.items():
        if k == "enabled":
            if not isinstance(v, bool):
                raise AnalysisError(f"{fname}: [figures] enabled must be true or false")
        elif not isinstance(v, (int, float)) or isinstance(v, bool) or not v > 0:
            raise AnalysisError(f"{fname}: [figures] {k} must be a positive number, got {v!r}")
        figures[k] = v
    if 360.0 / figures["rose_bin_deg"] % 1:
        raise AnalysisError(f"{fname}: [figures] rose_bin_deg must divide 360, got {figures['rose_bin_deg']!r}")

    out_folder = os.path.abspath(out_dir) if out_dir else os.path.abspath(os.path.join(folder, str(outs.get("folder", "."))))
    results = _out_path(out_folder, outs.get("gpkg", "results.gpkg"), "gpkg", fname)
    if not results.lower().endswith(".gpkg"):
        raise AnalysisError(f"{fname}: [outputs] gpkg must end in .gpkg, got {outs.get('gpkg')!r}")
    report = outs.get("report", "report.html")
    report = None if report is False else _out_path(out_folder, report, "report", fname)
    fig_dir = outs.get("figures", False)
    fig_dir = None if fig_dir is False else _out_path(out_folder, fig_dir, "figures", fname)
    ow = outs.get("overwrite", False) if overwrite is None else overwrite
    if not isinstance(ow, bool):
        raise AnalysisError(f"{fname}: [outputs] overwrite must be true or false")

    steps_raw = data.get("steps", [])
    if not isinstance(steps_raw, list) or not steps_raw:
        raise AnalysisError(f"{fname}: no steps: add [[steps]] tables, each with a command, e.g. "
                            "command = \"trace-planes\"")
    steps = []
    names = {}
    for i, st in enumerate(steps_raw, 1):
        steps.append(_plan_step(i, st, commands, inputs, names, folder, out_folder, seed, fname, results))
        names[steps[-1].name] = steps[-1]
    _check_inputs(inputs, steps, fname)
    _check_outputs(steps, results, report, fig_dir, ow, inputs, fname)
    return Plan(file=os.path.abspath(path), folder=folder, sha256=sha256, name=name,
                description=str(ana.get("description", "")), seed=seed, fail_below=gate,
                fail_layers=fail_layers, inputs=inputs, steps=steps, out_folder=out_folder, results=results,
                report=report, figures_dir=fig_dir, overwrite=ow, figures=figures, text=text)


def _out_path(out_folder, value, key, fname):
    if not isinstance(value, str) or not value:
        raise AnalysisError(f"{fname}: [outputs] {key} must be a file name, got {value!r}")
    return os.path.abspath(os.path.join(out_folder, value))


def _read_inputs(table, folder, fname):
    if not isinstance(table, dict):
        raise AnalysisError(f"{fname}: [inputs] must be a table of name = \"path\"")
    out = {}
    for name, spec in table.items():
        if not re.fullmatch(r"[A-Za-z_][\w-]*", name):
            raise AnalysisError(f"{fname}: input name {name!r} must be a word (letters, digits, _ and -)")
        if isinstance(spec, str):
            path, layers = spec, {}
        elif isinstance(spec, dict):
            _check_keys(f"[inputs.{name}]", spec, INPUT_KEYS, fname)
            if "path" not in spec:
                raise AnalysisError(f"{fname}: [inputs.{name}] needs a path")
            path, layers = spec["path"], spec.get("layers", {})
            if isinstance(layers, list):
                layers = {str(x): [] for x in layers}
            if not isinstance(layers, dict) or not all(isinstance(v, list) for v in layers.values()):
                raise AnalysisError(f"{fname}: [inputs.{name}] layers must be a list of layer names or a table "
                                    "layer = [fields]")
        else:
            raise AnalysisError(f"{fname}: input {name!r} must be a path or a table with path (and layers)")
        if not isinstance(path, str) or not path:
            raise AnalysisError(f"{fname}: input {name!r}: path must be text")
        out[name] = InputFile(name, os.path.abspath(os.path.join(folder, path)),
                              {str(k): [str(f) for f in v] for k, v in layers.items()})
    return out


def _option_index(parser):
    """option key -> argparse action, for every ``--long-option`` of ``parser``."""
    index = {}
    for action in parser._actions:
        for opt in action.option_strings:
            if opt.startswith("--"):
                index[opt[2:]] = action
    return index


def _plan_step(i, st, commands, inputs, earlier, folder, out_folder, seed, fname, results):
    where = f"step {i}"
    if not isinstance(st, dict):
        raise AnalysisError(f"{fname}: {where} must be a table ([[steps]])")
    command = st.get("command")
    if not isinstance(command, str) or not command:
        raise AnalysisError(f"{fname}: {where} has no command; the commands are: {', '.join(sorted(commands))}")
    if command not in commands:
        raise AnalysisError(f"{fname}: {where}: unknown command {command!r}{_suggest(command, commands)}; "
                            f"the commands are: {', '.join(sorted(commands))}")
    name = st.get("name", command)
    if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z_][\w-]*", name):
        raise AnalysisError(f"{fname}: {where}: name must be a word (letters, digits, _ and -), got {name!r}")
    where = f"step {i} ({name!r}, {command})"
    if name in earlier or name in inputs:
        raise AnalysisError(f"{fname}: {where}: the name {name!r} is already used by "
                            f"{'another step' if name in earlier else 'an input'}; give the step its own name")
    cmd = commands[command]
    index = _option_index(cmd.parser)
    argv, reads, files, out_dirs = [], [], [], {}
    keys = {k: v for k, v in st.items() if k not in STEP_META}
    for key, value in keys.items():
        opt = key.replace("_", "-")
        if opt in RESERVED:
            raise AnalysisError(f"{fname}: {where}: key {key!r} cannot be set in a step: {RESERVED[opt]}")
        action = index.get(opt)
        if action is None:
            usable = sorted(k.replace("-", "_") for k in index if k not in RESERVED)
            raise AnalysisError(f"{fname}: {where}: unknown key {key!r} for {command}"
                                f"{_suggest(opt.replace('-', '_'), usable)}; its keys are: {', '.join(usable)}")
        flag = "--" + opt
        argv += _values_to_argv(flag, key, value, action, where, fname, inputs, earlier, folder, out_folder,
                                reads, files, out_dirs)
    has_out = "out" in index
    seeded = "seed" in index and "seed" not in {k.replace("_", "-") for k in keys}
    if seeded and seed is not None:
        argv += ["--seed", str(seed)]
    tail = ["--out", results + f".step{i}"] if has_out else []
    tail += ["--json"] if "json" in index else []
    _parse(cmd, [_placeholder(a) for a in argv] + tail, where, fname)
    out_layer = keys.get("out_layer", keys.get("out-layer"))
    if out_layer is None and "out-layer" in index:
        out_layer = index["out-layer"].default
    _check_step_layers(keys, argv, inputs, reads, where, fname)
    return StepPlan(i, name, command, keys, argv, reads, files, out_dirs, out_layer, has_out)


def _placeholder(a):
    if isinstance(a, tuple):
        return f"@{a[1]}" if a[0] == "step" else a[2]
    return a


def materialize(a):
    """The path or text of one argv item outside the run (inputs and output folders)."""
    return a[2] if isinstance(a, tuple) and a[0] in ("input", "dir") else a


def _parse(cmd, argv, where, fname):
    err = io.StringIO()
    try:
        with contextlib.redirect_stderr(err):
            cmd.parser.parse_args(argv)
    except SystemExit as exc:
        lines = [ln for ln in err.getvalue().strip().splitlines() if ln.strip()]
        msg = lines[-1] if lines else f"options not accepted (exit {exc.code})"
        msg = re.sub(r"^.*?error: ", "", msg)
        msg = re.sub(r"--([\w-]+)", lambda m: m.group(1).replace("-", "_"), msg)
        raise AnalysisError(f"{fname}: {where}: {msg}") from None


def _is_pathlike(action, value):
    meta = (action.metavar or "").upper() if isinstance(action.metavar, str) else ""
    return meta in FILE_METAVARS or meta.endswith(".GPKG") or str(value).lower().endswith(PATH_SUFFIXES)


def _values_to_argv(flag, key, value, action, where, fname, inputs, earlier, folder, out_folder, reads, files,
                    out_dirs):
    kind = type(action).__name__
    if kind in ("_StoreTrueAction", "_StoreFalseAction", "BooleanOptionalAction"):
        if not isinstance(value, bool):
            raise AnalysisError(f"{fname}: {where}: {key} is a switch: give true or false, got {value!r}")
        if kind == "_StoreTrueAction":
            return [flag] if value else []
        if kind == "_StoreFalseAction":
            return [] if value else [flag]
        return [flag] if value else ["--no-" + flag[2:]]
    if kind in ("_CountAction",):
        if not isinstance(value, int) or isinstance(value, bool) or value < 0:
            raise AnalysisError(f"{fname}: {where}: {key} takes a count (0, 1, 2 ...), got {value!r}")
        return [flag] * value
    if isinstance(value, bool):
        raise AnalysisError(f"{fname}: {where}: {key} takes a value, not {str(value).lower()}")
    many = action.nargs in ("+", "*") or (isinstance(action.nargs, int) and action.nargs > 1)
    append = kind == "_AppendAction"
    if isinstance(value, dict):
        raise AnalysisError(f"{fname}: {where}: {key} takes a value, not a table")
    if isinstance(value, list):
        if not (many or append):
            raise AnalysisError(f"{fname}: {where}: {key} takes one value, not a list")
        items = [_one_value(key, v, action, where, fname, inputs, earlier, folder, out_folder, reads, files, out_dirs)
                 for v in value]
        if append:
            return [x for it in items for x in (flag, it)]
        return [flag, *items]
    return [flag, _one_value(key, value, action, where, fname, inputs, earlier, folder, out_folder, reads, files,
                             out_dirs)]


def _one_value(key, value, action, where, fname, inputs, earlier, folder, out_folder, reads, files, out_dirs):
    if isinstance(value, (dict, list, bool)):
        raise AnalysisError(f"{fname}: {where}: {key}: nested values are not allowed, got {value!r}")
    text = str(value) if not isinstance(value, float) else repr(value)
    meta = (action.metavar or "").upper() if isinstance(action.metavar, str) else ""
    if isinstance(value, str) and value.startswith("@@"):
        return value[1:]
    if isinstance(value, str) and value.startswith("@"):
        ref = value[1:]
        if ref in inputs:
            files.append(inputs[ref].path)
            return ("input", ref, inputs[ref].path)
        if ref in earlier:
            if not earlier[ref].has_out:
                raise AnalysisError(f"{fname}: {where}: {key} = {value!r}: step {ref!r} writes no layers")
            reads.append(ref)
            return ("step", ref)
        known = sorted(set(inputs) | set(earlier))
        raise AnalysisError(f"{fname}: {where}: {key} = {value!r} names no input and no earlier step"
                            f"{_suggest(ref, known)}; inputs: {', '.join(sorted(inputs)) or 'none'}; earlier steps: "
                            f"{', '.join(earlier) or 'none'}")
    if meta in DIR_METAVARS:
        final = os.path.abspath(os.path.join(out_folder, text))
        out_dirs[key] = final
        return ("dir", key, final)
    if isinstance(value, str) and _is_pathlike(action, value):
        p = os.path.abspath(os.path.join(folder, value))
        if not os.path.exists(p):
            raise AnalysisError(f"{fname}: {where}: {key}: input file not found: {p}")
        files.append(p)
        return p
    return text


def _check_step_layers(keys, argv, inputs, reads, where, fname):
    """Layers and fields a step names in inputs of the analysis must exist (checked now, not
    after earlier steps have run).  ``X_layer`` pairs with key ``X``; ``layer`` with the one
    vector input of the step.  Fields (``*_field``) must be in one of those layers (checked only
    when the step reads no earlier step's layers, where a field could be)."""
    from ..io.vector import list_layers

    by_key = {}
    for k, v in keys.items():
        if isinstance(v, str) and v.startswith("@") and v[1:] in inputs:
            by_key[k.replace("-", "_")] = inputs[v[1:]]
    vectors = {k: f for k, f in by_key.items() if not f.path.lower().endswith(RASTER_SUFFIXES)}
    checked = []
    for k, v in keys.items():
        k = k.replace("-", "_")
        if not isinstance(v, str) or not (k == "layer" or k.endswith("_layer")):
            continue
        src = None
        if k == "layer":
            if len({f.path for f in vectors.values()}) == 1:
                src = next(iter(vectors.values()))
        else:
            src = vectors.get(k[: -len("_layer")])
        if src is None or not os.path.exists(src.path):
            continue
        have = list_layers(src.path)
        if v not in have:
            raise AnalysisError(f"{fname}: {where}: {k} = {v!r}: {os.path.basename(src.path)} has no such layer"
                                f"{_suggest(v, have)}; its layers are: {', '.join(have)}")
        checked.append((src, v))
    if not checked:
        return
    fields = {}
    for src, lyr in checked:
        fields.setdefault((src.path, lyr), set(_fields(src.path, lyr)))
    everything = set().union(*fields.values())
    for k, v in keys.items():
        k = k.replace("-", "_")
        if isinstance(v, str) and k.endswith("_field") and v not in everything and not reads:
            layers = ", ".join(f"{os.path.basename(p)}|{lyr}" for p, lyr in fields)
            raise AnalysisError(f"{fname}: {where}: {k} = {v!r} is not a field of {layers}"
                                f"{_suggest(v, everything)}; fields: {', '.join(sorted(everything))}")


def _fields(path, layer):
    import pyogrio

    try:
        return [str(f) for f in pyogrio.read_info(path, layer=layer)["fields"]]
    except Exception as exc:  # pyogrio's own errors
        raise FileFormatError(f"cannot read {path}|{layer}: {exc}") from exc


def _check_inputs(inputs, steps, fname):  # noqa: ARG001 - steps kept for future checks
    from ..io.vector import list_layers

    for inp in inputs.values():
        if not os.path.exists(inp.path):
            raise AnalysisError(f"{fname}: input {inp.name!r} not found: {inp.path}")
        if inp.layers:
            have = list_layers(inp.path)
            for lyr, flds in inp.layers.items():
                if lyr not in have:
                    raise AnalysisError(f"{fname}: input {inp.name!r}: {os.path.basename(inp.path)} has no layer "
                                        f"{lyr!r}{_suggest(lyr, have)}; its layers are: {', '.join(have)}")
                got = _fields(inp.path, lyr)
                for f in flds:
                    if f not in got:
                        raise AnalysisError(f"{fname}: input {inp.name!r}: layer {lyr!r} has no field {f!r}"
                                            f"{_suggest(f, got)}; its fields are: {', '.join(got)}")


def _check_outputs(steps, results, report, fig_dir, overwrite, inputs, fname):
    ins = {os.path.realpath(i.path) for i in inputs.values()} | {os.path.realpath(p) for s in steps for p in s.input_files}
    for label, p in (("results GeoPackage", results), ("report", report)):
        if p is None:
            continue
        if os.path.realpath(p) in ins:
            raise OutputExistsError(f"{fname}: the {label} {p} is also an input: inputs are never written")
        if os.path.exists(p) and not overwrite:
            raise OutputExistsError(f"{fname}: the {label} {p} exists: use --overwrite (or [outputs] overwrite = "
                                    "true) to replace it, or choose another --out-dir")
    dirs = [(f"step {s.name!r} {k}", d) for s in steps for k, d in s.out_dirs.items()]
    if fig_dir:
        dirs.append(("figures folder", fig_dir))
    for label, d in dirs:
        if os.path.exists(d) and not os.path.isdir(d):
            raise OutputExistsError(f"{fname}: the {label} {d} is a file, not a folder")
        if os.path.isdir(d) and os.listdir(d) and not overwrite:
            raise OutputExistsError(f"{fname}: the {label} {d} is not empty: use --overwrite to replace it")
    seen = {}
    for s in steps:
        if s.out_layer:
            if s.out_layer in seen:
                raise AnalysisError(f"{fname}: steps {seen[s.out_layer]!r} and {s.name!r} both write layer "
                                    f"{s.out_layer!r}: give one of them another out_layer")
            seen[s.out_layer] = s.name
    parent = os.path.dirname(results)
    if os.path.exists(parent) and not os.path.isdir(parent):
        raise DataError(f"{fname}: the output folder {parent} is a file")
