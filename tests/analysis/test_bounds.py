"""Tests of the Chu bound and the smallest enclosing sphere (ringprint.analysis.bounds)."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.constants import c as C0, epsilon_0, mu_0

from ringprint.analysis.bounds import chu_q, enclosing_sphere
from ringprint.errors import RingprintError


def f_for_ka(ka, radius=1.0):
    return ka * C0 / (2 * np.pi * radius)


# -- Chu bound ------------------------------------------------------------------

def test_chu_q_at_ka_one_is_two():
    """Q = 1/(ka)^3 + 1/(ka) = 2 at ka = 1 (McLean 1996, eq. 15)."""
    assert chu_q(f_for_ka(1.0), 1.0) == pytest.approx(2.0, rel=1e-14)


def test_chu_q_from_chus_equivalent_circuit():
    """Chu (1948) models the TM1 spherical wave outside radius a as a series capacitor
    C = eps0 a feeding a shunt inductor L = mu0 a in parallel with the free-space
    resistance eta0. Solving that circuit with complex phasors gives the stored electric
    energy W_e (in C) and the radiated power P; Q = 2 omega W_e / P must equal the
    closed form (McLean 1996 shows the exact field result is the same)."""
    eta0 = np.sqrt(mu_0 / epsilon_0)
    for ka in (0.05, 0.2, 0.5, 1.0, 2.0, 5.0):
        a = 0.01
        f = f_for_ka(ka, a)
        w = 2 * np.pi * f
        C, L = epsilon_0 * a, mu_0 * a
        current = 1.0                                  # through the series capacitor
        z_shunt = 1 / (1 / (1j * w * L) + 1 / eta0)
        v = current * z_shunt
        w_e = 0.25 * C * abs(current / (1j * w * C)) ** 2
        w_m = 0.25 * L * abs(v / (1j * w * L)) ** 2
        power = 0.5 * abs(v) ** 2 / eta0
        q_circuit = 2 * w * max(w_e, w_m) / power
        assert chu_q(f, a) == pytest.approx(q_circuit, rel=1e-8), ka


def test_wheeler_small_antenna_limit():
    """For ka << 1, Q ~ 1/(ka)^3 (Wheeler 1947, radiansphere); the relative excess is (ka)^2."""
    for ka in (1e-3, 1e-2, 0.05):
        q = chu_q(f_for_ka(ka), 1.0)
        assert q * ka**3 == pytest.approx(1.0 + ka**2, rel=1e-12)
        assert abs(q * ka**3 - 1.0) < 1.01 * ka**2


def test_chu_q_large_ka_and_broadcasting():
    """For ka >> 1 the bound tends to 1/(ka), with a relative excess 1/(ka)^2."""
    assert chu_q(f_for_ka(100.0), 1.0) * 100.0 == pytest.approx(1.0 + 1e-4, rel=1e-12)
    q = chu_q(np.array([[1e9], [2e9]]), np.array([0.01, 0.02, 0.03]))
    assert q.shape == (2, 3) and np.all(np.diff(q, axis=1) < 0)   # bigger part, lower bound
    assert isinstance(chu_q(1e9, 0.01), float)


@pytest.mark.parametrize("f, a", [(0.0, 0.01), (1e9, 0.0), (1e9, -1.0), (np.nan, 0.01)])
def test_chu_q_rejects_bad_input(f, a):
    with pytest.raises(RingprintError, match="chu_q"):
        chu_q(f, a)


# -- enclosing sphere -------------------------------------------------------------

def ball_through(points):
    """Smallest sphere with all ``points`` on its surface: centre in their affine hull,
    c = p0 + M lam with 2 M^T M lam = diag(M^T M) (M = [p_i - p0]); None if degenerate."""
    p0, rest = points[0], points[1:]
    if len(rest) == 0:
        return p0, 0.0
    m = (rest - p0).T
    gram = m.T @ m
    if np.linalg.matrix_rank(gram, tol=1e-9 * np.trace(gram)) < len(rest):
        return None
    lam = np.linalg.solve(2 * gram, np.diag(gram))
    centre = p0 + m @ lam
    return centre, float(np.linalg.norm(centre - p0))


def brute_force_sphere(points):
    """The smallest sphere through 1-4 of the points that contains them all."""
    best = None
    for k in range(1, 5):
        for subset in itertools.combinations(range(len(points)), k):
            ball = ball_through(points[list(subset)])
            if ball is None:
                continue
            centre, r = ball
            if np.all(np.linalg.norm(points - centre, axis=1) <= r * (1 + 1e-9) + 1e-9):
                if best is None or r < best[1]:
                    best = (centre, r)
    return best


def assert_encloses(points, centre, radius, tol=1e-9):
    d = np.linalg.norm(points - centre, axis=1)
    assert np.all(d <= radius * (1 + tol) + tol)


@settings(max_examples=120, deadline=None)
@given(st.lists(st.tuples(*[st.integers(-6, 6)] * 3), min_size=1, max_size=9))
def test_matches_brute_force_on_small_integer_sets(coords):
    """Small integer sets are full of ties, collinear and coplanar points."""
    pts = np.array(coords, dtype=float)
    centre, radius = enclosing_sphere(pts)
    _, r_ref = brute_force_sphere(np.unique(pts, axis=0))
    assert radius == pytest.approx(r_ref, rel=1e-9, abs=1e-12)
    assert_encloses(pts, centre, radius)


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(2, 12))
def test_matches_brute_force_on_random_points(seed, n):
    pts = np.random.default_rng(seed).normal(size=(n, 3)) * [3.0, 1.0, 0.2]
    centre, radius = enclosing_sphere(pts)
    c_ref, r_ref = brute_force_sphere(pts)
    assert radius == pytest.approx(r_ref, rel=1e-9)
    np.testing.assert_allclose(centre, c_ref, atol=1e-7 * r_ref)


def test_known_configurations():
    # regular tetrahedron of edge 2 sqrt(2): circumradius = edge sqrt(6)/4 = sqrt(3)
    tet = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], dtype=float)
    c, r = enclosing_sphere(tet + [5.0, -2.0, 1.0])
    assert r == pytest.approx(np.sqrt(3), rel=1e-14)
    np.testing.assert_allclose(c, [5.0, -2.0, 1.0], atol=1e-14)
    # cube corners: half the space diagonal, plus interior points that change nothing
    cube = np.array(list(itertools.product([0.0, 2.0], repeat=3)))
    inner = np.random.default_rng(0).uniform(0.2, 1.8, size=(500, 3))
    c, r = enclosing_sphere(np.vstack([inner, cube]))
    assert r == pytest.approx(np.sqrt(3), rel=1e-14) and np.allclose(c, 1.0)
    # two points; one point; an obtuse triangle (the long side is the diameter)
    assert enclosing_sphere([[0, 0, 0], [0, 0, 4]])[1] == pytest.approx(2.0)
    assert enclosing_sphere([[1, 2, 3]])[1] == 0.0
    c, r = enclosing_sphere([[-1, 0, 0], [1, 0, 0], [0, 0.1, 0]])
    assert r == pytest.approx(1.0) and np.allclose(c, 0.0)


def test_points_on_a_sphere_many_of_them():
    """Random points on a sphere including the six axis points: the sphere itself is the
    answer. 20 000 points take the convex-hull path."""
    rng = np.random.default_rng(3)
    d = rng.normal(size=(20000, 3))
    d /= np.linalg.norm(d, axis=1, keepdims=True)
    d = np.vstack([d * rng.uniform(0.0, 1.0, size=(20000, 1)), np.eye(3), -np.eye(3)])
    pts = 0.03 * d + [0.1, 0.2, -0.3]
    c, r = enclosing_sphere(pts)
    assert r == pytest.approx(0.03, rel=1e-12)
    np.testing.assert_allclose(c, [0.1, 0.2, -0.3], atol=1e-13)


def test_flat_point_set_takes_the_fallback():
    """A flat board outline: Qhull refuses a flat set, all points go to Welzl."""
    rng = np.random.default_rng(4)
    angles = rng.uniform(0, 2 * np.pi, 3000)
    radii = rng.uniform(0, 1, 3000)
    pts = np.c_[radii * np.cos(angles), radii * np.sin(angles), np.zeros(3000)]
    tri = np.array([[2.0, 0, 0], [2 * np.cos(2.1), 2 * np.sin(2.1), 0], [2 * np.cos(4.2), 2 * np.sin(4.2), 0]])
    c, r = enclosing_sphere(np.vstack([pts, tri]))
    assert r == pytest.approx(2.0, rel=1e-12) and np.allclose(c, 0.0, atol=1e-12)


def test_result_does_not_depend_on_the_seed():
    pts = np.random.default_rng(5).uniform(-1, 1, size=(300, 3))
    r = [enclosing_sphere(pts, seed=s)[1] for s in range(5)]
    assert max(r) - min(r) < 1e-12


@pytest.mark.parametrize("points", [np.zeros((0, 3)), np.zeros((4, 2)), [[0, 0, np.nan]]])
def test_enclosing_sphere_rejects_bad_input(points):
    with pytest.raises(RingprintError, match="enclosing_sphere"):
        enclosing_sphere(points)
