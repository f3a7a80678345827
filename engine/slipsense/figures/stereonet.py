"""Lower-hemisphere equal-area stereonets: planes, poles, lineations, fault-slip data, kinematic
and stress axes, and Kamb (1959) density contours of poles.

The projection and the density counting are plain numpy functions (tested against Snyder 1987 and
pyproj); the drawing uses matplotlib's object API (``matplotlib.figure.Figure``, no pyplot and no
global state), imported only when a figure is drawn.

Projection (Snyder 1987, *Map Projections — A Working Manual*, USGS PP 1395, Lambert azimuthal
equal-area, polar aspect, scaled to a unit primitive): a line of trend ``t`` and plunge ``p``
(degrees, lower hemisphere) plots at ``r = √2 · sin((90° − p)/2)``, ``x = r sin t``,
``y = r cos t`` (x east, y north, north up).  A vertical line is at the centre, a horizontal one
on the primitive.  Upward lines are replaced by their lower-hemisphere twins.

Fault-slip convention used here (the project's own, stated on every figure): each datum is its
fault's great circle and a dot at the lower-hemisphere end of its slip line; an arrow starts at
the dot and points in the **map direction in which the hanging wall moved** relative to the
footwall (the azimuth of the horizontal part of the slip vector).  So normal slip points away from
the centre, reverse slip toward it, and strike-slip along the fault's strike, from the end of the
slip line that the hanging wall moved toward.  Colour and marker shape give the sense word.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..core.orientation import dip_vector, line_to_vector, plane_to_pole, strike_vector, vector_to_line
from ..styles import OKABE_ITO, QUALITY_STYLE

__all__ = [
    "line_to_xy",
    "xy_to_line",
    "vector_to_xy",
    "great_circle_xy",
    "kamb_counting_angle",
    "kamb_density",
    "kamb_density_at",
    "KambGrid",
    "sense_class",
    "SENSE_STYLE",
    "Stereonet",
    "planes_figure",
    "fault_slip_figure",
    "stress_figure",
    "new_figure",
]

SQRT2 = float(np.sqrt(2.0))


def _rgb(name):
    return tuple(c / 255.0 for c in OKABE_ITO[name])


# ---------------------------------------------------------------------------------------------
# Projection (numpy only)


def line_to_xy(trend, plunge):
    """Equal-area lower-hemisphere coordinates (unit primitive) of lines ``trend``/``plunge`` (deg).

    Negative plunges (upward lines) are taken as their lower-hemisphere twins.  Returns ``(x, y)``
    with x east and y north.

    >>> [round(v, 6) for v in line_to_xy(90.0, 0.0)]
    [1.0, 0.0]
    >>> [round(v, 6) for v in line_to_xy(0.0, 90.0)]
    [0.0, 0.0]
    """
    t = np.radians(np.asarray(trend, dtype=float))
    p = np.radians(np.asarray(plunge, dtype=float))
    t, p = np.broadcast_arrays(t, p)
    up = p < 0
    t = np.where(up, t + np.pi, t)
    p = np.abs(p)
    r = SQRT2 * np.sin((np.pi / 2 - p) / 2)
    x, y = r * np.sin(t), r * np.cos(t)
    if x.ndim == 0:
        return float(x), float(y)
    return x, y


def xy_to_line(x, y):
    """Trend and plunge (degrees) of the lines plotting at ``(x, y)`` (inverse of :func:`line_to_xy`).

    Points outside the primitive give NaN.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    r = np.hypot(x, y)
    with np.errstate(invalid="ignore"):
        plunge = 90.0 - 2.0 * np.degrees(np.arcsin(np.clip(r / SQRT2, 0.0, 1.0)))
    trend = np.mod(np.degrees(np.arctan2(x, y)), 360.0)
    out = r > 1.0 + 1e-12
    plunge = np.where(out, np.nan, plunge)
    trend = np.where(out, np.nan, trend)
    return trend, plunge


def vector_to_xy(vectors):
    """Projected ``(x, y)`` of unit vectors ``(..., 3)`` (east, north, up), as lower-hemisphere axes."""
    t, p = vector_to_line(vectors)
    return line_to_xy(t, p)


def great_circle_xy(dip_dir, dip, n=181):
    """``(x, y)`` arrays of shape ``(..., n)`` tracing the great circles of planes ``dip_dir``/``dip``.

    The circle runs from the right-hand-rule strike end (θ = 0) through the dip line to the other
    strike end; every point is a lower-hemisphere direction in the plane.
    """
    dip_dir = np.asarray(dip_dir, dtype=float)
    dip = np.asarray(dip, dtype=float)
    s = strike_vector(dip_dir)[..., None, :]
    d = dip_vector(dip_dir, dip)[..., None, :]
    th = np.linspace(0.0, np.pi, n)[:, None]
    v = np.cos(th) * s + np.sin(th) * d
    v[..., 2] = np.minimum(v[..., 2], 0.0)  # strike ends exactly horizontal
    t = np.mod(np.degrees(np.arctan2(v[..., 0], v[..., 1])), 360.0)
    p = np.degrees(np.arcsin(np.clip(-v[..., 2], 0.0, 1.0)))
    return line_to_xy(t, p)


# ---------------------------------------------------------------------------------------------
# Kamb (1959) density of axes (numpy only)


def kamb_counting_angle(n, sigma=3.0):
    """Half-angle (degrees) of the Kamb counting cone for ``n`` data at significance ``sigma``.

    Kamb (1959, "Ice petrofabric observations from Blue Glacier, Washington, in relation to
    theory and experiment", *J. Geophys. Res.* 64(11)) chooses the counting area so that the count
    expected from a uniform distribution is ``sigma`` standard deviations of the binomial count:
    with ``A`` the counted fraction of the hemisphere, ``N·A = sigma·√(N·A·(1 − A))``, so
    ``A = sigma² / (N + sigma²)``.  A cone of half-angle θ around an axis counts the fraction
    ``1 − cos θ`` of the (axial) hemisphere, hence ``cos θ = 1 − A``.
    """
    n = float(n)
    if n < 1:
        raise ValueError(f"Kamb counting needs at least 1 datum, got {n:g}")
    if not sigma > 0:
        raise ValueError(f"Kamb significance level sigma must be > 0, got {sigma!r}")
    a = sigma ** 2 / (n + sigma ** 2)
    return float(np.degrees(np.arccos(1.0 - a)))


@dataclass(frozen=True)
class KambGrid:
    """Kamb densities on a regular grid of the projection.

    Attributes
    ----------
    x, y : (m,) grid coordinates (unit primitive)
    density : (m, m) count / σ of the binomial count (NaN outside the primitive); a uniform
        distribution gives ``sigma`` on average
    counts : (m, m) raw counts in the cone
    n : number of data
    sigma : significance level (the expected uniform density, in σ)
    angle_deg : counting-cone half-angle
    area_fraction : counted fraction of the hemisphere
    """

    x: np.ndarray
    y: np.ndarray
    density: np.ndarray
    counts: np.ndarray
    n: int
    sigma: float
    angle_deg: float
    area_fraction: float


def kamb_density_at(node_trend, node_plunge, trend, plunge, sigma=3.0, weights=None):
    """Kamb (1959) counts and densities at counting nodes ``node_trend``/``node_plunge`` (deg).

    The data ``trend``/``plunge`` (degrees; NaN rows dropped) within the counting cone of
    :func:`kamb_counting_angle` around each node are counted as axes (``|g·v| ≥ cos θ``, so a
    cone near the primitive also counts data on the opposite side).  Returns ``(counts,
    density, n, angle_deg, area_fraction)`` with ``density = counts / √(N·A·(1 − A))`` in
    multiples of σ (a uniform distribution gives ``sigma`` on average).
    """
    t = np.asarray(trend, dtype=float).ravel()
    p = np.asarray(plunge, dtype=float).ravel()
    w = np.ones_like(t) if weights is None else np.asarray(weights, dtype=float).ravel()
    ok = np.isfinite(t) & np.isfinite(p) & np.isfinite(w)
    t, p, w = t[ok], np.clip(np.abs(p[ok]), 0.0, 90.0), w[ok]
    n = len(t)
    angle = kamb_counting_angle(max(n, 1), sigma)
    a = 1.0 - np.cos(np.radians(angle))
    nt = np.asarray(node_trend, dtype=float)
    npl = np.asarray(node_plunge, dtype=float)
    g = line_to_vector(nt.ravel(), npl.ravel())
    if n:
        cos_d = np.abs(g @ line_to_vector(t, p).T)
        counts = ((cos_d >= np.cos(np.radians(angle))) * w).sum(axis=1)
    else:
        counts = np.zeros(len(g))
    counts = counts.reshape(nt.shape)
    return counts, counts / np.sqrt(max(n, 1) * a * (1.0 - a)), n, angle, float(a)


def kamb_density(trend, plunge, sigma=3.0, grid_n=101, weights=None):
    """Kamb (1959) density of axes ``trend``/``plunge`` (degrees) on a ``grid_n`` × ``grid_n``
    grid of the projection (nodes outside the primitive are NaN); see :func:`kamb_density_at`."""
    xs = np.linspace(-1.0, 1.0, grid_n)
    gx, gy = np.meshgrid(xs, xs)
    gt, gp = xy_to_line(gx, gy)
    inside = np.isfinite(gp)
    counts, density, n, angle, a = kamb_density_at(np.where(inside, gt, 0.0), np.where(inside, gp, 0.0), trend,
                                                   plunge, sigma, weights)
    return KambGrid(xs, xs, np.where(inside, density, np.nan), np.where(inside, counts, np.nan), n, float(sigma),
                    angle, a)


# ---------------------------------------------------------------------------------------------
# Sense classes for fault-slip data


#: sense class -> (Okabe-Ito colour name, matplotlib marker, label)
SENSE_STYLE = {
    "normal": ("blue", "o", "normal"),
    "reverse": ("vermillion", "^", "reverse / thrust"),
    "dextral": ("bluish_green", "s", "dextral"),
    "sinistral": ("reddish_purple", "D", "sinistral"),
    "other": ("black", "x", "other / unknown"),
}


def sense_class(sense):
    """Dominant sense class of sense words (``normal-dextral`` -> ``normal``; thrust -> reverse)."""
    out = []
    for s in np.atleast_1d(np.asarray(sense, dtype=object)):
        w = str(s or "").strip().lower().replace("oblique ", "").split("-")[0].split(" ")[0]
        w = "reverse" if w == "thrust" else w
        out.append(w if w in SENSE_STYLE else "other")
    return np.array(out, dtype=object)


def _sense_from_vectors(dip_dir, dip, u):
    from ..core.slip import sense_words, vector_to_rake

    return sense_words(np.atleast_1d(vector_to_rake(dip_dir, dip, u)))


# ---------------------------------------------------------------------------------------------
# Drawing


def new_figure(width_in=6.4, height_in=6.0, dpi=110):
    """A matplotlib Figure with an Agg canvas (headless; no pyplot state)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in), dpi=dpi)
    FigureCanvasAgg(fig)
    return fig


class Stereonet:
    """A lower-hemisphere equal-area net drawn on a matplotlib Axes (unit primitive, north up)."""

    def __init__(self, ax, title=None, grid=True):
        from matplotlib.patches import Circle

        self.ax = ax
        ax.set_aspect("equal")
        ax.set_xlim(-1.18, 1.18)
        ax.set_ylim(-1.18, 1.18)
        ax.axis("off")
        self.clip = Circle((0, 0), 1.0, transform=ax.transData, facecolor="none")
        ax.add_patch(Circle((0, 0), 1.0, facecolor="white", edgecolor="black", lw=1.2, zorder=0.5))
        if grid:
            for p in (30, 60):
                r = SQRT2 * np.sin(np.radians(90 - p) / 2)
                ax.add_patch(Circle((0, 0), r, facecolor="none", edgecolor="0.85", lw=0.5, zorder=0.6))
            ax.plot([-1, 1], [0, 0], color="0.85", lw=0.5, zorder=0.6)
            ax.plot([0, 0], [-1, 1], color="0.85", lw=0.5, zorder=0.6)
        for az in range(0, 360, 10):
            a = np.radians(az)
            k = 0.05 if az % 90 == 0 else 0.025
            ax.plot([np.sin(a), (1 + k) * np.sin(a)], [np.cos(a), (1 + k) * np.cos(a)], color="black", lw=0.7)
        ax.text(0, 1.08, "N", ha="center", va="bottom", fontsize=10, fontweight="bold")
        ax.plot([0], [0], marker="+", color="black", ms=6, mew=0.8)
        if title:
            ax.set_title(title, fontsize=10)

    # --- primitives -----------------------------------------------------------------------------

    def planes(self, dip_dir, dip, color="black", lw=0.9, ls="-", label=None, alpha=1.0, zorder=2):
        dd, dp = _finite(dip_dir, dip)
        if not len(dd):
            return []
        x, y = great_circle_xy(dd, dp)
        out = []
        for k in range(len(dd)):
            (h,) = self.ax.plot(x[k], y[k], color=color, lw=lw, ls=ls, alpha=alpha, zorder=zorder,
                                label=label if k == 0 else None)
            h.set_clip_path(self.clip)
            out.append(h)
        return out

    def lines(self, trend, plunge, marker="o", color="black", size=30, label=None, filled=True, zorder=4,
              edge="black", alpha=1.0):
        t, p = _finite(trend, plunge)
        x, y = line_to_xy(t, p)
        kw = dict(marker=marker, s=size, zorder=zorder, label=label, alpha=alpha, linewidths=0.6)
        if marker in ("x", "+", "1", "2", "3", "4", "|", "_"):
            return self.ax.scatter(x, y, c=[color], **kw)
        if filled:
            return self.ax.scatter(x, y, c=[color], edgecolors=edge, **kw)
        return self.ax.scatter(x, y, facecolors="white", edgecolors=[color], **kw)

    def poles(self, dip_dir, dip, **kw):
        dd, dp = _finite(dip_dir, dip)
        if not len(dd):
            return None
        t, p = plane_to_pole(dd, dp)
        return self.lines(t, p, **kw)

    def labels(self, trend, plunge, texts, fontsize=7, offset=(0.03, 0.03)):
        t = np.asarray(trend, float)
        p = np.asarray(plunge, float)
        for ti, pi, s in zip(np.atleast_1d(t), np.atleast_1d(p), np.atleast_1d(texts)):
            if np.isfinite(ti) and np.isfinite(pi):
                x, y = line_to_xy(ti, pi)
                self.ax.text(x + offset[0], y + offset[1], str(s), fontsize=fontsize, zorder=6,
                             bbox=dict(boxstyle="round,pad=0.1", fc="white", ec="none", alpha=0.7))

    def density(self, trend, plunge, sigma=3.0, interval=2.0, cmap="YlGnBu", grid_n=101):
        """Kamb contours (filled) at multiples of ``interval`` σ; returns the :class:`KambGrid`."""
        kg = kamb_density(trend, plunge, sigma=sigma, grid_n=grid_n)
        if kg.n == 0:
            return kg
        top = np.nanmax(kg.density)
        levels = np.arange(interval, max(top, interval) + interval, interval)
        if len(levels) >= 2:
            cs = self.ax.contourf(kg.x, kg.y, kg.density, levels=levels, cmap=cmap, alpha=0.55, zorder=1,
                                  extend="max", vmin=levels[0], vmax=levels[-1] * 1.6)
            for c in getattr(cs, "collections", [cs]):
                c.set_clip_path(self.clip)
            lines = self.ax.contour(kg.x, kg.y, kg.density, levels=levels, colors="0.25", linewidths=0.5, zorder=1.1)
            for c in getattr(lines, "collections", [lines]):
                c.set_clip_path(self.clip)
            self.contours = cs
        return kg

    def slip(self, dip_dir, dip, slip_vectors, sense=None, arrow_len=0.13, draw_planes=True):
        """Fault-slip data: great circles, slip-line dots and hanging-wall motion arrows.

        ``slip_vectors``: (n, 3) hanging-wall slip directions (east, north, up; any length).
        ``sense``: sense words (default: from the rake of each vector, :func:`core.slip.sense_words`).
        """
        dd = np.atleast_1d(np.asarray(dip_dir, float))
        dp = np.atleast_1d(np.asarray(dip, float))
        u = np.atleast_2d(np.asarray(slip_vectors, float))
        ok = np.isfinite(dd) & np.isfinite(dp) & np.all(np.isfinite(u), axis=1) & (np.linalg.norm(u, axis=1) > 0)
        dd, dp, u = dd[ok], dp[ok], u[ok]
        if sense is None:
            sense = _sense_from_vectors(dd, dp, u) if len(dd) else np.zeros(0, object)
        else:
            sense = np.atleast_1d(np.asarray(sense, dtype=object))[ok]
        cls = sense_class(sense)
        if draw_planes:
            self.planes(dd, dp, color="0.55", lw=0.6, zorder=1.5)
        u = u / np.linalg.norm(u, axis=1, keepdims=True)
        lower = np.where((u[:, 2] > 0)[:, None], -u, u)  # the lower end of the slip axis
        x, y = line_to_xy(*_trend_plunge(lower))
        horiz = np.hypot(u[:, 0], u[:, 1])
        az = np.arctan2(u[:, 0], u[:, 1])
        for c in SENSE_STYLE:
            sel = cls == c
            if not np.any(sel):
                continue
            colour, marker, label = SENSE_STYLE[c]
            self.ax.scatter(x[sel], y[sel], marker=marker, s=22, c=[_rgb(colour)],
                            edgecolors="black" if marker != "x" else None, linewidths=0.4, zorder=5,
                            label=f"{label} ({int(sel.sum())})")
            for xi, yi, a, h in zip(x[sel], y[sel], az[sel], horiz[sel]):
                if h < 1e-6:  # vertical slip: no map direction
                    continue
                self.ax.annotate("", xy=(xi + arrow_len * np.sin(a), yi + arrow_len * np.cos(a)), xytext=(xi, yi),
                                 arrowprops=dict(arrowstyle="-|>", color=_rgb(colour), lw=1.0, mutation_scale=8,
                                                 shrinkA=0, shrinkB=0), zorder=5.5, annotation_clip=False)
        return cls

    def cone(self, trend, plunge, half_angle, color="black", lw=0.9, ls="-", n=121, zorder=5):
        """Small circle of ``half_angle`` degrees about the axis ``trend``/``plunge`` (e.g. a 95 %
        confidence cone); parts in the upper hemisphere are drawn at their lower-hemisphere twins."""
        if not (np.isfinite(trend) and np.isfinite(plunge) and np.isfinite(half_angle)):
            return None
        a = line_to_vector(float(trend), float(plunge))
        ref = np.array([0.0, 0.0, 1.0]) if abs(a[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
        b1 = np.cross(a, ref)
        b1 /= np.linalg.norm(b1)
        b2 = np.cross(a, b1)
        c = np.radians(float(half_angle))
        ph = np.linspace(0.0, 2 * np.pi, n)[:, None]
        v = np.cos(c) * a + np.sin(c) * (np.cos(ph) * b1 + np.sin(ph) * b2)
        x, y = line_to_xy(*_trend_plunge(v))
        jump = np.hypot(np.diff(x), np.diff(y)) > 0.5  # crossing the primitive: break the line
        x = np.insert(x, np.flatnonzero(jump) + 1, np.nan)
        y = np.insert(y, np.flatnonzero(jump) + 1, np.nan)
        (h,) = self.ax.plot(x, y, color=color, lw=lw, ls=ls, zorder=zorder)
        return h

    def legend(self, **kw):
        handles, labels = self.ax.get_legend_handles_labels()
        if handles:
            kw.setdefault("fontsize", 7)
            kw.setdefault("loc", "upper center")
            kw.setdefault("bbox_to_anchor", (0.5, 0.03))
            kw.setdefault("frameon", False)
            kw.setdefault("ncol", 3)
            kw.setdefault("columnspacing", 1.0)
            self.ax.legend(**kw)


def _finite(a, b):
    a = np.atleast_1d(np.asarray(a, dtype=float))
    b = np.atleast_1d(np.asarray(b, dtype=float))
    ok = np.isfinite(a) & np.isfinite(b)
    return a[ok], b[ok]


def _trend_plunge(vectors):
    v = np.asarray(vectors, float)
    t = np.mod(np.degrees(np.arctan2(v[..., 0], v[..., 1])), 360.0)
    p = np.degrees(np.arcsin(np.clip(-v[..., 2] / np.linalg.norm(v, axis=-1), -1.0, 1.0)))
    return t, p


# ---------------------------------------------------------------------------------------------
# Whole figures


_NET_BOX = [0.04, 0.16, 0.92, 0.78]


def _caption(fig, text):
    fig.text(0.03, 0.012, text, ha="left", va="bottom", fontsize=7, wrap=True, color="0.2")


def planes_figure(dip_dir, dip, labels=None, quality=None, density=True, sigma=3.0, title=None, extra_poles=None,
                  extra_label="poles (measured)", dpi=110):
    """Great circles and poles of planes, coloured and shaped by quality, with Kamb contours of the
    poles (of ``extra_poles`` = (dip_dir, dip) when given, e.g. bedding readings, else of the planes).

    Returns a matplotlib Figure.
    """
    fig = new_figure(6.4, 7.0, dpi)
    ax = fig.add_axes(_NET_BOX)
    net = Stereonet(ax, title or "Planes (lower hemisphere, equal area)")
    dd = np.atleast_1d(np.asarray(dip_dir, float))
    dp = np.atleast_1d(np.asarray(dip, float))
    q = np.atleast_1d(np.asarray(quality if quality is not None else ["good"] * len(dd), dtype=object))
    note = ""
    dens_src = extra_poles if extra_poles is not None else (dd, dp)
    if density:
        ddd, ddp = _finite(*dens_src)
        if len(ddd) >= 3:
            pt, pp = plane_to_pole(ddd, ddp)
            kg = net.density(pt, pp, sigma=sigma)
            note = (f"Kamb (1959) contours of {'measured' if extra_poles is not None else 'plane'} poles at 2σ "
                    f"intervals (N = {kg.n}; counting cone {kg.angle_deg:.1f}°, {100 * kg.area_fraction:.1f}% of the "
                    f"hemisphere; a uniform distribution gives {sigma:g}σ).")
    if extra_poles is not None:
        net.poles(*extra_poles, marker=".", color="black", size=12, label=extra_label, zorder=3)
    for word, (colour, dash, width, shape) in QUALITY_STYLE.items():
        sel = q == word
        if not np.any(sel):
            continue
        ls = {"solid": "-", "dash": "--", "dot": ":", "dash dot": "-."}[dash]
        net.planes(dd[sel], dp[sel], color=_rgb(colour), lw=1.3, ls=ls, label=f"{word} ({int(sel.sum())})")
        marker = {"circle": "o", "square": "s", "triangle": "^", "cross2": "x"}[shape]
        net.poles(dd[sel], dp[sel], marker=marker, color=_rgb(colour), size=28)
    if labels is not None:
        ok = np.isfinite(dd) & np.isfinite(dp)
        if np.any(ok):
            t, p = plane_to_pole(dd[ok], dp[ok])
            net.labels(t, p, np.atleast_1d(np.asarray(labels, dtype=object))[ok])
    net.legend()
    _caption(fig, "Great circles and poles (dots) of planes, lower hemisphere, equal area, grid north up. "
                  "Colour and line style give the quality word. " + note)
    return fig


def fault_slip_figure(dip_dir, dip, slip_vectors, sense=None, p_axes=None, t_axes=None, title=None, dpi=110):
    """Fault-slip data (left) and their P and T axes (right); ``p_axes``/``t_axes`` = (trend, plunge)."""
    two = p_axes is not None or t_axes is not None
    fig = new_figure(11.0 if two else 6.4, 6.6 if two else 7.0, dpi)
    ax = fig.add_axes([0.02, 0.16, 0.46, 0.76] if two else _NET_BOX)
    net = Stereonet(ax, title or f"Fault-slip data (N = {len(np.atleast_2d(slip_vectors))})")
    net.slip(dip_dir, dip, slip_vectors, sense)
    net.legend()
    if two:
        ax2 = fig.add_axes([0.52, 0.16, 0.46, 0.76])
        net2 = Stereonet(ax2, "P and T axes (Marrett & Allmendinger 1990)")
        if p_axes is not None:
            t, p = _finite(*p_axes)
            if len(t) >= 3:
                net2.density(t, p, cmap="Oranges")
            net2.lines(t, p, marker="o", color=_rgb("vermillion"), size=18, label=f"P ({len(t)})")
        if t_axes is not None:
            t, p = _finite(*t_axes)
            net2.lines(t, p, marker="s", color=_rgb("blue"), size=18, filled=False, label=f"T ({len(t)})")
        net2.legend()
    _caption(fig, "Lower hemisphere, equal area. Each fault is a grey great circle; the dot is the slip line and "
                  "the arrow points the way the hanging wall moved (normal: outward, reverse: inward). "
                  + ("P: filled circles (with Kamb contours), T: open squares." if two else ""))
    return fig


#: principal stress -> (colour, marker, label)
STRESS_STYLE = {
    "sigma1": ("vermillion", "s", "σ1"),
    "sigma2": ("bluish_green", "^", "σ2"),
    "sigma3": ("blue", "o", "σ3"),
}


def stress_figure(axes, clouds=None, cones=None, title=None, note="", dpi=110):
    """Principal stress axes ``axes = {'sigma1': (trend, plunge), ...}`` with bootstrap ``clouds``
    (same keys, arrays of trend and plunge) and/or confidence ``cones`` (same keys, half-angles in
    degrees)."""
    fig = new_figure(6.4, 7.0, dpi)
    ax = fig.add_axes(_NET_BOX)
    net = Stereonet(ax, title or "Principal stress axes")
    for key, (colour, marker, label) in STRESS_STYLE.items():
        if clouds and key in clouds and clouds[key] is not None:
            t, p = _finite(*clouds[key])
            if len(t):
                net.lines(t, p, marker=marker, color=_rgb(colour), size=6, alpha=0.25, edge="none",
                          label=f"{label} bootstrap ({len(t)})", zorder=3)
    for key, (colour, marker, label) in STRESS_STYLE.items():
        if key in axes and axes[key] is not None:
            t, p = _finite(*axes[key])
            if len(t):
                net.lines(t, p, marker=marker, color=_rgb(colour), size=110, label=label, zorder=6, edge="black")
                if cones and np.isfinite(cones.get(key, np.nan)):
                    net.cone(t[0], p[0], cones[key], color=_rgb(colour), lw=1.2)
    net.legend()
    _caption(fig, "Lower hemisphere, equal area. Large symbols: best-fit principal stress axes; small symbols: "
                  "bootstrap resamples. " + note)
    return fig
