"""Units and transforms (property tests: volume invariant under rotation, scales as
s^3, a mirror keeps it positive; divergence-theorem volume is the reference)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ringprint.errors import RingprintError
from ringprint.meshing import prepare_surface, rotation_matrix, transform_surface, unit_scale
from ringprint.meshing.primitives import torus

PART = torus(3.0, 1.0, centre=(1.0, -2.0, 0.5), n_major=24, n_minor=12)

angles = st.floats(-360, 360, allow_nan=False)
axis = st.one_of(st.sampled_from(["x", "y", "z"]),
                 st.tuples(*[st.floats(-1, 1, allow_nan=False)] * 3).filter(lambda v: np.linalg.norm(v) > 0.1))


@settings(max_examples=40, deadline=None)
@given(axis, angles, st.floats(0.1, 10), st.sampled_from([None, "x", "y", "z"]),
       st.sampled_from(["m", "mm", "um", "in", "mil"]))
def test_volume_under_transforms(ax, deg, s, mirror, unit):
    out = prepare_surface(transform_surface(PART, unit=unit, scale=s, mirror=mirror, rotate=(ax, deg),
                                            translate=(0.1, 0.2, 0.3)))
    expected = PART.volume * (s * unit_scale(unit)) ** 3
    assert out.volume > 0
    assert out.volume == pytest.approx(expected, rel=1e-9)
    assert not any("re-wound" in n for n in out.notes)  # a mirror re-winds every face itself


def test_units_exact():
    """Inch = 25.4 mm exactly, mil = 1/1000 inch (NIST SP 811, appendix B)."""
    assert unit_scale("in") == 0.0254 and unit_scale("mil") == pytest.approx(25.4e-6)
    assert unit_scale("MM") == 1e-3
    with pytest.raises(RingprintError, match="unknown length unit"):
        unit_scale("cubit")


def test_rotation_about_z_and_order():
    r = rotation_matrix("z", 90)
    assert r @ [1, 0, 0] == pytest.approx([0, 1, 0])
    s = transform_surface(PART.with_(vertices=np.array([[1.0, 0, 0]] * 3 + list(PART.vertices[3:]))),
                          scale=2, rotate=[("z", 90), ("x", 90)], translate=(0, 0, 1))
    assert s.vertices[0] == pytest.approx([0, 0, 3])  # scale, then z, then x, then shift


@pytest.mark.parametrize("kw,match", [({"mirror": "w"}, "mirror"), ({"rotate": ("q", 3)}, "axis"),
                                      ({"rotate": ((0, 0, 0), 3)}, "axis"), ({"scale": 0}, "scale"),
                                      ({"translate": (1, 2)}, "translate")])
def test_bad_transforms(kw, match):
    with pytest.raises(RingprintError, match=match):
        transform_surface(PART, **kw)
