"""The HTML report: one self-contained file (no external resources), every figure embedded as a
valid PNG, the fault summary, provenance with SHA-256 of the inputs, and the cautions."""
from __future__ import annotations

import base64
import hashlib
import json
from html.parser import HTMLParser

import pytest

from conftest import DEMO

ANALYSIS = f"""
[analysis]
name = "Report test"
description = "A short analysis of the demo data."
seed = 1

[inputs]
dem = "{DEMO / 'dem.tif'}"
map = "{DEMO / 'demo.gpkg'}"

[outputs]
gpkg = "r.gpkg"
report = "r.html"
figures = "figs"

[figures]
dpi = 60

[[steps]]
name = "faults"
command = "trace-planes"
dem = "@dem"
traces = "@map"
layer = "fault_traces"
id_field = "fault_id"
draws = 20

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
command = "stress-inversion"
stations = "@map"
layer = "slip_stations"
id_field = "station_id"
trend_field = "trend"
plunge_field = "plunge"
sense_field = "sense"
group_field = "phase"
resamples = 40

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
def report_run(tmp_path_factory):
    from slipsense.cli.main import main

    d = tmp_path_factory.mktemp("report")
    f = d / "a.toml"
    f.write_text(ANALYSIS)
    import contextlib
    import io

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(["run", str(f), "--json", "--quiet"])
    assert code == 0, err.getvalue()
    return {"dir": d, "html": d / "r.html", "gpkg": d / "r.gpkg", "summary": json.loads(out.getvalue())}


class _Refs(HTMLParser):
    def __init__(self):
        super().__init__()
        self.refs, self.imgs, self.scripts, self.links = [], [], 0, 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for k in ("src", "href", "data", "poster", "srcset"):
            if k in a:
                self.refs.append((tag, k, a[k]))
        if tag == "img":
            self.imgs.append(a)
        self.scripts += tag == "script"
        self.links += tag == "link"


def test_report_is_self_contained(report_run):
    text = report_run["html"].read_text(encoding="utf-8")
    p = _Refs()
    p.feed(text)
    assert p.scripts == 0 and p.links == 0
    assert all(v.startswith("data:image/png;base64,") for _, _, v in p.refs), p.refs[:3]
    assert "http://" not in text.replace("http://mrcc.com", "") and "https://" not in text
    assert "url(" not in text and "@import" not in text
    # every figure is a decodable PNG whose size is the one the img element states
    assert len(p.imgs) >= 6  # planes, rose, fault-slip, two stress groups, Mohr
    for img in p.imgs:
        data = base64.b64decode(img["src"].split(",", 1)[1])
        assert data[:8] == b"\x89PNG\r\n\x1a\n"
        assert (int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")) == (
            int(img["width"]), int(img["height"]))
        assert img["alt"]
    # the same figures as files
    assert sorted(f.name for f in (report_run["dir"] / "figs").iterdir()) == sorted(
        report_run["summary"]["figures"][k].rsplit("/", 1)[1] for k in range(len(report_run["summary"]["figures"])))


def test_report_content(report_run):
    text = report_run["html"].read_text(encoding="utf-8")
    for fid in ("F1", "F2", "F3", "F4", "F5"):
        assert f"<td>{fid}</td>" in text
    assert "slip tendency" in text and "fault-slip data (type)" in text
    sha = hashlib.sha256((DEMO / "demo.gpkg").read_bytes()).hexdigest()
    assert sha in text and hashlib.sha256((DEMO / "dem.tif").read_bytes()).hexdigest() in text
    assert "EPSG:32633" in text and "north reference: <b>grid</b>" in text
    assert "qualified professional" in text and "local codes" in text
    assert "slipsense trace-planes --dem @dem --traces @map" in text  # parameters as command lines
    assert "Kamb (1959)" in text or "Stereonet" in text
    assert text.count('<figure id="fig-') == len(report_run["summary"]["figures"])


def test_report_from_a_plain_results_file(report_run):
    """build_report works on any results GeoPackage (layers recognised by their fields)."""
    from slipsense.report import build_report

    html, pngs = build_report(str(report_run["gpkg"]), {"quality": {}}, {"enabled": False})
    assert pngs == {} and "No figures" in html and "<td>F3</td>" in html
