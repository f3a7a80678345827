"""Session set-up of the QGIS tests: a throwaway QGIS profile, QgsApplication, Processing, and the
plugin loaded from ``qgis_plugin/`` the way qgis_process loads it (metadata.txt + classFactory +
initProcessing).  Run with Debian's interpreter, which has PyQGIS::

    /usr/bin/python3 -m pytest tests/qgis -p no:cacheprovider

Without PyQGIS the tests are skipped, except with ``CI=true``, where that is an error.
"""
import os
import shutil
import sys
import tempfile
from pathlib import Path

import pytest

from qgishelpers import DEMO_DIR, ENGINE_DIR, IN_CI, PLUGIN_DIR, PLUGIN_ID, PROVIDER_ID, REPO, base_env, qgis_process_env

_TMP = Path(tempfile.mkdtemp(prefix="slipsense-qgis-tests-"))


# Environment before anything touches QGIS.
os.environ.update(base_env(_TMP / "inproc"))
if str(ENGINE_DIR) not in sys.path:
    sys.path.insert(0, str(ENGINE_DIR))

try:
    from qgis.core import QgsApplication  # noqa: E402

    HAVE_QGIS = True
    _QGIS_ERROR = ""
except ImportError as exc:  # pragma: no cover - depends on the interpreter
    HAVE_QGIS = False
    _QGIS_ERROR = str(exc)
    if IN_CI:
        raise RuntimeError(
            f"PyQGIS is not importable ({exc}); the QGIS tests must run under Debian's /usr/bin/python3 "
            "with python3-qgis installed (make qgis)"
        ) from exc


def pytest_collection_modifyitems(config, items):
    here = Path(__file__).parent
    for item in items:
        if here in Path(str(item.fspath)).parents:
            item.add_marker(pytest.mark.qgis)


@pytest.fixture(scope="session")
def qgis_app():
    """QgsApplication with Processing and the slipsense plugin loaded like qgis_process does."""
    if not HAVE_QGIS:
        pytest.skip(f"PyQGIS not available: {_QGIS_ERROR}")
    QgsApplication.setPrefixPath("/usr", True)
    app = QgsApplication([], False)
    app.initQgis()
    sys.path.append("/usr/share/qgis/python/plugins")
    import processing  # noqa: F401
    from processing.core.Processing import Processing

    Processing.initialize()
    import qgis.utils

    qgis.utils.plugin_paths = [str(PLUGIN_DIR)]
    if str(PLUGIN_DIR) not in sys.path:
        sys.path.insert(0, str(PLUGIN_DIR))
    qgis.utils.updateAvailablePlugins()
    assert qgis.utils.loadPlugin(PLUGIN_ID), "the plugin did not load"
    assert qgis.utils.startProcessingPlugin(PLUGIN_ID), "the plugin's initProcessing failed"
    assert QgsApplication.processingRegistry().providerById(PROVIDER_ID) is not None
    yield app
    qgis.utils.unloadPlugin(PLUGIN_ID)
    app.exitQgis()


def pytest_sessionfinish(session, exitstatus):
    shutil.rmtree(_TMP, ignore_errors=True)


# ---------------------------------------------------------------------------------------------
# Data


@pytest.fixture(scope="session")
def synth(qgis_app):
    """Synthetic DEM + GeoPackage (see synthdata.py) in a session directory."""
    import qgissynth as synthdata

    d = _TMP / "synth"
    d.mkdir(exist_ok=True)
    return {
        "dir": d,
        "dem": synthdata.write_dem(d / "dem.tif"),
        "gpkg": synthdata.write_vectors(d / "synth.gpkg"),
    }


@pytest.fixture(scope="session")
def demo(qgis_app):
    """The repository's demo data, when it exists."""
    gpkg, dem = DEMO_DIR / "demo.gpkg", DEMO_DIR / "dem.tif"
    if not (gpkg.exists() and dem.exists()):
        pytest.skip(f"demo data not found ({gpkg.relative_to(REPO)}, {dem.relative_to(REPO)})")
    d = _TMP / "demo"  # a private copy: the tests never touch the repository's files
    d.mkdir(exist_ok=True)
    for f in (gpkg, dem):
        shutil.copyfile(f, d / f.name)
    return {"dir": d, "dem": str(d / dem.name), "gpkg": str(d / gpkg.name)}


@pytest.fixture
def tmp_out(tmp_path):
    return tmp_path


# ---------------------------------------------------------------------------------------------
# qgis_process


@pytest.fixture(scope="session")
def qp_env(qgis_app):
    """A qgis_process environment (plugin from the source tree, engine on PYTHONPATH)."""
    return qgis_process_env(_TMP / "qp")


# ---------------------------------------------------------------------------------------------
# The command line of the engine (for field-by-field comparisons)


@pytest.fixture(scope="session")
def cli():
    """Path of the ``slipsense`` command (env SLIPSENSE_CLI, set by the Makefile)."""
    path = os.environ.get("SLIPSENSE_CLI")
    if not path or not Path(path).exists():
        msg = f"the slipsense command line is not available (SLIPSENSE_CLI={path!r})"
        if IN_CI:
            pytest.fail(msg)
        pytest.skip(msg)
    return path
