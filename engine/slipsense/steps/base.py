"""What every step shares: the result type, quality counts, the DEM margin (numpy only)."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["StepResult", "dem_margin_m", "collar_margin_m", "quality_counts"]


@dataclass
class StepResult:
    """Tables by output-layer name, a JSON-able summary, and per-feature warnings (strings)."""

    tables: dict
    summary: dict
    warnings: list = field(default_factory=list)


def dem_margin_m(cell_m, sigma_xy_m=0.0, cells=3.0, sigmas=6.0):
    """Margin (m) of DEM to read around the features' bounding box.

    ``cells`` DEM cells plus ``sigmas`` × sigma-xy (room for the Monte Carlo moves of vertices;
    a move beyond 6 sigma has odds below 1e-8).  The CLI and the QGIS plugin both use this, so they
    read the same cells and give the same numbers.
    """
    return float(cells) * float(cell_m) + float(sigmas) * float(sigma_xy_m)


#: How far from a collar (m) an inclined hole's intersection may lie and still get a ground
#: elevation above it (the DEM window read around collars reaches this far).
HOLE_REACH_M = 2000.0


def collar_margin_m(cell_m):
    """Margin (m) of DEM read around collars: the usual cells plus :data:`HOLE_REACH_M`."""
    return dem_margin_m(cell_m) + HOLE_REACH_M


def quality_counts(quality):
    """Counts of each quality word (all four always present)."""
    q = np.asarray(quality).astype(str)
    return {w: int(np.sum(q == w)) for w in ("good", "fair", "poor", "ill-posed")}
