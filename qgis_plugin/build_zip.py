#!/usr/bin/env python3
"""Build the installable QGIS plugin ZIP: ``dist/slipsense_qgis-<version>.zip``.

The ZIP holds the plugin package ``slipsense_qgis/`` and, inside it, a copy of the engine's
numpy-only parts as ``slipsense_qgis/slipsense/`` (``__init__.py``, ``errors.py``, ``steps/``,
``tables/``, ``core/``) — never ``io/``, ``tools/`` or ``cli/``, which need rasterio and
geopandas.  The plugin imports the vendored copy first (``from .slipsense import ...``), so it
needs nothing but the numpy that QGIS ships.  Standard library only::

    python3 qgis_plugin/build_zip.py --out dist      # prints the path of the ZIP
"""
import argparse
import configparser
import os
import sys
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
PLUGIN = "slipsense_qgis"
ENGINE = REPO / "engine" / "slipsense"
#: Parts of the engine shipped with the plugin (files and whole folders, relative to ENGINE).
ENGINE_PARTS = ("__init__.py", "errors.py", "steps", "tables", "core")
#: Fixed timestamp: the same sources give the same ZIP bytes.
EPOCH = (2024, 1, 1, 0, 0, 0)


def plugin_version():
    meta = configparser.ConfigParser()
    meta.read(HERE / PLUGIN / "metadata.txt", encoding="utf-8")
    return meta["general"]["version"]


def _files(root):
    """Source files under ``root`` (sorted), without caches and compiled files."""
    root = Path(root)
    if root.is_file():
        yield root
        return
    for dirpath, dirnames, filenames in os.walk(root):
        dirnames[:] = sorted(d for d in dirnames if d != "__pycache__" and not d.startswith("."))
        for name in sorted(filenames):
            if name.endswith((".pyc", ".pyo")) or name.startswith("."):
                continue
            yield Path(dirpath) / name


def _add(zf, path, arcname):
    info = zipfile.ZipInfo(arcname, EPOCH)
    info.compress_type = zipfile.ZIP_DEFLATED
    info.external_attr = 0o644 << 16
    zf.writestr(info, Path(path).read_bytes())


def build(out_dir):
    """Write the ZIP into ``out_dir`` (created if needed); return its path."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    target = out_dir / f"{PLUGIN}-{plugin_version()}.zip"
    vendored = HERE / PLUGIN / "slipsense"
    if vendored.exists():
        raise SystemExit(f"{vendored} exists in the source tree; the engine is vendored only into the ZIP")
    tmp = target.with_suffix(".zip.tmp")
    with zipfile.ZipFile(tmp, "w") as zf:
        for f in _files(HERE / PLUGIN):
            _add(zf, f, f"{PLUGIN}/{f.relative_to(HERE / PLUGIN).as_posix()}")
        for extra in ("LICENSE", "LICENSE.txt", "LICENSE.md"):
            if (REPO / extra).is_file():
                _add(zf, REPO / extra, f"{PLUGIN}/{extra}")
        for part in ENGINE_PARTS:
            src = ENGINE / part
            if not src.exists():
                raise SystemExit(f"engine part {src} is missing")
            for f in _files(src):
                _add(zf, f, f"{PLUGIN}/slipsense/{f.relative_to(ENGINE).as_posix()}")
    os.replace(tmp, target)
    return target


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("--out", default=str(REPO / "dist"), help="output folder (default: <repo>/dist)")
    args = p.parse_args(argv)
    print(build(args.out))
    return 0


if __name__ == "__main__":
    sys.exit(main())
