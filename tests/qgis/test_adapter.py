"""The QGIS <-> numpy adapter: DEM windows are exactly the DEM's cells, sinks follow the table."""
import numpy as np
import pytest

import qgisreference as ref


@pytest.fixture(scope="module")
def odd_dem(qgis_app, tmp_path_factory):
    """A DEM with an awkward origin and a fractional cell size, float32 nodata -9999.9 and NaN."""
    from osgeo import gdal, osr

    path = str(tmp_path_factory.mktemp("odd") / "odd.tif")
    rows, cols = 57, 83
    ds = gdal.GetDriverByName("GTiff").Create(path, cols, rows, 1, gdal.GDT_Float32)
    ds.SetGeoTransform((412345.678, 0.3, 0.0, 5123456.789, 0.0, -0.3))
    srs = osr.SpatialReference()
    srs.ImportFromEPSG(32632)
    ds.SetProjection(srs.ExportToWkt())
    rng = np.random.default_rng(1)
    v = (100 + rng.normal(size=(rows, cols)).cumsum(axis=1)).astype(np.float32)
    v[10:14, 20:25] = np.float32(-9999.9)
    v[30, 40] = np.nan
    b = ds.GetRasterBand(1)
    b.SetNoDataValue(-9999.9)
    b.WriteArray(v)
    ds = None
    return path


def test_raster_window_has_exactly_the_dem_cells(odd_dem):
    from qgis.core import QgsRasterLayer
    from slipsense_qgis import adapter

    lyr = QgsRasterLayer(odd_dem, "dem", "gdal")
    full = ref.full_grid(odd_dem)
    a, _, c, _, e, f = full.transform
    rng = np.random.default_rng(5)
    for _ in range(25):
        x = np.sort(rng.uniform(c - 2, c + a * 83 + 2, 2))
        y = np.sort(rng.uniform(f + e * 57 - 2, f + 2, 2))
        margin = float(rng.uniform(0, 3))
        try:
            g = adapter.raster_window(lyr, 1, (x[0], y[0], x[1], y[1]), margin)
        except Exception as exc:  # a window thinner than 2 cells is refused
            assert "does not cover" in str(exc)
            continue
        col0 = int(round((g.transform[2] - c) / a))
        row0 = int(round((g.transform[5] - f) / e))
        assert g.transform[2] == pytest.approx(c + col0 * a, abs=1e-9)
        h, w = g.values.shape
        expect = full.values[row0:row0 + h, col0:col0 + w]
        assert expect.shape == (h, w)
        np.testing.assert_array_equal(g.values, expect)  # NaN where GDAL masks, bit-identical elsewhere
        # the window is the command line's: floor/ceil of the bounds plus margin, clipped
        assert col0 == max(int(np.floor((x[0] - margin - c) / a)), 0)
        assert row0 == max(int(np.floor((y[1] + margin - f) / e)), 0)
    assert np.isnan(adapter.raster_window(lyr, 1, (c + 6.0, f - 4.2, c + 7.5, f - 3.0), 0.5).values).any()


def test_raster_window_refuses_a_missing_band(odd_dem):
    from qgis.core import QgsProcessingException, QgsRasterLayer
    from slipsense_qgis import adapter

    with pytest.raises(QgsProcessingException, match="band 2 does not exist"):
        adapter.raster_window(QgsRasterLayer(odd_dem, "dem", "gdal"), 2, (412350, 5123440, 412360, 5123450), 0)


def test_output_location():
    from slipsense_qgis.adapter import output_location

    path, table, whole = output_location("ogr:dbname='/tmp/a b.gpkg' table=\"my layer\" (geom)")
    assert path.endswith("/a b.gpkg") and table == "my layer" and whole is False
    path, table, whole = output_location("/tmp/x.gpkg")
    assert table == "x" and whole is True
    assert output_location("TEMPORARY_OUTPUT") is None
    assert output_location("memory:") is None


def test_table_to_sink_types_nan_and_geometry(qgis_app):
    from qgis.core import QgsProcessingAlgorithm, QgsProcessingContext, QgsProcessingFeedback, QgsProject
    from slipsense.tables import Table
    from slipsense_qgis import adapter

    table = Table({"name": np.array(["a", "b"], dtype=object), "n": np.array([1, 2]),
                   "v": np.array([1.5, np.nan])}, {"name": "str", "n": "int", "v": "float"}, "PointZ",
                  [np.array([1.0, 2.0, 3.0]), np.array([4.0, 5.0, 6.0])])
    fields = adapter.table_fields(table)
    assert fields.names() == ["name", "n", "v"]
    from qgis.PyQt.QtCore import QVariant

    assert [f.type() for f in fields] == [QVariant.String, QVariant.LongLong, QVariant.Double]

    class Alg(QgsProcessingAlgorithm):
        def __init__(self):
            super().__init__()
            from qgis.core import QgsProcessingParameterFeatureSink

            self.addParameter(QgsProcessingParameterFeatureSink("OUTPUT", "out"))

    from qgis.core import QgsCoordinateReferenceSystem

    ctx = QgsProcessingContext()
    ctx.setProject(QgsProject.instance())
    alg = Alg()
    dest, n = adapter.write_table(alg, {"OUTPUT": "memory:"}, "OUTPUT", ctx, QgsProcessingFeedback(), table,
                                  QgsCoordinateReferenceSystem("EPSG:32633"))
    lyr = ctx.takeResultLayer(dest)
    feats = list(lyr.getFeatures())
    assert n == 2 and [f["name"] for f in feats] == ["a", "b"] and feats[0]["n"] == 1
    assert feats[0]["v"] == 1.5 and (feats[1]["v"] is None or feats[1]["v"].isNull())
    p = feats[1].geometry().constGet()
    assert (p.x(), p.y(), p.z()) == (4.0, 5.0, 6.0)
