"""Algorithm manners: ids, groups, help text with units, conventions, quality words and caution;
parameters with units, bounds, defaults and advanced flags; plugin metadata."""
import configparser

import pytest

from qgishelpers import PLUGIN_DIR, PLUGIN_ID

ALGS = ("traceplanes", "pointplanes", "structurecontours", "outcroptraces", "planedepths")
CAUTION = ("Results are interpretations for screening. They must be checked by a qualified professional "
           "against local codes and licensed practice before they inform hazard, slope, foundation or "
           "drilling decisions.")


@pytest.fixture(scope="module")
def registry(qgis_app):
    from qgis.core import QgsApplication

    return QgsApplication.processingRegistry()


@pytest.mark.parametrize("name", ALGS)
def test_help_and_manners(registry, name):
    alg = registry.algorithmById(f"slipsense:{name}")
    assert alg is not None and alg.name() == name and alg.groupId() == "faultgeometry"
    assert alg.group() == "Fault geometry" and alg.displayName()
    text = alg.shortHelpString()
    assert CAUTION in text
    for words in ("dip direction / dip", "right-hand rule", "grid north", "metres"):
        assert words in text, words
    if name in ("traceplanes", "pointplanes"):
        for q in ("good", "fair", "poor", "ill-posed", "Fernández (2005)"):
            assert q in text, q
    if name == "pointplanes":
        assert "three-point problem" in text
    assert alg.createInstance().name() == name


def test_parameters_of_traceplanes(registry):
    from qgis.core import QgsProcessingParameterDefinition as D

    alg = registry.algorithmById("slipsense:traceplanes")
    p = {d.name(): d for d in alg.parameterDefinitions()}
    assert p["SIGMA_XY"].defaultValue() == 5.0 and p["SIGMA_Z"].defaultValue() == 2.0
    assert p["DRAWS"].defaultValue() == 200 and p["SEED"].defaultValue() == 0
    assert "(m)" in p["SIGMA_XY"].description() and p["SIGMA_XY"].minimum() == 0
    for key in ("SPACING", "DRAWS", "SEED"):
        assert p[key].flags() & D.FlagAdvanced, key
    assert p["ID_FIELD"].flags() & D.FlagOptional and p["BAND"].flags() & D.FlagOptional
    assert p["OUTPUT_WINDOWS"].flags() & D.FlagOptional


def test_metadata_is_complete():
    meta = configparser.ConfigParser()
    meta.read(PLUGIN_DIR / PLUGIN_ID / "metadata.txt", encoding="utf-8")
    g = meta["general"]
    for key in ("name", "qgisMinimumVersion", "description", "about", "version", "author", "email",
                "repository", "tracker", "homepage", "category"):
        assert g.get(key), key
    assert g["qgisMinimumVersion"] == "3.22" and g["version"] == "0.1.0"
    assert g["hasProcessingProvider"] == "yes" and g["category"] == "Analysis"
    assert g["author"] == "slipsense developers"
    assert "qualified professional" in g["about"]
