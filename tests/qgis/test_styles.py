"""Default styles in real QGIS 3.22: every layer the command line writes opens with the slipsense
style from the GeoPackage's layer_styles table (renderer, symbol layers, labels)."""
import subprocess

import pytest

ANALYSIS = """
[inputs]
dem = "dem.tif"
map = "demo.gpkg"

[outputs]
gpkg = "styled.gpkg"
report = false

[[steps]]
name = "faults"
command = "trace-planes"
dem = "@dem"
traces = "@map"
layer = "fault_traces"
id_field = "fault_id"
draws = 0
window = 1500

[[steps]]
command = "structure-contours"
planes = "@faults"
interval = 200
depth = 400

[[steps]]
command = "outcrop-trace"
planes = "@faults"
dem = "@dem"
distance = 800

[[steps]]
command = "plane-depth"
collars = "@map"
layer = "borehole_collars"
id_field = "hole_id"
plane_field = "target_fault"
planes = "@faults"
dem = "@dem"

[[steps]]
command = "orientations"
points = "@map"
layer = "bedding"
id_field = "station_id"
dip_dir_field = "dip_dir"
dip_field = "dip"

[[steps]]
command = "fault-slip"
stations = "@map"
layer = "slip_stations"
id_field = "station_id"
trend_field = "trend"
plunge_field = "plunge"
sense_field = "sense"
resamples = 0

[[steps]]
command = "slip-tendency"
planes = "@faults"
planes_layer = "trace_planes"
shmax_azimuth = 35
sv_gradient = 25
shmax_gradient = 30
shmin_gradient = 16
pp_gradient = 10
depth = 2000
"""


@pytest.fixture(scope="module")
def styled(demo, cli):
    d = demo["dir"]
    (d / "styles.toml").write_text(ANALYSIS)
    proc = subprocess.run([cli, "run", str(d / "styles.toml"), "--overwrite", "--quiet"], capture_output=True,
                          text=True, timeout=300, stdin=subprocess.DEVNULL)
    assert proc.returncode == 0, proc.stderr[-3000:]
    return str(d / "styled.gpkg")


def _layer(path, name):
    from qgis.core import QgsVectorLayer

    lyr = QgsVectorLayer(f"{path}|layername={name}", name, "ogr")
    assert lyr.isValid(), name
    return lyr


def _symbol_layers(renderer):
    from qgis.core import QgsRenderContext

    ctx = QgsRenderContext()
    return [[s.symbolLayer(i).layerType() for i in range(s.symbolLayerCount())] for s in renderer.symbols(ctx)]


def test_fault_traces_open_with_quality_colours_dip_ticks_and_dip_labels(styled):
    from qgis.core import QgsMarkerLineSymbolLayer, QgsSymbolLayer

    lyr = _layer(styled, "trace_planes")
    r = lyr.renderer()
    assert r.type() == "categorizedSymbol" and r.classAttribute() == "quality"
    assert [c.value() for c in r.categories()] == ["good", "fair", "poor", "ill-posed"]
    # colour and line style both differ between classes (greyscale-readable)
    cats = r.categories()  # keep the copies alive: their symbols belong to them
    sym = {c.value(): c.symbol() for c in cats}
    assert len({s.symbolLayer(0).penStyle() for s in sym.values()}) == 4
    assert len({s.color().name() for s in sym.values()}) == 4
    good = sym["good"]
    assert [good.symbolLayer(i).layerType() for i in range(good.symbolLayerCount())] == ["SimpleLine", "MarkerLine"]
    tick = good.symbolLayer(1)
    assert isinstance(tick, QgsMarkerLineSymbolLayer)
    marker = tick.subSymbol().symbolLayer(0)
    assert marker.layerType() == "SimpleMarker" and marker.shape() == marker.Line
    prop = marker.dataDefinedProperties().property(QgsSymbolLayer.PropertyAngle)
    assert prop.isActive() and prop.expressionString() == '"dip_dir"'
    assert sym["ill-posed"].symbolLayerCount() == 1  # no tick without an orientation
    assert lyr.labelsEnabled()
    settings = lyr.labeling().settings()
    assert settings.isExpression and '"dip"' in settings.fieldName
    assert lyr.styleManager().currentStyle() == "default"


def test_every_layer_opens_with_its_default_style(styled):
    import sqlite3

    with sqlite3.connect(styled) as con:
        layers = [r[0] for r in con.execute("SELECT table_name FROM gpkg_contents WHERE data_type='features'")]
    expect = {
        "trace_windows": ("categorizedSymbol", "SimpleLine"),
        "structure_contours": ("singleSymbol", "SimpleLine"),
        "outcrop_traces": ("singleSymbol", "SimpleLine"),
        "plane_depths": ("categorizedSymbol", "SimpleMarker"),
        "orientations": ("singleSymbol", "SimpleMarker"),
        "fault_slip": ("singleSymbol", "SimpleMarker"),
        "slip_tendency": ("graduatedSymbol", "SimpleLine"),
    }
    assert set(expect) <= set(layers)
    for name in layers:
        lyr = _layer(styled, name)
        renderer = lyr.renderer()
        kinds = _symbol_layers(renderer)
        if name in expect:
            rtype, first = expect[name]
            assert lyr.renderer().type() == rtype, name
            assert kinds[0][0] == first, (name, kinds)
        else:  # whatever else is written: some slipsense style, never QGIS's random default
            assert lyr.renderer().type() in ("singleSymbol", "categorizedSymbol", "graduatedSymbol"), name
    contours = _layer(styled, "structure_contours")
    assert contours.labelsEnabled() and "elevation_m" in contours.labeling().settings().fieldName


def test_slip_arrows_and_graduated_tendency(styled):
    from qgis.core import QgsSymbolLayer

    slip = _layer(styled, "fault_slip")  # layers stay referenced while their symbols are used
    arrows = slip.renderer().symbol().symbolLayer(0)
    prop = arrows.dataDefinedProperties().property(QgsSymbolLayer.PropertyAngle)
    assert prop.isActive() and prop.expressionString() == '"trend"'  # hanging-wall motion azimuth
    tend = _layer(styled, "slip_tendency")
    r = tend.renderer()
    assert r.classAttribute() == "slip_tendency"
    ranges = r.ranges()
    bounds = [(round(x.lowerValue(), 3), round(x.upperValue(), 3)) for x in ranges]
    assert bounds[:4] == [(0.0, 0.2), (0.2, 0.4), (0.4, 0.6), (0.6, 0.8)]
    widths = [x.symbol().width() for x in ranges]
    assert widths == sorted(widths) and len(set(widths)) == 5  # width grows with tendency, too
    ori = _layer(styled, "orientations")
    strike_dip = ori.renderer().symbol()
    assert strike_dip.symbolLayerCount() == 2  # strike line + dip tick
