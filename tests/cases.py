"""Canonical test cases of slipsense, defined once and parametrised by the test modules.

Frame of every vector and point here: (east, north, up), metres.  Expected values are worked out by
hand from the project's conventions (CONVENTIONS.md: upward normal
``n = (sin d sin δ, cos d sin δ, cos δ)``, right-hand-rule strike ``= dip_dir - 90``, pole trend
``d + 180`` and plunge ``90 - δ``); they are exact fractions of sines and cosines of 30°, 45°, 60°,
not numbers produced by slipsense.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

R3 = math.sqrt(3.0)


@dataclass(frozen=True)
class PlaneCase:
    """A plane with its hand-worked normal, strike and pole."""

    name: str
    dip_dir: float
    dip: float
    strike: float  # right-hand rule
    normal: tuple  # upward unit normal (east, north, up)
    pole: tuple  # (trend, plunge)

    def __str__(self):  # readable pytest ids
        return self.name


PLANES = (
    # dip 0: dip direction undefined, reported as 0 (CONVENTIONS.md).
    PlaneCase("horizontal", 0.0, 0.0, 270.0, (0.0, 0.0, 1.0), (180.0, 90.0)),
    # A vertical N-S plane "dipping" east; its twin dip_dir 270 is the same plane.
    PlaneCase("vertical", 90.0, 90.0, 0.0, (1.0, 0.0, 0.0), (270.0, 0.0)),
    # 30° towards 120°: n = (sin120·sin30, cos120·sin30, cos30) = (√3/4, −1/4, √3/2).
    PlaneCase("dip30", 120.0, 30.0, 30.0, (R3 / 4.0, -0.25, R3 / 2.0), (300.0, 60.0)),
    # Strike 350 (RHR): dip_dir = 350 + 90 = 440, which wraps past 360 to 80.
    # n = (sin80·sin45, cos80·sin45, cos45).
    PlaneCase(
        "strike_wraps_360",
        80.0,
        45.0,
        350.0,
        (
            math.sin(math.radians(80.0)) * math.sqrt(0.5),
            math.cos(math.radians(80.0)) * math.sqrt(0.5),
            math.sqrt(0.5),
        ),
        (260.0, 45.0),
    ),
)

PLANE_IDS = [c.name for c in PLANES]


def plane_points(dip_dir, dip, n=12, centre=(0.0, 0.0, 0.0), size=100.0, seed=1):
    """Noise-free points on a plane, spread over a ``size`` × ``size`` patch around ``centre``.

    Built from the strike and down-dip unit vectors written out here from the conventions (not from
    slipsense), so every point lies exactly on the plane up to rounding.
    """
    d = math.radians(dip_dir)
    g = math.radians(dip)
    s = np.array([math.sin(d - math.pi / 2), math.cos(d - math.pi / 2), 0.0])  # strike (RHR)
    v = np.array([math.sin(d) * math.cos(g), math.cos(d) * math.cos(g), -math.sin(g)])  # down dip
    rng = np.random.default_rng(seed)
    uv = rng.uniform(-size / 2, size / 2, size=(n, 2))
    # Make sure the patch is two-dimensional whatever the seed: add the corners of a square.
    uv[:4] = [[-size / 2, -size / 2], [size / 2, -size / 2], [size / 2, size / 2], [-size / 2, size / 2]]
    return np.asarray(centre, dtype=float) + uv[:, :1] * s + uv[:, 1:] * v


#: Five points on one straight line in 3-D (a straight trace on planar ground): no unique plane.
COLLINEAR = np.array([[0.0, 0.0, 0.0], [1.0, 2.0, 3.0], [2.0, 4.0, 6.0], [-3.0, -6.0, -9.0], [5.0, 10.0, 15.0]])


def with_nan_rows(points):
    """``points`` with two NaN rows inserted (one fully NaN, one with only z NaN)."""
    p = np.asarray(points, dtype=float)
    bad = np.array([[np.nan, np.nan, np.nan], [p[0, 0], p[0, 1], np.nan]])
    return np.concatenate([p[:2], bad[:1], p[2:], bad[1:]], axis=0)
