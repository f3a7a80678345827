"""Mohr diagrams: the three Mohr circles of a stress state, a fault population as (σn', τ) points,
and the frictional failure line.

Stresses are compression positive (CONVENTIONS.md).  Effective stress = total − pore pressure.
The normal and shear stress on each plane come from :func:`slipsense.core.stress.resolve_traction`
(the Cauchy traction ``t = σ·n``; ``σn = t·n``, ``τ = |t − σn n|``), so the figure draws the same
numbers the tendency layers carry.  The failure line is Coulomb's ``τ = C + μ σn'`` (Byerlee 1978
for the default μ = 0.6 and C = 0).  Every plane of any orientation plots inside the large circle
and outside the two small ones (Mohr 1900; Jaeger, Cook & Zimmerman 2007, *Fundamentals of Rock
Mechanics*, §2.7).
"""
from __future__ import annotations

import numpy as np

from ..styles import OKABE_ITO, TENDENCY_CLASSES

__all__ = ["plane_stresses", "mohr_figure"]


def _rgb(c):
    rgb = OKABE_ITO[c] if isinstance(c, str) else c
    return tuple(v / 255.0 for v in rgb)


def plane_stresses(principal, axes, dip_dir, dip):
    """Normal and shear stress (same unit as ``principal``) on planes ``dip_dir``/``dip`` (deg).

    ``principal``: (3,) σ1 ≥ σ2 ≥ σ3; ``axes``: (3, 3) rows the unit σ1, σ2, σ3 axes (east, north,
    up).  Returns ``(sigma_n, tau)`` arrays (total stresses; subtract the pore pressure for
    effective normal stress).
    """
    from ..core.orientation import plane_to_normal
    from ..core.stress import resolve_traction, tensor_from_principal

    tensor = tensor_from_principal(np.asarray(principal, float), np.asarray(axes, float))
    n = plane_to_normal(np.asarray(dip_dir, float), np.asarray(dip, float))
    sn, tau, _ = resolve_traction(tensor, n)
    return sn, tau


def mohr_figure(principal, sigma_n, tau, pore_pressure=0.0, friction=0.6, cohesion=0.0, labels=None,
                slip_tendency=None, unit="MPa", title=None, dpi=110):
    """Mohr circles of ``principal`` = (σ1, σ2, σ3) with the planes' (σn − Pp, τ) and the failure line.

    Points are coloured (and sized) by slip tendency class when ``slip_tendency`` is given (the
    classes of the map style), otherwise all alike.
    """
    from matplotlib.patches import Arc

    from .stereonet import new_figure

    s1, s2, s3 = (float(v) - float(pore_pressure) for v in principal)
    if not (s1 >= s2 >= s3):
        raise ValueError(f"principal stresses must satisfy σ1 ≥ σ2 ≥ σ3, got {tuple(principal)}")
    sn = np.atleast_1d(np.asarray(sigma_n, float)) - float(pore_pressure)
    tt = np.atleast_1d(np.asarray(tau, float))
    fig = new_figure(7.6, 4.6, dpi)
    ax = fig.add_axes([0.09, 0.16, 0.88, 0.74])
    for a, b, lw in ((s1, s3, 1.4), (s1, s2, 0.9), (s2, s3, 0.9)):
        c, r = (a + b) / 2, (a - b) / 2
        ax.add_patch(Arc((c, 0), 2 * r, 2 * r, theta1=0, theta2=180, color="black", lw=lw))
    lo = min(0.0, s3) - 0.05 * (s1 - s3 or 1)
    hi = s1 + 0.08 * (s1 - s3 or 1)
    xs = np.linspace(max(lo, 0.0), hi, 50)
    ax.plot(xs, cohesion + friction * xs, color=_rgb("vermillion"), lw=1.2, ls="--",
            label=f"failure: τ = {cohesion:g} + {friction:g} σn'")
    ok = np.isfinite(sn) & np.isfinite(tt)
    if slip_tendency is not None:
        ts = np.atleast_1d(np.asarray(slip_tendency, float))
        for k, (a, b, colour, width) in enumerate(TENDENCY_CLASSES):
            sel = ok & (ts >= a) & ((ts < b) if b < 10 else np.isfinite(ts))
            if np.any(sel):
                lab = f"Ts {a:g}–{b:g}" if b < 10 else f"Ts ≥ {a:g}"
                ax.scatter(sn[sel], tt[sel], s=18 + 14 * k, c=[_rgb(colour)], edgecolors="black", linewidths=0.5,
                           marker="o", zorder=5, label=f"{lab} ({int(sel.sum())})")
    else:
        ax.scatter(sn[ok], tt[ok], s=26, c=[_rgb("blue")], edgecolors="black", linewidths=0.5, zorder=5,
                   label=f"planes ({int(ok.sum())})")
    if labels is not None:
        for x, y, s in zip(sn[ok], tt[ok], np.atleast_1d(np.asarray(labels, dtype=object))[ok]):
            ax.annotate(str(s), (x, y), xytext=(3, 3), textcoords="offset points", fontsize=7)
    for v, name in ((s1, "σ1'"), (s2, "σ2'"), (s3, "σ3'")):
        ax.plot([v], [0], marker="|", color="black", ms=8)
        ax.annotate(name, (v, 0), xytext=(0, 3), textcoords="offset points", ha="center", va="bottom", fontsize=8)
    ax.set_xlim(lo, hi)
    ax.set_ylim(0, max((s1 - s3) / 2 * 1.25, float(np.nanmax(tt[ok])) * 1.1 if np.any(ok) else 1.0))
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(f"effective normal stress σn' ({unit}, compression positive)", fontsize=8)
    ax.set_ylabel(f"shear stress τ ({unit})", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.legend(fontsize=7, loc="upper left", frameon=False)
    ax.set_title(title or "Mohr diagram of the mapped faults", fontsize=10)
    fig.text(0.5, 0.012, f"Pore pressure {pore_pressure:g} {unit} subtracted from normal stresses. Slip tendency "
                        "Ts = τ/σn' (Morris et al. 1996). Screening only.", ha="center", fontsize=7, color="0.2")
    return fig
