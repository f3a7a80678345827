"""The report in a real headless browser (Debian's chromium, installed by
qgis_plugin/install_qgis.sh): it renders with the network cut off, every figure loads, and the
screenshot is not blank."""
from __future__ import annotations

import json
import os
import re
import shutil
import subprocess

import numpy as np
import pytest

from test_report import report_run  # noqa: F401  (the module fixture: one analysis with a report)

IN_CI = os.environ.get("CI", "").lower() in ("1", "true", "yes")
CHECK = """<script>
window.addEventListener("load", function () {
  var out = [];
  var imgs = document.images;
  for (var i = 0; i < imgs.length; i++) {
    out.push({w: imgs[i].naturalWidth, h: imgs[i].naturalHeight, done: imgs[i].complete});
  }
  var pre = document.createElement("pre");
  pre.id = "figure-check";
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script>"""


def _chromium():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    if IN_CI:
        pytest.fail("chromium is missing: qgis_plugin/install_qgis.sh installs it (make qgis)")
    pytest.skip("chromium is not installed")


def _browser(tmp_path, *args, timeout=90):
    profile = tmp_path / "chromium-profile"
    profile.mkdir(exist_ok=True)
    cmd = [_chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-extensions",
           "--disable-dev-shm-usage", f"--user-data-dir={profile}",
           # no network at all: every host name fails to resolve and any proxy use goes nowhere
           "--host-resolver-rules=MAP * ~NOTFOUND", "--proxy-server=127.0.0.1:9", "--proxy-bypass-list=<-loopback>",
           *args]
    env = dict(os.environ, HOME=str(tmp_path))
    return subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env, stdin=subprocess.DEVNULL)


def test_every_figure_loads_offline(report_run, tmp_path):  # noqa: F811
    page = tmp_path / "page.html"
    text = report_run["html"].read_text(encoding="utf-8")
    page.write_text(text.replace("</body>", CHECK + "</body>"), encoding="utf-8")
    res = _browser(tmp_path, "--virtual-time-budget=15000", "--dump-dom", page.as_uri())
    assert res.returncode == 0, res.stderr[-2000:]
    m = re.search(r'<pre id="figure-check">(.*?)</pre>', res.stdout, re.S)
    assert m, res.stdout[-1000:]
    figs = json.loads(m.group(1).replace("&quot;", '"'))
    n = text.count("<img ")
    assert len(figs) == n >= 6
    assert all(f["done"] and f["w"] > 100 and f["h"] > 100 for f in figs), figs


def test_screenshot_is_not_blank(report_run, tmp_path):  # noqa: F811
    from PIL import Image

    shot = tmp_path / "shot.png"
    res = _browser(tmp_path, "--window-size=1280,2400", "--hide-scrollbars", f"--screenshot={shot}",
                   report_run["html"].as_uri())
    assert res.returncode == 0 and shot.exists(), res.stderr[-2000:]
    img = np.asarray(Image.open(shot).convert("L"), dtype=float)
    assert img.shape == (2400, 1280)
    assert img.std() > 20  # text, tables and figures, not an empty page
    assert 0.03 < np.mean(img < 200) < 0.9
