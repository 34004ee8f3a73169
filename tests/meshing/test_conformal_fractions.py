"""Exact edge-line and face fractions (ringprint.meshing.conformal_fractions)."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import conformal_fractions, edge_lines, primitives

# a graded grid: the fractions must be exact on any spacing
X = np.linspace(-0.5, 1.5, 21)
Y = np.cumsum(np.r_[-0.3, np.full(12, 0.1), np.full(5, 0.13)])
Z = np.linspace(-0.2, 1.3, 16)
LO, HI = np.array([0.1, 0.2, 0.3]), np.array([0.75, 0.85, 0.9])


def _seg(lo, hi, a):
    """Exact fraction of each cell of node vector ``a`` inside [lo, hi]."""
    return np.clip(np.minimum(hi, a[1:]) - np.maximum(lo, a[:-1]), 0, None) / np.diff(a)


def _on(lo, hi, a):
    return ((a >= lo) & (a <= hi)).astype(float)


def _full(box, shape):
    out = np.zeros(shape)
    out[box.slices] = box.data
    return out


def test_box_fractions_are_exact_on_a_graded_grid():
    """A box's inside fractions are products of 1-D overlaps (exact up to rounding)."""
    box = primitives.box(LO, HI).with_(kind="solid")
    lines, faces = conformal_fractions(box, X, Y, Z)
    axes = (X, Y, Z)
    for a, comp in enumerate("xyz"):
        line_ref = np.ones(1)
        face_ref = np.ones(1)
        for d in range(3):
            lf = _seg(LO[d], HI[d], axes[d]) if d == a else _on(LO[d], HI[d], axes[d])
            ff = _on(LO[d], HI[d], axes[d]) if d == a else _seg(LO[d], HI[d], axes[d])
            line_ref = np.multiply.outer(line_ref, lf) if d else lf
            face_ref = np.multiply.outer(face_ref, ff) if d else ff
        np.testing.assert_allclose(_full(lines[comp], line_ref.shape), line_ref, atol=1e-12)
        np.testing.assert_allclose(_full(faces[comp], face_ref.shape), face_ref, atol=1e-6)
    np.testing.assert_array_equal(edge_lines(box, X, Y, Z)["y"].data, lines["y"].data)


def test_sphere_cross_sections_match_the_circle_area():
    """The Hz faces of a node plane z0 cover pi (R^2 - (z0 - c)^2) of a sphere's section
    (midpoint rule over 8 samples per cell; the 96-segment mesh is 0.15 % small)."""
    ball = primitives.sphere(0.5, (0.5, 0.5, 0.5), n=96).with_(kind="solid")
    _, faces = conformal_fractions(ball, X, Y, Z, samples=8)
    f = _full(faces["z"], (X.size - 1, Y.size - 1, Z.size))
    area = np.einsum("ijk,i,j->k", f, np.diff(X), np.diff(Y))
    exact = np.pi * np.clip(0.25 - (Z - 0.5) ** 2, 0.0, None)
    inside = exact > 0.1
    np.testing.assert_allclose(area[inside], exact[inside], rtol=4e-3)
    assert np.all(area[exact == 0] == 0)


def test_refuses_sheets_and_bad_sample_counts():
    plate = primitives.plate((0, 0), (1, 1), 0.5)
    with pytest.raises(RingprintError, match="closed solid"):
        conformal_fractions(plate.with_(kind="sheet"), X, Y, Z)
    box = primitives.box(LO, HI).with_(kind="solid")
    with pytest.raises(RingprintError, match="samples"):
        conformal_fractions(box, X, Y, Z, samples=0)
