"""Slater's wall sensitivity on the solver's TE101 field of a closed PEC box, against Pozar.

Reference: Pozar, D. M., *Microwave Engineering*, 4th ed., Wiley, 2012, eq. 6.40 (the
rectangular cavity): ``f101 = (c/2) sqrt(1/a^2 + 1/d^2)``, whose exact derivatives are
``df/da = -c^2 / (4 f a^3)``, ``df/dd = -c^2 / (4 f d^3)`` and ``df/db = 0``. A wall
moved into the box by ``h`` (the metal's outward offset) shortens that side by ``h``,
so each wall's offset sensitivity must be ``-df/d(side)``; Slater's theorem (Pozar
sec. 6.8) gives it from the field as ``f Int(mu0 |H_t|^2 - eps0 |E_n|^2) dA / (4W)``
(:mod:`ringprint.analysis.sensitivity`). On the y walls the two terms cancel exactly
(E_y is normal there), which checks the electric term and its sign.

Scale invariance (Maxwell's equations; ``f`` is homogeneous of degree -1 in
``(a, b, d)``, Euler's theorem): the sum over all walls of the scale terms is ``-f``.

The field is the solver's own (``_box_cavity``: 20 x 10 x 30 mm, 0.5 mm cells, the
fixture the conductor-Q check uses). The stored energy is the fitted amplitude's
``W = eps0 |E0|^2 a b d / 8`` (Pozar sec. 6.3), as in test_conductor_q: the lattice's
own 1 J misses the share of the energy on the wall nodes (O(cell / side), 5-8 %
here; with it the terms below come out 7.5 % larger). Tolerance 1 %: the grid's
dispersion (under 0.5 % in f) and the O((k h)^2) four-face mean of node H, as for
the conductor Q (measured there +0.22 %). Measured: the x and z wall offsets -0.05 to
-0.20 % from the closed form, the y walls 0.26 % of the x-wall term, the scale sum
-0.27 % from -f.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import c as C0, epsilon_0

from ringprint.analysis.sensitivity import Boundary, part_sensitivities
from ringprint.meshing import primitives

try:
    from . import _box_cavity
except ImportError:
    import _box_cavity

A, B, D = 0.020, 0.010, 0.030
CELL = 0.5e-3


@pytest.fixture(scope="module")
def te101():
    fs = _box_cavity.te101_fieldset(A, B, D, CELL)
    mf = fs.modes[0]
    X, _, Z = np.meshgrid(fs.x, fs.y, fs.z, indexing="ij")
    shape = np.where(fs.pec, 0.0, np.sin(np.pi * X / A) * np.sin(np.pi * Z / D))
    e0 = np.vdot(shape, mf.e[1]) / np.vdot(shape, shape)
    return fs, epsilon_0 * abs(e0) ** 2 * A * B * D / 8


def _walls():
    """The six walls of the box, each a conductor Boundary with its normal into the box."""
    box = primitives.box((0, 0, 0), (A, B, D))
    tri = box.vertices[box.faces][:, ::-1]
    normal = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    out = {}
    for axis, name in enumerate("xyz"):
        for sign, side in ((1, "low"), (-1, "high")):
            sel = normal[:, axis] * sign > 0
            out[f"{name} {side}"] = Boundary(f"{name} {side}", tri[sel], False, True)
    return out


def test_wall_offsets_match_the_closed_form(te101):
    fs, w = te101
    f = fs.modes[0].frequency_hz
    sens = {k: part_sensitivities(fs, b, energies=[w])[0] for k, b in _walls().items()}
    expected = {"x": C0 ** 2 / (4 * f * A ** 3), "y": 0.0, "z": C0 ** 2 / (4 * f * D ** 3)}
    for name, s in sens.items():
        assert s["surface_covered"] == 1.0
        want = expected[name[0]]
        if want:
            assert s["offset_hz_per_m"] == pytest.approx(want, rel=0.01), (name, s, want)
        else:   # measured 0.26 % of the x-wall term
            assert abs(s["offset_hz_per_m"]) < 0.01 * expected["x"], (name, s)
    # a move of a wall along its own normal is its offset; the other components vanish
    lo = sens["x low"]
    assert lo["move_hz_per_m"][0] == pytest.approx(lo["offset_hz_per_m"], rel=1e-9)
    assert abs(lo["move_hz_per_m"][1]) < 1e-9 * abs(lo["offset_hz_per_m"])


def test_scale_terms_add_up_to_minus_f(te101):
    """Scaling the box by 1 + s about any point scales f by 1/(1 + s) (scale invariance)."""
    fs, w = te101
    f = fs.modes[0].frequency_hz
    total = 0.0
    for b in _walls().values():
        s = part_sensitivities(fs, b, energies=[w])[0]
        total += s["scale_hz"] + float(np.dot(s["centre_m"], s["move_hz_per_m"]))
    assert total == pytest.approx(-f, rel=0.01)
    assert math.isfinite(total)


def test_dielectric_film_normal_to_e_gives_the_d_n_term(te101):
    """A dielectric film (eps_r 4) of vanishing thickness on the y = 0 wall, where E_y is
    normal to it: growing it by dt shifts f by the thin-slab perturbation with the
    quasi-static field inside a slab normal to E, ``E_in = E0 / eps_r`` (D_n continuous;
    Harrington 1961, sec. 7-2, with that internal field):
    ``df/f = -(eps_r - 1)/eps_r eps0 Int |E_y|^2 dA dt / (4W)``. With Pozar's TE101 field
    (``Int |E_y|^2 dA = |E0|^2 a d / 4`` on the wall, ``W = eps0 |E0|^2 a b d / 8``) that is
    ``df/dt = -f (1 - 1/eps_r) / (2 b)``. In ringprint it is the ``Delta(1/eps) |D_n|^2``
    term of Johnson et al. (2002) on the film's top face (the face on the wall has no
    air beside it and adds nothing). Measured: -0.10 %."""
    fs, w = te101
    f = fs.modes[0].frequency_hz
    eps_r, t = 4.0, 1e-6
    film = primitives.box((0, 0, 0), (A, t, D))
    s = part_sensitivities(fs, Boundary("film", film.vertices[film.faces], False, False, eps_r),
                           energies=[w])[0]
    assert s["offset_hz_per_m"] == pytest.approx(-f * (1 - 1 / eps_r) / (2 * B), rel=0.01)
    assert s["eps_r_hz_per_unit"] is None and s["nodes_inside"] == 0
