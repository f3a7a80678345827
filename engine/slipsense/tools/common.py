"""Shared plumbing of the file-level tools: provenance, writing step results."""
from __future__ import annotations

import datetime as _dt
import hashlib
import os

from .. import __version__
from ..io.vector import table_to_frame, write_tables

__all__ = ["sha256_file", "provenance", "write_result", "CAUTION"]

CAUTION = (
    "Results are interpretations for screening. They must be checked by a qualified professional "
    "against local codes and licensed practice before they inform hazard, slope, foundation or "
    "drilling decisions."
)


def sha256_file(path, chunk=1 << 20):
    """SHA-256 hex digest of a file (read in chunks)."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(chunk), b""):
            h.update(block)
    return h.hexdigest()


def provenance(command, parameters, inputs, working_crs, north_reference="grid"):
    """The provenance record of one run (a JSON-able dict)."""
    crs_id = working_crs.to_authority() if working_crs is not None else None
    return {
        "command": command,
        "parameters": parameters,
        "engine": f"slipsense {__version__}",
        "inputs": [
            {"file": os.path.basename(p), "path": os.path.abspath(p), "sha256": sha256_file(p)}
            for p in dict.fromkeys(inputs) if p and os.path.isfile(p)
        ],
        "working_crs": ":".join(crs_id) if crs_id else (working_crs.name if working_crs else None),
        "north_reference": north_reference,
        "time_utc": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "caution": CAUTION,
    }


def write_result(out, step, names, crs, prov, overwrite, source=None):
    """Write the tables of ``step`` (a StepResult) as layers named by ``names`` (table -> layer)."""
    frames = {}
    for table_name, layer_name in names.items():
        table = step.tables.get(table_name)
        if table is None:
            continue
        frames[layer_name] = table_to_frame(table, crs, source)
    write_tables(out, frames, prov, overwrite=overwrite)
    return list(frames)
