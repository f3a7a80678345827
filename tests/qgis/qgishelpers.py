"""Small helpers shared by the QGIS tests."""
import math
import os
import sqlite3
import subprocess
from pathlib import Path

import numpy as np
import pytest

REPO = Path(__file__).resolve().parents[2]  # paths relative to the repository, never absolute
PLUGIN_DIR = REPO / "qgis_plugin"
ENGINE_DIR = REPO / "engine"
PLUGIN_ID = "slipsense_qgis"
PROVIDER_ID = "slipsense"
QGIS_PROCESS = "/usr/bin/qgis_process.bin"
DEMO_DIR = REPO / "demo_gpkg"
IN_CI = os.environ.get("CI", "").lower() in ("1", "true", "yes")


def base_env(root):
    """Variables every QGIS process of the tests runs with (recipe section 0)."""
    root = Path(root)
    for sub in ("home", "profile", "runtime"):
        (root / sub).mkdir(parents=True, exist_ok=True)
    os.chmod(root / "runtime", 0o700)
    return {
        "QT_QPA_PLATFORM": "offscreen",
        "HOME": str(root / "home"),
        "QGIS_CUSTOM_CONFIG_PATH": str(root / "profile"),
        "XDG_RUNTIME_DIR": str(root / "runtime"),
        "PYTHONWARNINGS": "ignore::DeprecationWarning",
        "LC_ALL": "C.UTF-8",
    }


def qgis_process_env(root, plugin_path=True, engine_path=True, enable=True):
    """Environment for a qgis_process.bin child with its own throwaway profile under ``root``."""
    env = {k: v for k, v in os.environ.items()
           if k not in ("QGIS_PLUGINPATH", "PYTHONPATH", "PYTHONHOME", "QGIS_PREFIX_PATH")}
    env.update(base_env(root))
    env["PATH"] = "/usr/bin:" + env.get("PATH", "")
    if plugin_path:
        env["QGIS_PLUGINPATH"] = str(PLUGIN_DIR)
    if engine_path:
        env["PYTHONPATH"] = str(ENGINE_DIR)
    if enable:
        ini = Path(root) / "profile" / "profiles" / "default" / "QGIS" / "QGIS3.ini"
        ini.parent.mkdir(parents=True, exist_ok=True)
        ini.write_text(f"[PythonPlugins]\n{PLUGIN_ID}=true\n")
    return env


def run_qgis_process(args, env, timeout=120):
    if not Path(QGIS_PROCESS).exists():
        if IN_CI:
            pytest.fail(f"{QGIS_PROCESS} is missing")
        pytest.skip(f"{QGIS_PROCESS} is missing")
    return subprocess.run([QGIS_PROCESS, *args], env=env, capture_output=True, text=True,
                          timeout=timeout, stdin=subprocess.DEVNULL)




def run(alg_id, params, feedback=None, context=None):
    """processing.run with a quiet feedback by default."""
    import processing
    from qgis.core import QgsProcessingFeedback

    return processing.run(alg_id, params, feedback=feedback or QgsProcessingFeedback(), context=context)


def ogr_dest(path, table):
    """Sink destination writing (only) table ``table`` of the GeoPackage ``path``."""
    return f"ogr:dbname='{path}' table=\"{table}\" (geom)"


def gpkg_tables(path):
    with sqlite3.connect(str(path)) as con:
        return sorted(r[0] for r in con.execute("SELECT table_name FROM gpkg_contents"))


def gpkg_rows(path, table):
    """Attribute rows of a GeoPackage table as dicts (without fid and geometry), in fid order."""
    with sqlite3.connect(str(path)) as con:
        geom = con.execute("SELECT column_name FROM gpkg_geometry_columns WHERE table_name = ?",
                           (table,)).fetchone()
        cols = [r[1] for r in con.execute(f'PRAGMA table_info("{table}")')]
        skip = {"fid", geom[0] if geom else None}
        keep = [c for c in cols if c not in skip]
        order = "fid" if "fid" in cols else "rowid"
        rows = con.execute(f'SELECT {", ".join(chr(34) + c + chr(34) for c in keep)} FROM "{table}" ORDER BY {order}').fetchall()
    return keep, [dict(zip(keep, r)) for r in rows]


def gpkg_columns(path, table):
    """(name, declared type) of the attribute columns of a table, in order."""
    with sqlite3.connect(str(path)) as con:
        geom = con.execute("SELECT column_name FROM gpkg_geometry_columns WHERE table_name = ?",
                           (table,)).fetchone()
        return [(r[1], r[2]) for r in con.execute(f'PRAGMA table_info("{table}")')
                if r[1] not in ("fid", geom[0] if geom else None)]


def layer(path, table):
    from qgis.core import QgsVectorLayer

    lyr = QgsVectorLayer(f"{path}|layername={table}", table, "ogr")
    assert lyr.isValid(), f"{path}|layername={table} is not a valid layer"
    return lyr


def layer_rows(lyr):
    """Attributes of a layer as dicts with None for NULL (without the GeoPackage ``fid``)."""
    names = [n for n in lyr.fields().names() if n != "fid"]
    out = []
    for f in lyr.getFeatures():
        row = {}
        for n in names:
            v = f[n]
            if v is None or (hasattr(v, "isNull") and v.isNull()):
                v = None
            row[n] = v
        out.append(row)
    return out


def assert_rows_equal(a, b, rel=1e-9, abs_=1e-9, skip=()):
    """Rows equal field by field: same fields and order, floats to a tolerance, NULL == NULL."""
    assert len(a) == len(b), f"{len(a)} rows != {len(b)} rows"
    for i, (ra, rb) in enumerate(zip(a, b)):
        ka = [k for k in ra if k not in skip]
        kb = [k for k in rb if k not in skip]
        assert ka == kb, f"row {i}: fields {ka} != {kb}"
        for k in ka:
            va, vb = ra[k], rb[k]
            if isinstance(va, float) or isinstance(vb, float):
                if va is None or vb is None:
                    assert va is None and vb is None, f"row {i} {k}: {va!r} != {vb!r}"
                elif math.isnan(va) or math.isnan(vb):
                    assert math.isnan(va) and math.isnan(vb), f"row {i} {k}: {va!r} != {vb!r}"
                else:
                    assert math.isclose(va, vb, rel_tol=rel, abs_tol=abs_), f"row {i} {k}: {va!r} != {vb!r}"
            else:
                assert va == vb, f"row {i} {k}: {va!r} != {vb!r}"


def geometries(lyr):
    """Each feature's vertices as an (n, 2|3) array."""
    out = []
    for f in lyr.getFeatures():
        g = f.geometry()
        out.append(np.array([[v.x(), v.y()] + ([v.z()] if v.is3D() else []) for v in g.vertices()]))
    return out
