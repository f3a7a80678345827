"""Net slip from displaced markers (core/netslip.py, steps/netslip.py, the net-slip command).

Frame of every vector here: (east, north, up), metres.  Geometry in the tests is built from explicit
trigonometry written out here (strike, down-dip and normal vectors from dip direction and dip), not
from slipsense's own conversions, and the separations are "measured" by intersecting lines with
planes: an independent forward model of what a geologist would measure.

Sources named beside the checks:

* Xu, S.-S., Velasquez-Tristan, A. F., Nieto-Samaniego, A. F., Alaniz-Alvarez, S. A. (2007)
  "Methods for quantitatively determining fault slip using fault separation", J. Struct. Geol. 29;
  Xu, Nieto-Samaniego & Alaniz-Alvarez (2009) "Quantification of true displacement using apparent
  displacement along an arbitrary line on a fault plane", Tectonophysics 467:
  ``|u| = S_m |sin(phi - beta)| / |sin(gamma - beta)|`` (pitches in the fault plane).
* A published exam-style exercise (references.md): a horizontal bed with a vertical separation of
  10 m on a fault dipping 30 deg with pure dip slip has net slip 20 m.
"""
from __future__ import annotations

import doctest
import json
import math

import numpy as np
import pytest

from conftest import read_gpkg, write_points
from slipsense.core import netslip as ns
from slipsense.errors import AngleError, InputError

RNG = np.random.default_rng(20240611)


# --------------------------------------------------------------------------- explicit geometry
def basis(dip_dir, dip):
    """(s, d, n): RHR strike, down-dip and upward normal unit vectors, written out by hand."""
    a, g = math.radians(dip_dir), math.radians(dip)
    s = np.array([math.sin(a - math.pi / 2), math.cos(a - math.pi / 2), 0.0])
    d = np.array([math.sin(a) * math.cos(g), math.cos(a) * math.cos(g), -math.sin(g)])
    n = np.array([math.sin(a) * math.sin(g), math.cos(a) * math.sin(g), math.cos(g)])
    return s, d, n


def normal(dip_dir, dip):
    return basis(dip_dir, dip)[2]


def slip_vector(dip_dir, dip, rake, net):
    """Hanging-wall slip of rake ``rake`` (Aki & Richards: from strike toward up-dip positive)."""
    s, d, _ = basis(dip_dir, dip)
    lam = math.radians(rake)
    return net * (math.cos(lam) * s - math.sin(lam) * d)


def line_plane(q, o, p, m):
    """Distance t along direction o from q to the plane through p with normal m."""
    return float(m @ (p - q)) / float(m @ o)


def fw_cutoff_point(fault_dd, fault_dp, marker_n, p_marker):
    """A point on the footwall cutoff line (fault through the origin, marker through p_marker)."""
    _, _, nf = basis(fault_dd, fault_dp)
    c = np.cross(marker_n, nf)
    # the point of the line nearest the origin: solve [nf; m; c] x = [0, m.p, 0]
    A = np.vstack([nf, marker_n, c])
    return np.linalg.solve(A, np.array([0.0, marker_n @ p_marker, 0.0]))


def measure(fault_dd, fault_dp, marker_n, p_marker, u, o):
    """Separation along ``o`` from the footwall cutoff to the hanging-wall marker (moved by u)."""
    q = fw_cutoff_point(fault_dd, fault_dp, marker_n, p_marker)
    return line_plane(q, o, p_marker + u, marker_n)


def random_plane(rng, lo=5.0, hi=85.0):
    return float(rng.uniform(0, 360)), float(rng.uniform(lo, hi))


def test_module_doctests():
    failed, tried = doctest.testmod(ns, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert tried > 0 and failed == 0


# --------------------------------------------------------------------------- textbook checks
def test_textbook_vertical_separation_30_degree_fault_pure_dip_slip():
    # Published exam-style check (references.md): horizontal bed, vertical separation 10 m
    # (hanging wall down: -10 m measured upward from the footwall bed to the hanging-wall bed),
    # fault dipping 30 deg, pure dip slip -> net slip 20 m, normal.
    r = ns.slip_from_separations(90.0, 30.0, marker_ids=["bed"], marker_dip_dir=[0.0], marker_dip=[0.0],
                                 observation=["vertical"], separation_m=[-10.0], sigma_m=[0.01],
                                 rake=[-90.0], rake_sigma=[0.01], draws=0)
    assert r.status == "unique"
    assert r.net_slip_m == pytest.approx(20.0, abs=1e-9)
    assert r.throw_m == pytest.approx(-10.0, abs=1e-9)
    assert r.heave_m == pytest.approx(10.0 / math.tan(math.radians(30.0)), abs=1e-9)
    assert r.rake == pytest.approx(-90.0, abs=1e-9) and r.sense == "normal"


def test_textbook_one_marker_alone_is_a_family_not_an_answer():
    # The same bed without the slip direction: under-determined.  Every slip with a throw of -10 m
    # fits; the family's members follow from the same trigonometry: pure dip slip 20 m (normal),
    # the minimum slip is that same dip slip (the cutoff of a horizontal bed runs along strike), and
    # no pure strike slip can produce a vertical separation (NaN).
    r = ns.slip_from_separations(90.0, 30.0, marker_ids=["bed"], marker_dip_dir=[0.0], marker_dip=[0.0],
                                 observation=["vertical"], separation_m=[-10.0], sigma_m=[0.5], draws=100)
    assert r.status == "under-determined"
    assert math.isnan(r.net_slip_m) and math.isnan(r.rake) and r.sense == ""
    assert r.dip_slip_only_m == pytest.approx(-20.0, abs=1e-9)
    assert r.min_slip_m == pytest.approx(20.0, abs=1e-9)
    assert math.isnan(r.strike_slip_only_m)
    assert r.min_slip_lo95 < 20.0 < r.min_slip_hi95
    assert "cutoff" in r.note


# --------------------------------------------------------------------------- Xu et al.
@pytest.mark.parametrize("trial", range(40))
def test_xu_formula_agrees_with_the_linear_solver(trial):
    """Xu et al. (2007, 2009): |u| = S_m |sin(phi - beta)| / |sin(gamma - beta)|, pitches in the
    fault plane from the strike direction (here all measured from s toward the down-dip vector)."""
    rng = np.random.default_rng(1000 + trial)
    while True:  # draw until neither the slip nor the observation runs near the cutoff
        fdd, fdp = random_plane(rng, 10, 85)
        mdd, mdp = random_plane(rng, 0, 89)
        s, d, nf = basis(fdd, fdp)
        m = normal(mdd, mdp)
        c = np.cross(m, nf)
        c /= np.linalg.norm(c)
        beta = math.atan2(c @ d, c @ s)
        gamma = rng.uniform(0, 2 * math.pi)
        phi = rng.uniform(0, 2 * math.pi)
        if abs(math.sin(gamma - beta)) > 0.2 and abs(math.sin(phi - beta)) > 0.2:
            break
    net = rng.uniform(5, 500)
    u = net * (math.cos(gamma) * s + math.sin(gamma) * d)
    o = math.cos(phi) * s + math.sin(phi) * d
    S_m = measure(fdd, fdp, m, np.array([30.0, -20.0, 5.0]), u, o)
    xu = abs(S_m) * abs(math.sin(phi - beta)) / abs(math.sin(gamma - beta))
    assert xu == pytest.approx(net, rel=1e-9)  # the formula itself, on our forward geometry
    rake = math.degrees(math.atan2(-(u @ d), u @ s))  # up-dip positive
    # the observation line in the plane as trend/plunge (a downward axis; flip S with it)
    ov = o if o[2] <= 0 else -o
    sgn = 1.0 if o[2] <= 0 else -1.0
    tr = math.degrees(math.atan2(ov[0], ov[1])) % 360
    pl = math.degrees(math.asin(-ov[2]))
    r = ns.slip_from_separations(fdd, fdp, marker_ids=["m"], marker_dip_dir=[mdd], marker_dip=[mdp],
                                 observation=["line"], obs_trend=[tr], obs_plunge=[pl],
                                 separation_m=[sgn * S_m], sigma_m=[0.01], rake=[rake],
                                 rake_sigma=[0.001], draws=0)
    assert r.status in ("unique", "ill-conditioned")
    assert r.net_slip_m == pytest.approx(xu, rel=1e-6)


# --------------------------------------------------------------------------- forward models
def _two_marker_case(seed):
    rng = np.random.default_rng(seed)
    while True:
        fdd, fdp = float(rng.uniform(0, 360)), float(rng.uniform(20, 85))
        m1 = (float(rng.uniform(0, 360)), float(rng.uniform(0, 40)))   # a bed
        m2 = (float(rng.uniform(0, 360)), float(rng.uniform(60, 89)))  # a dyke
        _, _, nf = basis(fdd, fdp)
        c1 = np.cross(normal(*m1), nf)
        c2 = np.cross(normal(*m2), nf)
        c1, c2 = c1 / np.linalg.norm(c1), c2 / np.linalg.norm(c2)
        ang = math.degrees(math.acos(min(1.0, abs(c1 @ c2))))
        if ang > 30:
            break
    rake = float(rng.uniform(-180, 180))
    net = float(rng.uniform(20, 400))
    return fdd, fdp, m1, m2, rake, net


def _separations(fdd, fdp, m1, m2, u, p1, p2):
    s, d, _ = basis(fdd, fdp)
    up = np.array([0.0, 0.0, 1.0])
    rows = []
    for name, (mdd, mdp), p in (("bed", m1, p1), ("dyke", m2, p2)):
        mn = normal(mdd, mdp)
        for word, o in (("strike", s), ("dip", -d), ("vertical", up)):
            if abs(mn @ o) < 0.05:
                continue
            rows.append((name, mdd, mdp, word, measure(fdd, fdp, mn, p, u, o)))
    return rows


def _solve(fdd, fdp, rows, sigma=0.01, sm=0.01, sf=0.01, draws=0, seed=0, noise=None):
    return ns.slip_from_separations(
        fdd, fdp, marker_ids=[r[0] for r in rows], marker_dip_dir=[r[1] for r in rows],
        marker_dip=[r[2] for r in rows], observation=[r[3] for r in rows],
        separation_m=[r[4] for r in rows], sigma_m=[sigma] * len(rows), sigma_marker_deg=sm,
        sigma_fault_deg=sf, draws=draws, seed=seed)


@pytest.mark.parametrize("seed", range(12))
def test_forward_model_two_markers_recovered_exactly(seed):
    fdd, fdp, m1, m2, rake, net = _two_marker_case(seed)
    u = slip_vector(fdd, fdp, rake, net)
    rows = _separations(fdd, fdp, m1, m2, u, np.array([10.0, 20.0, -30.0]), np.array([-40.0, 5.0, 12.0]))
    r = _solve(fdd, fdp, rows)
    assert r.status in ("unique", "over-determined")
    assert r.n_markers == 2 and r.n_constraints == len(rows)
    assert np.allclose([r.slip_e, r.slip_n, r.slip_u], u, atol=1e-6 * net)
    assert r.net_slip_m == pytest.approx(net, rel=1e-9)
    d_rake = (r.rake - rake + 180) % 360 - 180
    assert abs(d_rake) < 1e-6
    if r.status == "over-determined":
        assert r.residual_m < 1e-6 * net


def test_forward_model_noisy_intervals_cover_the_truth():
    """Over 60 noisy realisations the 95 % interval of net slip and rake holds the truth about 95 %
    of the time (at least 85 %: the binomial 1st percentile for n = 60, p = 0.95 is about 0.87)."""
    hits_net = hits_rake = 0
    trials = 60
    for t in range(trials):
        fdd, fdp, m1, m2, rake, net = _two_marker_case(100 + t)
        u = slip_vector(fdd, fdp, rake, net)
        rng = np.random.default_rng(t)
        sig, sm, sf = 2.0, 1.0, 0.5
        rows = _separations(fdd, fdp, m1, m2, u, np.array([10.0, 20.0, -30.0]), np.array([-40.0, 5.0, 12.0]))
        # noisy observations: one attitude error per marker, the fault's too
        def jitter(dd, dp, sd):
            n = normal(dd, dp)
            t1 = np.cross(n, [0, 0, 1.0]) if abs(n[2]) < 0.9 else np.cross(n, [1.0, 0, 0])
            t1 /= np.linalg.norm(t1)
            t2 = np.cross(n, t1)
            g = rng.standard_normal(2) * math.radians(sd)
            v = n + g[0] * t1 + g[1] * t2
            v = v / np.linalg.norm(v) * (1 if v[2] >= 0 else -1)
            return math.degrees(math.atan2(v[0], v[1])) % 360, math.degrees(math.acos(min(1.0, v[2])))
        fn = jitter(fdd, fdp, sf)
        mj = {"bed": jitter(*m1, sm), "dyke": jitter(*m2, sm)}
        noisy = [(r[0], *mj[r[0]], r[3], r[4] + rng.standard_normal() * sig) for r in rows]
        res = _solve(fn[0], fn[1], noisy, sigma=sig, sm=sm, sf=sf, draws=300, seed=t)
        hits_net += res.net_slip_lo95 <= net <= res.net_slip_hi95
        lo, hi = res.rake_lo95, res.rake_hi95
        hits_rake += ((rake - lo) % 360) <= ((hi - lo) % 360)
    assert hits_net >= 0.85 * trials and hits_rake >= 0.85 * trials


def test_noisy_interval_is_not_trivially_wide():
    fdd, fdp, m1, m2, rake, net = _two_marker_case(7)
    u = slip_vector(fdd, fdp, rake, net)
    rows = _separations(fdd, fdp, m1, m2, u, np.array([10.0, 20.0, -30.0]), np.array([-40.0, 5.0, 12.0]))
    res = _solve(fdd, fdp, rows, sigma=1.0, sm=0.5, sf=0.5, draws=300)
    assert res.net_slip_hi95 - res.net_slip_lo95 < 0.5 * net
    assert res.net_slip_lo95 <= net <= res.net_slip_hi95


# --------------------------------------------------------------------------- status words
def test_nearly_parallel_cutoffs_are_ill_conditioned():
    # two beds 4 deg apart in attitude: their cutoffs on the fault are nearly parallel
    fdd, fdp = 90.0, 60.0
    u = slip_vector(fdd, fdp, -60.0, 100.0)
    s, d, _ = basis(fdd, fdp)
    rows = []
    for name, att in (("bed1", (0.0, 10.0)), ("bed2", (0.0, 14.0))):
        mn = normal(*att)
        rows.append((name, *att, "vertical", measure(fdd, fdp, mn, np.zeros(3), u, np.array([0, 0, 1.0]))))
    r = _solve(fdd, fdp, rows, draws=50)
    assert r.status == "ill-conditioned"
    assert 0 < r.cutoff_angle < ns.NETSLIP_RULES.min_cutoff_angle
    assert np.isfinite(r.min_slip_m) and "threshold" in r.note


def test_same_attitude_markers_are_under_determined():
    rows = [("bedA", 0.0, 10.0, "vertical", -50.0), ("bedB", 0.0, 10.0, "vertical", -50.0)]
    r = _solve(90.0, 60.0, rows)
    assert r.status == "under-determined" and math.isnan(r.net_slip_m)
    assert r.residual_m == pytest.approx(0.0, abs=1e-9)


def test_two_separations_of_one_marker_are_still_under_determined_but_checked():
    # strike and dip separation of one bed: both constrain the same component; their misfit shows
    fdd, fdp = 90.0, 60.0
    u = slip_vector(fdd, fdp, -30.0, 80.0)
    s, d, _ = basis(fdd, fdp)
    mn = normal(330.0, 20.0)
    rows = [("bed", 330.0, 20.0, "strike", measure(fdd, fdp, mn, np.zeros(3), u, s)),
            ("bed", 330.0, 20.0, "dip", measure(fdd, fdp, mn, np.zeros(3), u, -d) + 3.0)]
    r = _solve(fdd, fdp, rows, sigma=1.0)
    assert r.status == "under-determined" and r.n_markers == 1
    assert r.residual_m > 0.1 and np.isfinite(r.misfit_ratio)
    # the minimum slip is the distance between the two cutoff lines (here both rows are nearly
    # consistent, so about |u| times the sine of the slip's angle to the cutoff)
    c = np.cross(mn, basis(fdd, fdp)[2])
    c /= np.linalg.norm(c)
    perp = np.linalg.norm(u - (u @ c) * c)
    assert r.min_slip_m == pytest.approx(perp, rel=0.05)


def test_direction_only_is_under_determined():
    r = ns.slip_from_separations(90.0, 60.0, rake=[-90.0], rake_sigma=[5.0], draws=0)
    assert r.status == "under-determined" and math.isnan(r.net_slip_m) and math.isnan(r.min_slip_m)
    assert "no marker" in r.note


def test_one_marker_and_slip_direction_is_unique_and_flags_a_sense_conflict():
    fdd, fdp = 90.0, 60.0
    u = slip_vector(fdd, fdp, -70.0, 120.0)
    mn = normal(10.0, 15.0)
    S = measure(fdd, fdp, mn, np.zeros(3), u, np.array([0, 0, 1.0]))
    base = dict(marker_ids=["bed"], marker_dip_dir=[10.0], marker_dip=[15.0], observation=["vertical"],
                separation_m=[S], sigma_m=[0.01], rake_sigma=[0.001], draws=0)
    r = ns.slip_from_separations(fdd, fdp, rake=[-70.0], **base)
    assert r.status == "unique" and r.net_slip_m == pytest.approx(120.0, rel=1e-6)
    assert "conflict" not in r.note
    # the same axis with the other sense (a reverse reading of a normal fault's striae)
    r2 = ns.slip_from_separations(fdd, fdp, rake=[110.0], **base)
    assert r2.net_slip_m == pytest.approx(120.0, rel=1e-6) and "sense conflict" in r2.note


def test_observation_in_the_marker_plane_is_refused():
    # vertical separation of a vertical dyke is undefined
    r = _solve(90.0, 60.0, [("dyke", 0.0, 90.0, "vertical", 10.0)])
    assert r.n_constraints == 0 and r.status == "under-determined"
    assert "undefined" in r.note


# --------------------------------------------------------------------------- piercing points
def test_piercing_points_give_the_slip_directly():
    fdd, fdp = 310.0, 70.0
    u = slip_vector(fdd, fdp, 142.0, 140.0)
    _, _, nf = basis(fdd, fdp)
    fw = np.array([501500.0, 5094900.0, 1200.0])
    hw = fw + u + 0.8 * nf  # 0.8 m off the plane (a mapping error)
    got, mis, ang = ns.slip_from_piercing_points(fdd, fdp, fw, hw)
    assert np.allclose(got, u, atol=1e-9) and mis == pytest.approx(0.8)
    assert ang == pytest.approx(math.degrees(math.asin(0.8 / np.linalg.norm(u + 0.8 * nf))))
    r = ns.slip_from_separations(fdd, fdp, fw_points=[fw], hw_points=[hw], piercing_sigma_m=[1.0], draws=100)
    assert r.status == "unique" and r.net_slip_m == pytest.approx(140.0, abs=1e-6)
    assert r.net_slip_lo95 < 140.0 < r.net_slip_hi95
    assert "+0.80 m off the fault plane" in r.note


# --------------------------------------------------------------------------- the pieces
def test_solve_rows_batch_agrees_with_each_draw_alone():
    a = RNG.standard_normal((5, 4, 2))
    b = RNG.standard_normal((5, 4))
    sg = RNG.uniform(0.5, 2.0, (5, 4))
    x, _ = ns.solve_rows(a, b, sg)
    for k in range(5):
        w = 1 / sg[k]
        ref = np.linalg.lstsq(a[k] * w[:, None], b[k] * w, rcond=None)[0]  # explicit weighted LS
        assert np.allclose(x[k], ref, atol=1e-10)


def test_parallel_plane_fit_matches_an_explicit_svd():
    m_true = normal(352.0, 11.0)
    pts, hw = [], []
    for side, off in ((True, -120.0), (False, 0.0)):
        q = RNG.uniform(-500, 500, (40, 3))
        q -= np.outer(q @ m_true - off, m_true)
        pts.append(q + RNG.standard_normal((40, 3)) * 0.5)
        hw.append(np.full(40, side))
    P, H = np.vstack(pts), np.concatenate(hw)
    m, chw, cfw, dist, _ = ns.fit_parallel_planes(P, H)
    centred = np.vstack([P[H] - P[H].mean(0), P[~H] - P[~H].mean(0)])
    ref = np.linalg.svd(centred)[2][-1]
    assert abs(abs(ref @ m) - 1.0) < 1e-12
    assert float(m @ (chw - cfw)) == pytest.approx(-120.0, abs=1.0)
    assert np.sqrt(np.mean(dist ** 2)) == pytest.approx(0.5, rel=0.25)


def test_observation_vectors_by_hand():
    s, d, nf = basis(120.0, 30.0)
    o = ns.observation_vectors(np.array(["strike", "dip", "vertical", "horizontal", "section", "line"], dtype=object),
                               np.array([0, 0, 0, 0, 120.0, 45.0]), np.array([0, 0, 0, 0, 0, 30.0]), nf)
    assert np.allclose(o[0], s) and np.allclose(o[1], -d) and np.allclose(o[2], [0, 0, 1])
    assert np.allclose(o[3], [math.sin(math.radians(120)), math.cos(math.radians(120)), 0])
    assert np.allclose(o[4], -d)  # a dip section: the fault's line in it is the dip line, upward
    t, p = math.radians(45.0), math.radians(30.0)
    assert np.allclose(o[5], [math.sin(t) * math.cos(p), math.cos(t) * math.cos(p), -math.sin(p)])


def test_cutoff_line_by_hand():
    # a horizontal bed on a N-S fault dipping east: the cutoff is the strike line (rake 0 or 180)
    tr, pl, rk = ns.cutoff_line(90.0, 60.0, [0.0, 0.0, 1.0])
    assert pl == pytest.approx(0.0, abs=1e-9) and abs(abs(rk) - 90) == pytest.approx(90.0, abs=1e-9)
    # a vertical E-W dyke on the same fault: the cutoff is the dip line (plunge 60 toward 090)
    tr, pl, rk = ns.cutoff_line(90.0, 60.0, [0.0, 1.0, 0.0])
    assert tr == pytest.approx(90.0) and pl == pytest.approx(60.0) and rk == pytest.approx(-90.0)


# --------------------------------------------------------------------------- bad input
@pytest.mark.parametrize("word", ["sideways", "line 10/100", "section", ""])
def test_unknown_observation_words_are_refused(word):
    with pytest.raises(InputError, match="observation"):
        ns.parse_observation(word)


def test_core_bad_values():
    with pytest.raises(AngleError, match=r"dip must be in \[0, 90\]"):
        ns.slip_from_separations(90.0, 97.0, rake=[0.0], rake_sigma=[1.0])
    with pytest.raises(AngleError, match="dip must be in"):
        _solve(90.0, 60.0, [("bed", 0.0, 95.0, "vertical", 1.0)])
    with pytest.raises(InputError, match="sigma must be > 0"):
        _solve(90.0, 60.0, [("bed", 0.0, 10.0, "vertical", 1.0)], sigma=0.0)
    with pytest.raises(InputError, match="two attitudes"):
        _solve(90.0, 60.0, [("bed", 0.0, 10.0, "vertical", 1.0), ("bed", 0.0, 12.0, "strike", 1.0)])


# --------------------------------------------------------------------------- the command
def _csv(path, rows, header):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join("" if v is None else str(v) for v in r) + "\n")
    return str(path)


HEADER = ["fault_id", "marker_id", "marker_dip_dir", "marker_dip", "fault_dip_dir", "fault_dip",
          "observation", "separation_m", "sigma_m", "rake", "rake_sigma"]


def _demo_like_rows():
    fdd, fdp = 98.0, 60.0
    u = slip_vector(fdd, fdp, -81.0, 160.0)
    s, d, _ = basis(fdd, fdp)
    rows = []
    for name, att, p in (("bed_A", (352.0, 11.0), np.array([0, 0, 50.0])), ("dyke_1", (188.0, 80.0), np.array([0, 150.0, 0]))):
        mn = normal(*att)
        rows.append(["F1", name, att[0], att[1], fdd, fdp, "strike", round(measure(fdd, fdp, mn, p, u, s), 4), 1.0, None, None])
    rows.append(["F9", "bed_A", 352.0, 11.0, 90.0, 30.0, "vertical", -10.0, 0.5, None, None])
    rows.append(["F9", None, None, None, None, None, "rake", None, None, -90.0, 2.0])
    return rows, u


def test_net_slip_command_csv_end_to_end(cli, tmp_path):
    rows, u = _demo_like_rows()
    table = _csv(tmp_path / "seps.csv", rows, HEADER)
    out = tmp_path / "out.gpkg"
    code, stdout, stderr = cli("net-slip", "--table", table, "--out", out, "--draws", "100", "--json")
    assert code == 0, stderr
    summary = json.loads(stdout)
    assert summary["faults"] == 2 and summary["status"]["unique"] == 2
    df = read_gpkg(out, "net_slip").set_index("fault_id")
    assert df.loc["F1", "net_slip_m"] == pytest.approx(160.0, abs=0.01)
    assert df.loc["F1", "rake"] == pytest.approx(-81.0, abs=0.01)
    assert df.loc["F1", "net_slip_lo95"] < 160.0 < df.loc["F1", "net_slip_hi95"]
    # F9: the dipping bed's vertical separation with a pure dip-slip direction
    s, d, nf = basis(90.0, 30.0)
    m = normal(352.0, 11.0)
    expect = -10.0 * (m @ [0, 0, 1.0]) / (m @ -d)  # m.u = S m.o with u = y e (pure dip slip)
    assert df.loc["F9", "dip_slip_m"] == pytest.approx(expect, rel=0.02)
    assert df.loc["F9", "sense"] == "normal"
    for f in ("strike_slip_m", "throw_m", "heave_m", "horizontal_slip_m", "slip_trend", "slip_plunge",
              "cutoff_angle", "n_markers", "n_constraints", "status", "note", "min_slip_m"):
        assert f in df.columns
    prov = read_gpkg(out, "slipsense_provenance")
    rec = json.loads(prov.loc[prov.layer == "net_slip", "record"].iloc[0])
    assert rec["command"] == "net-slip" and "qualified professional" in rec["caution"]


def test_net_slip_command_point_layer_gives_points(cli, tmp_path):
    rows, _ = _demo_like_rows()
    data = {h: [r[i] for r in rows] for i, h in enumerate(HEADER)}
    pts = [(503300.0 + 10 * i, 5095000.0) for i in range(len(rows))]
    src = write_points(tmp_path / "seps.gpkg", "seps", pts, data)
    out = tmp_path / "out.gpkg"
    code, _, stderr = cli("net-slip", "--table", src, "--layer", "seps", "--out", out, "--draws", "0")
    assert code == 0, stderr
    df = read_gpkg(out, "net_slip")
    assert df.crs.to_epsg() == 32633
    assert df.geometry.iloc[list(df.fault_id).index("F1")].x == pytest.approx(503300.0)


def test_net_slip_command_under_determined_row_is_reported_as_such(cli, tmp_path):
    table = _csv(tmp_path / "one.csv", [["F1", "bed", 0, 0, 90, 30, "vertical", -10, 0.5, None, None]], HEADER)
    out = tmp_path / "out.gpkg"
    code, _, stderr = cli("net-slip", "--table", table, "--out", out, "--draws", "50")
    assert code == 0 and "under-determined" in stderr
    row = read_gpkg(out, "net_slip").iloc[0]
    assert row.status == "under-determined"
    assert row.net_slip_m is None or np.isnan(row.net_slip_m)
    assert row.dip_slip_only_m == pytest.approx(-20.0)


@pytest.mark.parametrize("bad, message", [
    ({"marker_dip": 97}, r"feature 1: field 'marker_dip' = 97.0 is outside \[0, 90\] degrees"),
    ({"fault_dip": 91}, r"feature 1: field 'fault_dip' = 91.0 is outside \[0, 90\] degrees"),
    ({"observation": "sideways"}, r"feature 1: field 'observation': unknown observation 'sideways'"),
    ({"separation_m": None}, r"feature 1: field 'separation_m' is empty"),
    ({"sigma_m": -1}, r"field 'sigma_m' = -1.0 must be > 0"),
])
def test_net_slip_command_bad_rows_name_feature_and_field(cli, tmp_path, bad, message):
    rows, _ = _demo_like_rows()
    row = dict(zip(HEADER, rows[0]))
    row.update(bad)
    table = _csv(tmp_path / "bad.csv", [[row[h] for h in HEADER]], HEADER)
    code, _, stderr = cli("net-slip", "--table", table, "--out", tmp_path / "o.gpkg")
    assert code == 2
    assert len(stderr.strip().splitlines()) == 1 and "Traceback" not in stderr
    import re

    assert re.search(message, stderr), stderr


def test_net_slip_command_missing_field(cli, tmp_path):
    rows, _ = _demo_like_rows()
    head = [h for h in HEADER if h != "separation_m"]
    table = _csv(tmp_path / "nosep.csv", [[v for h, v in zip(HEADER, rows[0]) if h != "separation_m"]], head)
    code, _, stderr = cli("net-slip", "--table", table, "--out", tmp_path / "o.gpkg")
    assert code == 2 and "has no field 'separation_m'" in stderr
    head = [h for h in HEADER if h != "observation"]
    table = _csv(tmp_path / "noobs.csv", [[v for h, v in zip(HEADER, rows[0]) if h != "observation"]], head)
    code, _, stderr = cli("net-slip", "--table", table, "--out", tmp_path / "o.gpkg")
    assert code == 2 and "has no field 'observation'" in stderr


def test_net_slip_command_refuses_to_overwrite(cli, tmp_path):
    rows, _ = _demo_like_rows()
    table = _csv(tmp_path / "seps.csv", rows, HEADER)
    out = tmp_path / "out.gpkg"
    assert cli("net-slip", "--table", table, "--out", out, "--draws", "0")[0] == 0
    code, _, err = cli("net-slip", "--table", table, "--out", out, "--draws", "0")
    assert code == 2 and "--overwrite" in err
    assert cli("net-slip", "--table", table, "--out", out, "--draws", "0", "--overwrite")[0] == 0


def test_help_carries_the_caution(cli):
    code, out, _ = cli("net-slip", "--help")
    assert code == 0 and "qualified" in out
    code, out, _ = cli("map-slip", "--help")
    assert code == 0 and "qualified" in out
