"""Progress, cancellation, warnings, and a clear QgsProcessingException for each bad input."""
import shutil
import time

import pytest

import qgissynth as synthdata
from qgishelpers import gpkg_rows, layer, layer_rows, ogr_dest, run


@pytest.fixture
def feedback_cls(qgis_app):
    from qgis.core import QgsProcessingFeedback

    class Recorder(QgsProcessingFeedback):
        """Records progress and warnings; can cancel at the first progress report (or above a value)."""

        def __init__(self, cancel_above=None):
            super().__init__()
            self.values, self.warnings, self.canceled_at = [], [], None
            self.cancel_above = cancel_above
            self.progressChanged.connect(self._progress)

        def _progress(self, value):
            self.values.append(value)
            if self.cancel_above is not None and value >= self.cancel_above and self.canceled_at is None:
                self.canceled_at = time.monotonic()
                self.cancel()

        def pushWarning(self, msg):  # noqa: N802 - QGIS name
            self.warnings.append(msg)
            super().pushWarning(msg)

    return Recorder


def traces(data):
    return data["gpkg"] + "|layername=fault_traces"


def base_trace_params(synth, out, **kw):
    p = {"INPUT": traces(synth), "ID_FIELD": "fault_id", "DEM": synth["dem"], "DRAWS": 20,
         "OUTPUT": ogr_dest(out, "trace_planes")}
    p.update(kw)
    return p


def test_progress_is_reported(synth, tmp_path, feedback_cls):
    fb = feedback_cls()
    run("slipsense:traceplanes", base_trace_params(synth, str(tmp_path / "o.gpkg")), feedback=fb)
    assert len(fb.values) > 10
    assert fb.values[-1] == pytest.approx(100.0)
    assert all(b >= a for a, b in zip(fb.values, fb.values[1:])), "progress never goes back"


@pytest.mark.parametrize("cancel_above", [0.0, 6.0])
def test_cancel_stops_within_a_second(synth, tmp_path, feedback_cls, cancel_above):
    """Cancel at the first progress report (reading) or during the Monte Carlo draws."""
    from qgis.core import QgsProcessingException

    fb = feedback_cls(cancel_above=cancel_above)
    out = str(tmp_path / "o.gpkg")
    with pytest.raises(QgsProcessingException, match="canceled"):
        run("slipsense:traceplanes", base_trace_params(synth, out, DRAWS=20000), feedback=fb)
    assert fb.canceled_at is not None
    assert time.monotonic() - fb.canceled_at < 1.0


def test_cancel_other_algorithms(synth, tmp_path, feedback_cls):
    from qgis.core import QgsProcessingException

    out = str(tmp_path / "o.gpkg")
    run("slipsense:traceplanes", base_trace_params(synth, out))
    for alg, params in (
        ("slipsense:pointplanes", {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "group_id",
                                   "Z_FIELD": "z_m"}),
        ("slipsense:structurecontours", {"PLANES": out + "|layername=trace_planes"}),
        ("slipsense:outcroptraces", {"PLANES": out + "|layername=trace_planes", "DEM": synth["dem"]}),
        ("slipsense:planedepths", {"COLLARS": synth["gpkg"] + "|layername=borehole_collars",
                                   "PLANES": out + "|layername=trace_planes", "DEM": synth["dem"]}),
    ):
        params["OUTPUT"] = ogr_dest(out, "x")
        with pytest.raises(QgsProcessingException, match="canceled"):
            run(alg, params, feedback=feedback_cls(cancel_above=0.0))


def test_per_feature_warnings_are_pushed(synth, tmp_path, feedback_cls):
    fb = feedback_cls()
    out = str(tmp_path / "o.gpkg")
    res = run("slipsense:traceplanes", base_trace_params(synth, out, WINDOW=150.0,
                                                         OUTPUT_WINDOWS=ogr_dest(out, "w")), feedback=fb)
    n_bad = sum(1 for r in layer_rows(layer(out, "w")) if r["quality"] in ("poor", "ill-posed"))
    assert n_bad > 0
    assert len(fb.warnings) >= res["N_POOR"] + res["N_ILL_POSED"]
    fb2 = feedback_cls()
    run("slipsense:pointplanes", {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "group_id",
                                  "Z_FIELD": "z_m", "OUTPUT": ogr_dest(out, "p")}, feedback=fb2)
    assert fb2.warnings == []  # no problems, no warnings


# ---------------------------------------------------------------------------------------------
# Bad inputs


@pytest.fixture
def copy(synth, tmp_path):
    """A private copy of the synthetic GeoPackage (for tests that could damage it)."""
    dst = tmp_path / "copy.gpkg"
    shutil.copyfile(synth["gpkg"], dst)
    return str(dst)


def raises(alg, params, match):
    from qgis.core import QgsProcessingException

    with pytest.raises(QgsProcessingException, match=match):
        run(alg, params)


def test_missing_crs_of_vectors(synth, tmp_path):
    nocrs = synthdata.write_vectors(tmp_path / "nocrs.gpkg", epsg=None)
    raises("slipsense:traceplanes", base_trace_params({"gpkg": nocrs, "dem": synth["dem"]}, str(tmp_path / "o.gpkg")),
           "trace layer has no coordinate reference system")
    raises("slipsense:pointplanes", {"INPUT": nocrs + "|layername=contact_points", "GROUP_FIELD": "group_id",
                                     "Z_FIELD": "z_m", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "p")},
           "point layer has no coordinate reference system")


def test_missing_crs_of_dem(synth, tmp_path):
    dem = synthdata.write_dem(tmp_path / "nocrs.tif", epsg=None)
    raises("slipsense:traceplanes", base_trace_params({"gpkg": synth["gpkg"], "dem": dem}, str(tmp_path / "o.gpkg")),
           "DEM has no coordinate reference system")


def test_geographic_crs(synth, tmp_path):
    dem = synthdata.write_dem(tmp_path / "geo.tif", epsg=4326)
    raises("slipsense:traceplanes", base_trace_params({"gpkg": synth["gpkg"], "dem": dem}, str(tmp_path / "o.gpkg")),
           "DEM is in a geographic CRS")
    geo = synthdata.write_vectors(tmp_path / "geo.gpkg", epsg=4326)
    raises("slipsense:pointplanes", {"INPUT": geo + "|layername=contact_points", "GROUP_FIELD": "group_id",
                                     "Z_FIELD": "z_m", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "p")},
           "point layer is in a geographic CRS")


def test_empty_layer(synth, tmp_path):
    empty = synthdata.write_empty_lines(tmp_path / "empty.gpkg")
    raises("slipsense:traceplanes", base_trace_params({"gpkg": empty, "dem": synth["dem"]}, str(tmp_path / "o.gpkg")),
           "trace layer is empty")


def test_missing_field(synth, tmp_path):
    raises("slipsense:traceplanes", base_trace_params(synth, str(tmp_path / "o.gpkg"), ID_FIELD="nosuch"),
           "nosuch")
    raises("slipsense:pointplanes", {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "nosuch",
                                     "Z_FIELD": "z_m", "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "p")}, "nosuch")
    raises("slipsense:structurecontours", {"PLANES": synth["gpkg"] + "|layername=fault_traces",
                                           "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "c")},
           "plane layer lacks the field")


def test_output_equal_to_input_is_refused(copy, synth, tmp_path):
    raises("slipsense:traceplanes", base_trace_params({"gpkg": copy, "dem": synth["dem"]}, "x",
                                                      OUTPUT=ogr_dest(copy, "fault_traces")),
           "same layer as the input INPUT")
    raises("slipsense:traceplanes", base_trace_params({"gpkg": copy, "dem": synth["dem"]}, "x", OUTPUT=copy),
           "would re-create the file")
    # the input is intact, and a new table in the input's own GeoPackage is fine
    assert len(gpkg_rows(copy, "fault_traces")[1]) == 2
    run("slipsense:traceplanes", base_trace_params({"gpkg": copy, "dem": synth["dem"]}, copy))
    assert len(gpkg_rows(copy, "fault_traces")[1]) == 2 and len(gpkg_rows(copy, "trace_planes")[1]) == 2
    # both outputs into one table
    out = str(tmp_path / "o.gpkg")
    raises("slipsense:traceplanes", base_trace_params(synth, out, WINDOW=100.0, OUTPUT_WINDOWS=ogr_dest(out, "trace_planes")),
           "are the same layer")


def test_dem_not_covering_the_traces(synth, tmp_path):
    import processing

    far = str(tmp_path / "far.gpkg")
    processing.run("native:translategeometry", {"INPUT": traces(synth), "DELTA_X": 50000.0, "DELTA_Y": 0.0,
                                                "OUTPUT": ogr_dest(far, "fault_traces")})
    raises("slipsense:traceplanes", base_trace_params({"gpkg": far, "dem": synth["dem"]}, str(tmp_path / "o.gpkg")),
           "DEM does not cover the traces")


def test_rotated_dem_is_refused(synth, tmp_path):
    dem = synthdata.write_dem(tmp_path / "rot.tif", rotated=True)
    raises("slipsense:traceplanes", base_trace_params({"gpkg": synth["gpkg"], "dem": dem}, str(tmp_path / "o.gpkg")),
           "DEM is rotated")


def test_points_need_one_source_of_elevations(synth, tmp_path):
    p = {"INPUT": synth["gpkg"] + "|layername=contact_points", "GROUP_FIELD": "group_id",
         "OUTPUT": ogr_dest(str(tmp_path / "o.gpkg"), "p")}
    raises("slipsense:pointplanes", p, "give an elevation field")
    raises("slipsense:pointplanes", dict(p, Z_FIELD="z_m", DEM=synth["dem"]), "not both")


def test_planes_in_another_crs_than_the_dem(synth, tmp_path):
    import processing

    out = str(tmp_path / "o.gpkg")
    run("slipsense:traceplanes", base_trace_params(synth, out))
    other = str(tmp_path / "other.gpkg")
    processing.run("native:reprojectlayer", {"INPUT": out + "|layername=trace_planes", "TARGET_CRS": "EPSG:32634",
                                             "OUTPUT": ogr_dest(other, "trace_planes")})
    raises("slipsense:outcroptraces", {"PLANES": other + "|layername=trace_planes", "DEM": synth["dem"],
                                       "OUTPUT": ogr_dest(out, "o")}, "grid north")


def test_null_trace_id_is_an_error(synth, tmp_path):
    import processing

    nulls = str(tmp_path / "nulls.gpkg")
    processing.run("native:fieldcalculator", {"INPUT": traces(synth), "FIELD_NAME": "fault_id", "FIELD_TYPE": 2,
                                              "FIELD_LENGTH": 10, "FIELD_PRECISION": 0, "FORMULA": "NULL",
                                              "OUTPUT": ogr_dest(nulls, "fault_traces")})
    raises("slipsense:traceplanes", base_trace_params({"gpkg": nulls, "dem": synth["dem"]}, str(tmp_path / "o.gpkg")),
           "id field 'fault_id' is empty")
