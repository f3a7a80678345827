"""North references: magnetic declination from the World Magnetic Model (pygeomag, the
engine's dependency) checked against the independent IGRF model (ppigrf, a test-only library),
and the grid/true/magnetic chain of the orientations command."""
from __future__ import annotations

import datetime

import numpy as np
import pytest

from slipsense.tools.orientations import declination_from_model


@pytest.mark.parametrize("lon, lat", [(15.0, 45.0), (-70.0, -33.0), (140.0, 36.0), (-105.0, 40.0), (25.0, 65.0)])
def test_declination_agrees_with_igrf(lon, lat):
    """WMM2025 (NOAA/BGS) and IGRF (IAGA) are separate fits of the main field; at mid latitudes
    their declinations agree within about half a degree (common practice)."""
    ppigrf = pytest.importorskip("ppigrf")
    be, bn, _ = ppigrf.igrf(lon, lat, 0.0, datetime.datetime(2025, 7, 2))
    igrf = float(np.degrees(np.arctan2(np.ravel(be)[0], np.ravel(bn)[0])))  # east positive
    wmm = float(declination_from_model([lon], [lat], 2025.5)[0])
    assert wmm == pytest.approx(igrf, abs=0.5)
