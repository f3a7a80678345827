"""Length-weighted rose diagrams of trace strikes.

Every straight segment of a mapped trace counts with its map length.  When the fitted plane of the
trace is known, each segment is oriented as a **right-hand-rule strike** (the one of its two
azimuths within 90° of the plane's strike, ``dip_dir − 90``), so the rose is directional
(0–360°).  Without a plane the segments are axes and the rose is **bidirectional** (each segment
counts half at ``a`` and half at ``a + 180°``, the usual symmetric rose of lineaments).

Petal radius is proportional to the square root of the binned length, so petal **area** is
proportional to length (Nemec 1988, "The shape of the rose", *Sedimentary Geology* 59); a linear
radius exaggerates the largest bins.  The binning functions are numpy only.
"""
from __future__ import annotations

import numpy as np

from ..styles import OKABE_ITO

__all__ = ["segment_azimuths", "rose_bins", "rose_figure"]


def segment_azimuths(parts, dip_dir=None):
    """Azimuths (degrees) and lengths (m) of the segments of one trace.

    Parameters
    ----------
    parts : list of (n, 2) arrays (x east, y north; metres) — the parts of one trace
    dip_dir : float, optional — the trace's fitted dip direction; segments are then oriented as
        right-hand-rule strikes, otherwise reported in [0, 180) as axes.

    Returns
    -------
    azimuth : (k,) degrees in [0, 360) (or [0, 180) without ``dip_dir``)
    length : (k,) metres
    """
    az, ln = [], []
    for xy in parts:
        xy = np.asarray(xy, dtype=float)[:, :2]
        if len(xy) < 2:
            continue
        d = np.diff(xy, axis=0)
        length = np.hypot(d[:, 0], d[:, 1])
        keep = length > 0
        az.append(np.mod(np.degrees(np.arctan2(d[keep, 0], d[keep, 1])), 360.0))
        ln.append(length[keep])
    a = np.concatenate(az) if az else np.zeros(0)
    w = np.concatenate(ln) if ln else np.zeros(0)
    if dip_dir is not None and np.isfinite(dip_dir):
        strike = np.mod(float(dip_dir) - 90.0, 360.0)
        off = np.abs((a - strike + 180.0) % 360.0 - 180.0)
        a = np.where(off > 90.0, np.mod(a + 180.0, 360.0), a)
    else:
        a = np.mod(a, 180.0)
    return a, w


def rose_bins(azimuth, weight, bin_deg=10.0, axial=True):
    """Summed ``weight`` per azimuth bin.

    ``axial=True`` puts half of each weight at ``a`` and half at ``a + 180°`` (symmetric rose).
    Returns ``(edges (k + 1,), totals (k,))`` with ``k = 360 / bin_deg`` bins starting at north.
    """
    if not (bin_deg > 0 and abs(360.0 / bin_deg - round(360.0 / bin_deg)) < 1e-9):
        raise ValueError(f"bin_deg must divide 360, got {bin_deg!r}")
    a = np.mod(np.asarray(azimuth, dtype=float).ravel(), 360.0)
    w = np.asarray(weight, dtype=float).ravel()
    edges = np.linspace(0.0, 360.0, int(round(360.0 / bin_deg)) + 1)
    if axial:
        a = np.concatenate([a, np.mod(a + 180.0, 360.0)])
        w = np.concatenate([w, w]) / 2.0
    totals, _ = np.histogram(a, bins=edges, weights=w)
    return edges, totals


def rose_figure(traces, dip_dirs=None, bin_deg=10.0, title=None, dpi=110):
    """Rose of trace-segment strikes weighted by length (equal-area petals).

    ``traces``: list of traces, each a list of (n, 2) part arrays; ``dip_dirs``: the fitted dip
    direction of each trace (NaN where unknown).  When every trace has a dip direction the rose
    shows right-hand-rule strikes (directional); otherwise all segments are taken as axes.
    """
    from .stereonet import new_figure

    dds = [np.nan] * len(traces) if dip_dirs is None else list(dip_dirs)
    directional = len(dds) > 0 and all(np.isfinite(d) for d in dds)
    az, w = [], []
    for parts, d in zip(traces, dds):
        a, ln = segment_azimuths(parts, d if directional else None)
        az.append(a)
        w.append(ln)
    az = np.concatenate(az) if az else np.zeros(0)
    w = np.concatenate(w) if w else np.zeros(0)
    edges, totals = rose_bins(az, w, bin_deg, axial=not directional)
    fig = new_figure(6.0, 6.4, dpi)
    ax = fig.add_axes([0.1, 0.12, 0.8, 0.76], projection="polar")
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    total = float(w.sum())
    frac = totals / total if total > 0 else totals
    r = np.sqrt(frac)
    blue = tuple(c / 255 for c in OKABE_ITO["blue"])
    ax.bar(np.radians(edges[:-1]), r, width=np.radians(bin_deg), align="edge", color=blue, alpha=0.85,
           edgecolor="black", linewidth=0.6)
    ticks = [f for f in (0.01, 0.02, 0.05, 0.1, 0.2, 0.3, 0.5) if f <= max(frac.max() if len(frac) else 0, 0.01) * 1.05]
    ax.set_yticks(np.sqrt(ticks))
    ax.set_yticklabels([f"{100 * f:g}%" for f in ticks], fontsize=7)
    ax.set_ylim(0, np.sqrt(max(frac.max() if len(frac) else 0.01, 0.01)) * 1.05)
    ax.tick_params(axis="x", labelsize=8)
    kind = "right-hand-rule strikes" if directional else "axial (bidirectional) segment trends"
    ax.set_title(title or f"Trace strikes, length-weighted ({kind})", fontsize=10, pad=14)
    fig.text(0.5, 0.015, f"{len(traces)} traces, {len(az)} segments, {total / 1000:.2f} km in all; "
                         f"bins of {bin_deg:g}°; petal area ∝ length (radius ∝ √fraction, Nemec 1988). "
                         "Azimuths from grid north.", ha="center", fontsize=7, color="0.2", wrap=True)
    return fig
