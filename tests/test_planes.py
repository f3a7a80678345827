"""Tests of slipsense.core.planes: three-point planes, batched total-least-squares fits, quality.

All points are (east, north, up) in metres.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cases import COLLINEAR, PLANE_IDS, PLANES, plane_points, with_nan_rows
from slipsense.core.orientation import angle_between_planes, plane_to_normal
from slipsense.core.planes import (
    QUALITY_LEVELS,
    QualityRules,
    assess_quality,
    fit_groups,
    planes_from_points,
    three_point,
)
from slipsense.errors import GeometryError


def azdiff(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


def axial_angle(u, v):
    """Angle (degrees) between vectors taken as axes, atan2 form (accurate near 0)."""
    u = np.asarray(u, float)
    v = np.asarray(v, float)
    return np.degrees(np.arctan2(np.linalg.norm(np.cross(u, v), axis=-1), np.abs(np.sum(u * v, axis=-1))))


def flat(groups):
    """Concatenate point groups into flat points + offsets."""
    offsets = np.concatenate([[0], np.cumsum([len(g) for g in groups])])
    pts = np.concatenate([np.asarray(g, float).reshape(-1, 3) for g in groups], axis=0)
    return pts, offsets


# --------------------------------------------------------------------------- three points
def test_three_point_vacher_check():
    """Vacher (2000) "Computational Geology 12 — Cramer's rule and the three-point problem",
    J. Geoscience Education 48(4).  Input values from a university lab exercise (references.md);
    the expected strike 104.036° RHR, dip 45.868°, dip direction 194.036° are derived from them."""
    a, b, c = (400.0, 100.0, 400.0), (0.0, 0.0, 200.0), (0.0, 300.0, 500.0)
    dd, dip = three_point(a, b, c)
    assert dip == pytest.approx(45.868, abs=1e-3)
    assert dd == pytest.approx(194.036, abs=1e-3)
    assert (dd - 90.0) % 360.0 == pytest.approx(104.036, abs=1e-3)
    # Vacher's route, done here independently: solve z = p·E + q·N + r by Cramer's rule; the dip is
    # atan |grad z| and the dip direction is the direction of steepest descent, atan2(−p, −q).
    m = np.array([[a[0], a[1], 1.0], [b[0], b[1], 1.0], [c[0], c[1], 1.0]])
    z = np.array([a[2], b[2], c[2]])
    det = np.linalg.det(m)
    p = np.linalg.det(np.column_stack([z, m[:, 1], m[:, 2]])) / det
    q = np.linalg.det(np.column_stack([m[:, 0], z, m[:, 2]])) / det
    assert dip == pytest.approx(math.degrees(math.atan(math.hypot(p, q))), abs=1e-9)
    assert azdiff(dd, math.degrees(math.atan2(-p, -q))) < 1e-9


def test_three_point_order_and_batch():
    a, b, c = (400.0, 100.0, 400.0), (0.0, 0.0, 200.0), (0.0, 300.0, 500.0)
    ref = three_point(a, b, c)
    for perm in [(b, a, c), (c, b, a), (b, c, a)]:
        assert three_point(*perm) == pytest.approx(ref)
    dd, dip = three_point(np.array([a, COLLINEAR[0]]), np.array([b, COLLINEAR[1]]), np.array([c, COLLINEAR[2]]))
    assert dd[0] == pytest.approx(ref[0]) and dip[0] == pytest.approx(ref[1])
    assert np.isnan(dd[1]) and np.isnan(dip[1])


@pytest.mark.parametrize(
    "pts",
    [COLLINEAR[:3], [(1.0, 2.0, 3.0)] * 3, [(0.0, 0.0, 0.0), (0.0, 0.0, 0.0), (5.0, 1.0, 2.0)],
     [(0.0, 0.0, np.nan), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0)]],
    ids=["collinear", "coincident", "two-coincide", "nan"],
)
def test_three_point_degenerate_is_nan(pts):
    dd, dip = three_point(*pts)
    assert math.isnan(dd) and math.isnan(dip)


@pytest.mark.parametrize("case", PLANES, ids=PLANE_IDS)
def test_three_point_canonical(case):
    p = plane_points(case.dip_dir, case.dip, n=4, centre=(500000.0, 4e6, 1200.0))
    dd, dip = three_point(p[0], p[1], p[2])
    assert dip == pytest.approx(case.dip, abs=1e-6)
    assert axial_angle(plane_to_normal(dd, dip), case.normal) < 1e-6


# --------------------------------------------------------------------------- exact recovery
@pytest.mark.parametrize("case", PLANES, ids=PLANE_IDS)
def test_canonical_planes_recovered(case):
    p = plane_points(case.dip_dir, case.dip, n=15, centre=(650000.0, 5.1e6, 800.0))
    r = planes_from_points(p, [0, len(p)])
    assert r.dip[0] == pytest.approx(case.dip, abs=1e-6)
    assert r.quality[0] != "ill-posed"
    if case.dip == 0.0:
        assert r.dip_dir[0] == 0.0  # horizontal: dip direction reported as 0
    elif case.dip == 90.0:
        # Either dip direction describes a vertical plane: compare as axes.
        assert min(azdiff(r.dip_dir[0], case.dip_dir), azdiff(r.dip_dir[0], case.dip_dir + 180.0)) < 1e-6
    else:
        assert azdiff(r.dip_dir[0], case.dip_dir) < 1e-6
        assert azdiff(r.strike[0], case.strike) < 1e-6
    np.testing.assert_allclose(r.centroids()[0], p.mean(axis=0), rtol=0, atol=1e-6)
    assert r.rms_m[0] < 1e-6


@settings(max_examples=150, deadline=None)
@given(
    st.floats(0.0, 360.0, exclude_max=True),
    st.one_of(st.just(0.0), st.just(90.0), st.floats(0.0, 90.0)),
    st.integers(3, 40),
    st.tuples(st.floats(-1e6, 1e6), st.floats(-1e7, 1e7), st.floats(-1e3, 5e3)),
    st.integers(0, 2**31),
)
def test_random_planes_recovered_exactly(dd, dip, n, centre, seed):
    # The first four points are the patch corners, so any n >= 3 spans the plane.
    p = plane_points(dd, dip, n=max(n, 4), centre=centre, size=200.0, seed=seed)[:n]
    fit = fit_groups(p, [0, len(p)])
    assert axial_angle(fit.normal[0], plane_to_normal(dd, dip)) < 1e-6
    assert fit.normal[0, 2] >= 0.0  # upward
    r = planes_from_points(p, [0, len(p)])
    assert angle_between_planes(r.dip_dir[0], r.dip[0], dd, dip) < 1e-6


# --------------------------------------------------------------------------- against an explicit SVD
def svd_fit(p):
    """Total least squares written out: centre, SVD, last right-singular vector is the normal."""
    p = np.asarray(p, float)
    p = p[np.all(np.isfinite(p), axis=1)]
    c = p.mean(axis=0)
    _, s, vt = np.linalg.svd(p - c, full_matrices=False)
    normal = vt[-1] * (1.0 if vt[-1, 2] >= 0 else -1.0)
    ev = np.zeros(3)
    ev[: s.size] = s**2 / len(p)
    return c, normal, ev, math.sqrt(ev[2]), np.ptp(p[:, 2])


def random_groups(rng, g=30):
    groups = []
    for _ in range(g):
        n = int(rng.integers(4, 60))  # 3 points fit exactly: S3 would be rounding noise
        centre = rng.uniform([-1e5, 4e6, 0.0], [1e5, 5e6, 3000.0])
        groups.append(plane_points(rng.uniform(0, 360), rng.uniform(0, 90), n=max(n, 4), centre=centre,
                                   size=rng.uniform(10, 500), seed=int(rng.integers(1e9)))[:n]
                      + rng.normal(scale=rng.uniform(0.01, 5.0), size=(n, 3)))
    return groups


def test_fit_groups_matches_explicit_svd():
    rng = np.random.default_rng(7)
    groups = random_groups(rng)
    pts, off = flat(groups)
    fit = fit_groups(pts, off)
    for i, grp in enumerate(groups):
        c, normal, ev, rms, relief = svd_fit(grp)
        np.testing.assert_allclose(fit.centroid[i], c, rtol=0, atol=1e-6)
        assert axial_angle(fit.normal[i], normal) < 1e-7
        assert fit.normal[i, 2] >= 0
        assert fit.rms_m[i] == pytest.approx(rms, rel=1e-6)
        # Eigenvalues from the scatter matrix carry an absolute error of about eps × S1.
        np.testing.assert_allclose(fit.eigvals[i], ev, rtol=1e-6, atol=1e-12 * ev[0])
        assert fit.relief_m[i] == pytest.approx(relief, abs=1e-9)
        assert fit.n_points[i] == len(grp)


def test_fernandez_m_and_k_from_eigenvalues():
    """Fernández (2005) "Obtaining a best fitting plane through 3D georeferenced data",
    J. Structural Geology 27(5): coplanarity M = ln(S1/S3), collinearity K = ln(S1/S2)/ln(S2/S3),
    with S1 ≥ S2 ≥ S3 the eigenvalues; recomputed here from the test's own SVD."""
    rng = np.random.default_rng(11)
    groups = random_groups(rng, g=20)
    pts, off = flat(groups)
    r = planes_from_points(pts, off)
    for i, grp in enumerate(groups):
        s1, s2, s3 = svd_fit(grp)[2]
        assert r.coplanarity[i] == pytest.approx(math.log(s1 / s3), rel=1e-6)
        assert r.collinearity[i] == pytest.approx(math.log(s1 / s2) / math.log(s2 / s3), rel=1e-6)


def test_batch_agrees_with_single_group():
    rng = np.random.default_rng(3)
    groups = random_groups(rng, g=8)
    pts, off = flat(groups)
    batch = fit_groups(pts, off)
    rb = planes_from_points(pts, off, sigma_xy_m=0.5, sigma_z_m=0.5)
    for i, grp in enumerate(groups):
        one = fit_groups(grp, [0, len(grp)])
        for name in ("centroid", "eigvals", "rms_m", "relief_m", "n_points"):
            np.testing.assert_allclose(getattr(one, name)[0], getattr(batch, name)[i], rtol=1e-9, atol=1e-9)
        assert axial_angle(one.normal[0], batch.normal[i]) < 1e-9
        r1 = planes_from_points(grp, [0, len(grp)], sigma_xy_m=0.5, sigma_z_m=0.5)
        for name in ("dip_dir", "dip", "coplanarity", "collinearity"):
            np.testing.assert_allclose(getattr(r1, name)[0], getattr(rb, name)[i], rtol=1e-9, atol=1e-9)
        assert r1.quality[0] == rb.quality[i]


def test_nan_rows_ignored():
    p = plane_points(120.0, 30.0, n=10, centre=(1e5, 2e6, 100.0))
    p = p + np.random.default_rng(0).normal(scale=0.3, size=p.shape)
    q = with_nan_rows(p)
    assert np.isnan(q).any(axis=1).sum() == 2
    pts, off = flat([p, q])
    fit = fit_groups(pts, off)
    assert list(fit.n_points) == [10, 10]
    for name in ("centroid", "normal", "eigvals", "rms_m", "relief_m"):
        np.testing.assert_allclose(getattr(fit, name)[0], getattr(fit, name)[1], rtol=1e-9, atol=1e-9)
    # The first row of a group NaN (it is the group's reference point internally) changes nothing.
    q2 = np.concatenate([[[np.nan, np.nan, np.nan]], p])
    one = fit_groups(q2, [0, len(q2)])
    np.testing.assert_allclose(one.centroid[0], fit.centroid[0], rtol=0, atol=1e-6)


def test_weights_mask_rows():
    p = plane_points(200.0, 50.0, n=12) + np.random.default_rng(1).normal(scale=0.2, size=(12, 3))
    w = np.ones(12)
    w[[2, 5]] = 0
    a = fit_groups(p, [0, 12], weights=w)
    b = fit_groups(np.delete(p, [2, 5], axis=0), [0, 10])
    np.testing.assert_allclose(a.eigvals, b.eigvals, rtol=1e-9)
    assert a.n_points[0] == 10


def test_ill_posed_groups_get_nan_orientation():
    good = plane_points(120.0, 30.0, n=10)
    groups = [good, COLLINEAR, good[:2], np.full((4, 3), np.nan), np.zeros((0, 3))]
    pts, off = flat(groups)
    fit = fit_groups(pts, off)
    assert np.all(np.isnan(fit.normal[2:]))
    assert list(fit.n_points) == [10, 5, 2, 0, 0]
    assert np.all(np.isnan(fit.centroid[3:]))
    r = planes_from_points(pts, off)
    assert list(r.quality) == ["good", "ill-posed", "ill-posed", "ill-posed", "ill-posed"]
    assert "collinear" in r.reason[1] and "fewer than 3" in r.reason[2] and "fewer than 3" in r.reason[3]
    for name in ("dip", "dip_dir", "strike"):
        assert np.isfinite(getattr(r, name)[0])
        assert np.all(np.isnan(getattr(r, name)[1:]))
    assert np.all(np.isnan(r.normals()[1:])) and np.isfinite(r.normals()[0]).all()
    cols = r.columns()
    assert set(cols) >= {"dip_dir", "dip", "strike", "dip_lo95", "quality", "n_points", "rms_m", "relief_m"}
    assert all(len(v) == 5 for v in cols.values())


@pytest.mark.parametrize(
    "points, offsets, match",
    [
        (np.zeros((4, 2)), [0, 4], r"points must have shape \(N, 3\)"),
        (np.zeros((4, 3)), [0, 3], "offsets must start at 0 and end at the number of points"),
        (np.zeros((4, 3)), [1, 4], "offsets must start at 0"),
        (np.zeros((4, 3)), [0, 3, 2, 4], "offsets must not decrease"),
    ],
)
def test_fit_groups_errors(points, offsets, match):
    with pytest.raises(GeometryError, match=match):
        fit_groups(points, offsets)


# --------------------------------------------------------------------------- Monte Carlo intervals
def noisy_planes(rng, g, sigma, n=20, size=60.0):
    dd = rng.uniform(0.0, 360.0, g)
    dip = rng.uniform(20.0, 70.0, g)
    groups = [plane_points(dd[i], dip[i], n=n, size=size, seed=int(rng.integers(1e9)),
                           centre=rng.uniform([-1e5, 4e6, 0.0], [1e5, 5e6, 3000.0]))
              + rng.normal(scale=sigma, size=(n, 3)) for i in range(g)]
    return dd, dip, groups


def test_monte_carlo_reproducible_for_a_seed():
    rng = np.random.default_rng(5)
    _, _, groups = noisy_planes(rng, 5, 1.0)
    pts, off = flat(groups)
    a = planes_from_points(pts, off, sigma_xy_m=1.0, sigma_z_m=1.0, draws=50, seed=42)
    b = planes_from_points(pts, off, sigma_xy_m=1.0, sigma_z_m=1.0, draws=50, seed=42)
    c = planes_from_points(pts, off, sigma_xy_m=1.0, sigma_z_m=1.0, draws=50, seed=43)
    for name in ("dip_lo95", "dip_hi95", "dip_dir_lo95", "dip_dir_hi95"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name))
        assert not np.array_equal(getattr(a, name), getattr(c, name))
    np.testing.assert_array_equal(a.dip, c.dip)  # the fit itself does not depend on the seed
    assert pts.flags.writeable and np.isfinite(pts).all()  # input not mutated (no NaN written)


def test_monte_carlo_coverage():
    """95 % intervals should contain the true dip (and dip direction) in about 95 % of trials.

    200 synthetic planes (dips 20–70°, 20 points on a 60 m patch, isotropic 1 m noise), each
    with 200 draws.  Isotropic noise because total least squares is unbiased only then; with
    unequal horizontal and vertical errors the fit is biased and the re-drawn interval inherits
    twice the bias.  For exact 95 % coverage the count of hits out of 200 is binomial with a standard
    deviation of 1.5 %, so 85–99 % is about 6.5 sd below to 2.6 sd above the nominal rate: it
    leaves room for the Monte Carlo approximation (percentile interval of a parametric bootstrap,
    200 draws, slight non-linearity) yet fails intervals that are half as wide as they should be
    (coverage ≈ 67 %) or twice as wide (≈ 99.99 %).
    """
    rng = np.random.default_rng(2024)
    dd, dip, groups = noisy_planes(rng, 200, 1.0)
    pts, off = flat(groups)
    r = planes_from_points(pts, off, sigma_xy_m=1.0, sigma_z_m=1.0, draws=200, seed=1)
    assert np.all(r.quality != "ill-posed")
    hit_dip = (r.dip_lo95 <= dip) & (dip <= r.dip_hi95)
    width = (r.dip_dir_hi95 - r.dip_dir_lo95) % 360.0
    hit_dd = ((dd - r.dip_dir_lo95) % 360.0) <= width
    assert 0.85 <= hit_dip.mean() <= 0.99, hit_dip.mean()
    assert 0.85 <= hit_dd.mean() <= 0.99, hit_dd.mean()
    for name in ("dip_dir_lo95", "dip_dir_hi95"):
        assert np.all((getattr(r, name) >= 0.0) & (getattr(r, name) < 360.0))
    # The fitted value lies inside its own interval.
    assert np.all((r.dip_lo95 <= r.dip) & (r.dip <= r.dip_hi95))


def test_monte_carlo_intervals_widen_with_sigma():
    rng = np.random.default_rng(9)
    dd, dip, groups = noisy_planes(rng, 20, 0.0)  # noise-free points: the fit is the truth
    pts, off = flat(groups)
    widths = []
    for sigma in (0.05, 0.25):
        r = planes_from_points(pts, off, sigma_xy_m=sigma, sigma_z_m=sigma, draws=100, seed=3)
        widths.append(r.dip_hi95 - r.dip_lo95)
    assert np.all(widths[1] > widths[0])
    # For small errors the interval is linear in sigma (first-order propagation): ratio ≈ 5.
    ratio = widths[1] / widths[0]
    assert np.all((ratio > 4.0) & (ratio < 6.0)), ratio


def test_no_draws_no_intervals():
    p = plane_points(30.0, 40.0) + np.random.default_rng(0).normal(scale=0.1, size=(12, 3))
    for kw in ({"draws": 0, "sigma_z_m": 1.0}, {"draws": 50}):
        r = planes_from_points(p, [0, len(p)], **kw)
        assert np.isnan(r.dip_lo95[0]) and np.isnan(r.dip_dir_hi95[0])


def test_steep_plane_interval_includes_other_dip_direction():
    p = plane_points(90.0, 89.5, n=20, size=40.0)
    r = planes_from_points(p, [0, len(p)], sigma_xy_m=2.0, sigma_z_m=2.0, draws=100, seed=0)
    assert r.dip_hi95[0] == 90.0  # clipped; the draws reach past vertical
    assert "dipping the other way" in r.reason[0]


# --------------------------------------------------------------------------- assess_quality branches
def quality(ev, n=10, relief=100.0, **kw):
    q, reason, m, k = assess_quality(np.array([n]), np.array([ev], float), np.array([relief]), **kw)
    return q[0], reason[0], m[0], k[0]


@pytest.mark.parametrize(
    "ev, kw, expected, why",
    [
        # M = ln(1e4) = 9.2 > 4, K = ln 2 / ln 5000 = 0.08 < 0.8.
        ((1.0, 0.5, 1e-4), {}, "good", ""),
        # M = ln 20 = 3.0 (between 2 and 4): fair.
        ((1.0, 0.5, 0.05), {}, "fair", "weaker"),
        # M = 9.2 but K = ln 100 / ln 100 = 1.0 (between 0.8 and 1.6): fair.
        ((1.0, 0.01, 1e-4), {}, "fair", "weaker"),
        # M = ln(1/0.3) = 1.2 < 2: poor.
        ((1.0, 0.5, 0.3), {}, "poor", "low coplanarity"),
        # K = ln 1e4 / ln 100 = 2 > 1.6: poor.
        ((1.0, 1e-4, 1e-6), {}, "poor", "high collinearity"),
        # s2 tiny relative to s1: collinear.
        ((1.0, 1e-14, 0.0), {}, "ill-posed", "collinear"),
        # Width sqrt(s2) = 1 m ≤ 3 × 0.5 m position error: collinear for this precision.
        ((100.0, 1.0, 1e-4), {"sigma_xy_m": 0.5}, "ill-posed", "collinear"),
        # Relief 100 m < 3 × 40 m vertical error (the spread, sqrt(5e5) m, is ample).
        ((1e6, 5e5, 1.0), {"sigma_z_m": 40.0}, "ill-posed", "relief"),
        # Monte Carlo dip interval wider than 45°.
        ((1.0, 0.5, 1e-4), {"dip": np.array([30.0]), "dip_width": np.array([50.0])}, "ill-posed", "too wide"),
        # Dip interval 15° > 10° (good) but ≤ 20° (fair).
        ((1.0, 0.5, 1e-4), {"dip": np.array([30.0]), "dip_width": np.array([15.0])}, "fair", "wider"),
        # Dip interval 30° > 20°: poor.
        ((1.0, 0.5, 1e-4), {"dip": np.array([30.0]), "dip_width": np.array([30.0])}, "poor", "wide intervals"),
        # Dip-direction interval 30° on a steep plane: fair; 60°: poor.
        ((1.0, 0.5, 1e-4), {"dip": np.array([30.0]), "dip_dir_width": np.array([30.0])}, "fair", "wider"),
        ((1.0, 0.5, 1e-4), {"dip": np.array([30.0]), "dip_dir_width": np.array([60.0])}, "poor", "wide"),
        # ... but not on a gentle one (dip ≤ 15°), where the dip direction is loosely defined anyway.
        ((1.0, 0.5, 1e-4), {"dip": np.array([10.0]), "dip_dir_width": np.array([60.0])}, "good", ""),
    ],
)
def test_assess_quality_branches(ev, kw, expected, why):
    q, reason, m, k = quality(ev, **kw)
    assert q == expected
    assert q in QUALITY_LEVELS
    assert why in reason
    if expected == "good":
        assert reason == ""


def test_assess_quality_few_points_and_thresholds_are_rules():
    q, reason, m, k = quality((1.0, 0.5, 1e-4), n=2)
    assert q == "ill-posed" and "fewer than 3" in reason and math.isnan(m) and math.isnan(k)
    # Fernández (2005) thresholds M > 4, K < 0.8 (from memory, references.md) are the defaults.
    rules = QualityRules()
    assert (rules.good_m, rules.good_k) == (4.0, 0.8)
    # M = ln 20 = 3.0 is fair by default, good once the threshold is lowered to 2.5.
    assert quality((1.0, 0.5, 0.05))[0] == "fair"
    assert quality((1.0, 0.5, 0.05), rules=QualityRules(good_m=2.5))[0] == "good"


def test_assess_quality_m_k_definitions():
    ev = np.array([[3.0, 2.0, 0.01], [5.0, 0.2, 0.1]])
    _, _, m, k = assess_quality(np.array([5, 5]), ev, np.array([10.0, 10.0]))
    # Fernández (2005): M = ln(S1/S3), K = ln(S1/S2)/ln(S2/S3).
    np.testing.assert_allclose(m, np.log(ev[:, 0] / ev[:, 2]), rtol=1e-12)
    np.testing.assert_allclose(k, np.log(ev[:, 0] / ev[:, 1]) / np.log(ev[:, 1] / ev[:, 2]), rtol=1e-12)


def test_monte_carlo_kernel_agrees_with_fit_groups():
    """The lean kernel of the draw loop is the same fit as fit_groups (NaN rows included)."""
    from slipsense.core.planes import _draw_fit, _group_index, fit_groups

    rng = np.random.default_rng(5)
    pts = rng.normal(scale=[300, 200, 20], size=(90, 3)) + [5e5, 5.1e6, 800]
    pts[7] = np.nan
    offsets = np.array([0, 2, 40, 40, 90])
    ref = fit_groups(pts, offsets)
    gid, _ = _group_index(offsets, len(pts))
    normal, var3 = _draw_fit(pts[:, 0], pts[:, 1], pts[:, 2], offsets, gid, np.nan_to_num(ref.centroid))
    ok = np.isfinite(ref.normal[:, 0])
    np.testing.assert_allclose(normal[ok] * np.sign(normal[ok, 2:3]), ref.normal[ok], atol=1e-12)
    np.testing.assert_allclose(var3[ok], ref.eigvals[ok, 2], rtol=1e-9)
    assert np.isnan(normal[~ok]).all()
