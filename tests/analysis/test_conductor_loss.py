"""Tests of the conductor-loss perturbation (ringprint.analysis.conductor_loss).

References: Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill,
1961, ch. 2 (chapter from memory; surface impedance, ``Rs = sqrt(omega mu / (2 sigma)) = 1 / (sigma
delta)``); Pozar, D. M., *Microwave Engineering*, 4th ed., Wiley, 2012, sec. 6.1 (the
power lost in a wall, ``P = Rs/2 Int |H_t|^2 dS``, and ``Q = omega W / P``; losses add
as ``1/Q``). Fields here are constructed so the surface integral is known exactly.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given, strategies as st
from scipy.constants import mu_0

from ringprint.analysis import conductor_loss as cl
from ringprint.analysis.bands import Band
from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.analysis.materials import get_material, skin_depth, surface_resistance
from ringprint.analysis.modes import judge_modes
from ringprint.analysis.results import csv_rows
from ringprint.analysis.summary_table import format_summary_table
from ringprint.analysis.report import build_report_html
from ringprint.errors import RingprintError
from ringprint.meshing import primitives

H = 1e-3                     # lattice step (m)
N = 21                       # nodes per axis
F = 2.0e9                    # mode frequency (Hz)
SIGMA = 5.8e7


def _lattice(h_field, pec=None, parts=None, conductors=()):
    """A FieldSet on an N^3 lattice of step H holding one mode with the given H (and no E)."""
    x = np.arange(N) * H
    shape = (N, N, N)
    h = np.asarray(h_field, complex)
    h = np.broadcast_to(h.reshape(3, 1, 1, 1) if h.ndim == 1 else h, (3,) + shape).copy()
    pec = np.zeros(shape, bool) if pec is None else pec
    fs = FieldSet(x, x.copy(), x.copy(), eps_r=np.ones(shape, np.float32),
                  sigma=np.zeros(shape, np.float32), pec=pec, parts=parts or {},
                  conductors=tuple(conductors))
    fs.modes.append(ModeField(1, F, 50.0, np.zeros((3,) + shape, complex), h))
    return fs


def _square(z, lo=5 * H, hi=15 * H, up=True):
    """Two triangles covering [lo, hi]^2 at height z, normal +z (up) or -z."""
    a, b, c, d = [lo, lo, z], [hi, lo, z], [hi, hi, z], [lo, hi, z]
    tris = np.array([[a, b, c], [a, c, d]], float)
    return tris if up else tris[:, ::-1]


def test_surface_resistance_is_one_over_sigma_delta():
    """Rs = sqrt(omega mu / (2 sigma)) = 1 / (sigma delta) (Harrington 1961, ch. 2, from
    memory); copper (5.813e7 S/m) at 10 GHz: Rs = 0.026 ohm, delta = 0.66 um (Pozar 2012,
    sec. 1.7, values from memory; recomputed here from the closed form)."""
    f = np.array([1e8, 1e9, 1e10])
    rs = surface_resistance(f, 5.813e7)
    np.testing.assert_allclose(rs * 5.813e7 * skin_depth(f, 5.813e7), 1.0, rtol=1e-14)
    np.testing.assert_allclose(rs, np.sqrt(np.pi * f * mu_0 / 5.813e7), rtol=1e-14)
    assert rs[2] == pytest.approx(0.026, abs=5e-4)
    assert skin_depth(1e10, 5.813e7) == pytest.approx(0.66e-6, abs=0.01e-6)
    # Rs grows as sqrt(mu_r) and sqrt(f)
    assert surface_resistance(1e9, 1e7, mu_r=4.0) == pytest.approx(2 * surface_resistance(1e9, 1e7),
                                                                   rel=1e-14)
    assert get_material("copper").surface_resistance(4e9) == pytest.approx(
        2 * get_material("copper").surface_resistance(1e9), rel=1e-14)
    assert get_material("pec").surface_resistance(1e9) == 0.0


def test_flat_wall_in_uniform_field_is_exact():
    """A uniform tangential H0 over a solid's face of area A: P = Rs/2 |H0|^2 A exactly
    (trilinear interpolation and the extrapolation reproduce a constant field), and a
    normal component of H carries no current."""
    solid = np.zeros((N, N, N), bool)
    solid[:, :, :8] = True                      # metal below z = 7 H, air above
    fs = _lattice([3.0 + 1j, -2.0, 5.0], pec=solid, parts={"block": solid}, conductors=["block"])
    c = cl.ConductorSurface("block", SIGMA, _square(7 * H), np.zeros(2, bool))
    loss = cl.mode_losses(fs, [c], stored_energy=[1.0])[0]
    area = (10 * H) ** 2
    expected = 0.5 * c.surface_resistance(F) * (abs(3.0 + 1j) ** 2 + 2.0 ** 2) * area
    assert loss.power_w["block"] == pytest.approx(expected, rel=1e-12)
    assert loss.q_conductor == pytest.approx(2 * np.pi * F / expected, rel=1e-12)
    assert loss.share == {"block": 1.0} and loss.covered == {"block": 1.0}


def test_sheet_loses_on_both_faces():
    """A zero-thickness sheet carries current on both faces: twice a one-sided wall's
    loss in the same uniform field, whichever way its triangles are wound."""
    sheet = np.zeros((N, N, N), bool)
    sheet[:, :, 10] = True                      # the sheet's own nodes (conductor nodes)
    fs = _lattice([0.0, 2.0, 0.0], pec=sheet, parts={"foil": sheet}, conductors=["foil"])
    rs = surface_resistance(F, SIGMA)
    for up in (True, False):
        c = cl.ConductorSurface("foil", SIGMA, _square(10 * H, up=up), np.ones(2, bool))
        loss = cl.mode_losses(fs, [c], stored_energy=[1.0])[0]
        assert loss.power_w["foil"] == pytest.approx(0.5 * rs * 4.0 * (10 * H) ** 2 * 2, rel=1e-12)


def test_extrapolation_takes_out_the_first_order_change():
    """H_t growing linearly away from the wall, H(s) = H0 (1 + s / L): the value on the
    wall is H0. One sample (one step out) is off by H/L; two or more are exact for a
    linear profile (the Lagrange polynomial through them)."""
    solid = np.zeros((N, N, N), bool)
    solid[:, :, :6] = True
    z = np.arange(N) * H
    wall, length = 5.5 * H, 8 * H              # the wall lies between node planes
    profile = 1.0 + (z - wall) / length
    h = np.zeros((3, N, N, N), complex)
    h[0] = profile[None, None, :]
    fs = _lattice(h, pec=solid, parts={"block": solid}, conductors=["block"])
    c = cl.ConductorSurface("block", SIGMA, _square(wall), np.zeros(2, bool))
    exact = 0.5 * c.surface_resistance(F) * (10 * H) ** 2
    one = cl.mode_losses(fs, [c], stored_energy=[1.0], samples=1)[0].power_w["block"]
    for samples in (2, 3):
        got = cl.mode_losses(fs, [c], stored_energy=[1.0], samples=samples)[0].power_w["block"]
        assert got == pytest.approx(exact, rel=1e-9), samples
    # one sample: one step out, at 6.5 H between the air nodes 6 H and 7 H: (1 + H / L)^2
    assert one / exact == pytest.approx((1 + H / length) ** 2, rel=1e-9)


def test_face_against_other_metal_carries_no_loss():
    """Where a lossy part's face is pressed against another conductor there is no air to
    sample: that face adds nothing and the part's covered share says how much is left."""
    solid = np.zeros((N, N, N), bool)
    solid[:, :, :8] = True
    other = np.zeros((N, N, N), bool)
    other[:, :, 7:] = True                      # a second conductor on top of it
    other[:, :10, 7:] = False                   # ... covering half the face (y > 10 H)
    fs = _lattice([1.0, 0.0, 0.0], pec=solid | other, parts={"a": solid, "b": other},
                  conductors=["a", "b"])
    c = cl.ConductorSurface("a", SIGMA, _square(7 * H), np.zeros(2, bool))
    loss = cl.mode_losses(fs, [c], stored_energy=[1.0])[0]
    assert 0.45 < loss.covered["a"] < 0.6
    full = 0.5 * c.surface_resistance(F) * (10 * H) ** 2
    assert loss.power_w["a"] == pytest.approx(full * loss.covered["a"], rel=0.05)
    assert cl.coverage_notes([loss]) and "'a'" in cl.coverage_notes([loss])[0]


def test_stored_energy_default_is_the_node_volume_sum():
    """Q_c = omega W / P with W from the lattice (per-node volumes): scaling the field
    leaves Q_c as it is, since P and W both go with its square."""
    solid = np.zeros((N, N, N), bool)
    solid[:, :, :8] = True
    fs = _lattice([1.0, 0.5, 0.0], pec=solid, parts={"block": solid}, conductors=["block"])
    c = cl.ConductorSurface("block", SIGMA, _square(7 * H), np.zeros(2, bool))
    w = float(np.sum(fs.magnetic_density(fs.modes[0]) * fs.node_volumes()))
    loss = cl.mode_losses(fs, [c])[0]
    assert loss.q_conductor == pytest.approx(2 * np.pi * F * w / loss.power_w["block"], rel=1e-12)
    fs.modes[0].h = fs.modes[0].h * 7.0
    assert cl.mode_losses(fs, [c])[0].q_conductor == pytest.approx(loss.q_conductor, rel=1e-12)


def test_quadrature_covers_each_triangle_with_small_pieces():
    """A box face of two triangles is cut into sub-triangles no larger than the lattice
    step; the areas add up to the face and the points lie on it."""
    x = np.arange(N) * H
    box = primitives.box((2 * H, 2 * H, 2 * H), (17 * H, 12 * H, 9 * H))
    tris = box.vertices[box.faces]
    pts, nrm, area, _ = cl.quadrature(tris, np.zeros(len(tris), bool), (x, x, x))
    assert area.sum() == pytest.approx(2 * (15 * 10 + 15 * 7 + 10 * 7) * H ** 2, rel=1e-12)
    assert area.max() <= 0.5 * H ** 2 + 1e-18
    assert np.all(pts >= 2 * H - 1e-12) and np.all(pts <= 17 * H + 1e-12)
    np.testing.assert_allclose(np.linalg.norm(nrm, axis=1), 1.0, rtol=1e-12)
    two, *_ = cl.quadrature(tris, np.ones(len(tris), bool), (x, x, x))
    assert len(two) == 2 * len(pts)


def test_only_lossy_conductors_are_sampled():
    """A perfect conductor ("pec") has no conductor loss; copper has."""
    box = primitives.box((0, 0, 0), (1e-3, 1e-3, 1e-3))
    box = box.with_(kind="solid")
    parts = [SimpleNamespace(name=n, part=SimpleNamespace(material=get_material(m)), surfaces=[box])
             for n, m in (("shield", "pec"), ("frame", "copper"), ("cover", "abs"))]
    got = cl.conductor_surfaces(SimpleNamespace(parts=parts))
    assert [c.name for c in got] == ["frame"]
    assert got[0].sigma == get_material("copper").sigma and not got[0].two_sided.any()
    note = cl.no_fields_note(SimpleNamespace(parts=parts), None)
    assert len(note) == 1 and "frame" in note[0] and "shield" not in note[0]
    assert cl.no_fields_note(SimpleNamespace(parts=parts[:1]), None) == []
    with pytest.raises(RingprintError, match="sigma must be finite and > 0"):
        cl.ConductorSurface("x", 0.0, box.vertices[box.faces], False)


@given(st.floats(0.5, 1e5), st.floats(0.5, 1e5))
def test_combined_q_adds_the_losses(q_s, q_c):
    """Independent losses add: 1/Q = 1/Q_s + 1/Q_c, i.e. the decay rates omega/(2Q) add
    (Pozar 2012, sec. 6.1)."""
    q = cl.combined_q(q_s, q_c)
    assert 1 / q == pytest.approx(1 / q_s + 1 / q_c, rel=1e-12)
    assert q <= min(q_s, q_c) * (1 + 1e-12)


def test_samples_must_be_a_positive_integer():
    fs = _lattice([1.0, 0.0, 0.0])
    c = cl.ConductorSurface("block", SIGMA, _square(7 * H), np.zeros(2, bool))
    with pytest.raises(RingprintError, match="samples must be an integer >= 1"):
        cl.mode_losses(fs, [c], samples=0)


def test_combined_q_edge_cases():
    assert cl.combined_q(100.0, 100.0) == pytest.approx(50.0, rel=1e-15)
    assert cl.combined_q(80.0, None) == 80.0 and cl.combined_q(80.0, math.inf) == 80.0
    with pytest.raises(RingprintError, match="must be > 0"):
        cl.combined_q(80.0, -1.0)


def _modes():
    return [{"index": 1, "frequency_hz": 2.0e9, "q": 1000.0, "decay_rate_per_s": 2 * np.pi * 2e9 / 2000,
             "amplitude": 1.0, "error": 1e-6, "q_chu": 2.0, "bands": [], "participation": {}},
            {"index": 2, "frequency_hz": 3.0e9, "q": 40.0, "decay_rate_per_s": 2 * np.pi * 3e9 / 80,
             "amplitude": 0.5, "error": 1e-6, "q_chu": 1.5, "bands": [], "participation": {}}]


def test_attach_makes_q_the_combined_q_and_the_bands_see_it():
    """Mode 1 at 2.0 GHz sits 0.5 % below a band starting at 2.01 GHz. With the solver's
    Q 1000 its half-power reach f/Q = 0.1 % is clear of the band (margin 0); with copper
    loss Q_c = 150 the combined Q is 130 and the reach 0.77 % makes it 'near'
    (ringprint.analysis.bands: near when within f/Q of an edge)."""
    modes = _modes()
    band = [Band("test", 2.01e9, 2.2e9, "invented")]
    cl.mark_without_losses(modes)
    assert [m["q_solver"] for m in modes] == [1000.0, 40.0] and modes[0]["q_conductor"] is None
    assert judge_modes(modes, band, 0.0) == []
    losses = [cl.ModeLoss(1, 150.0, {"frame": 1.0}, {"frame": 0.8, "lid": 0.2}, {}),
              cl.ModeLoss(2, math.inf, {}, {}, {})]
    cl.attach_losses(modes, losses)
    assert modes[0]["q"] == pytest.approx(1 / (1 / 1000 + 1 / 150), rel=1e-12)
    assert modes[0]["q_solver"] == 1000.0 and modes[0]["q_conductor"] == 150.0
    assert modes[0]["conductor_loss"] == {"frame": 0.8, "lid": 0.2}
    assert modes[1]["q"] == 40.0 and modes[1]["q_conductor"] is None   # nothing dissipates
    hazards = judge_modes(modes, band, 0.0)
    assert [(h["mode"], h["status"]) for h in hazards] == [(1, "near")]


def test_uncertainty_of_the_ring_down_q_is_carried_to_the_combined_q():
    """1/Q = 1/Q_s + 1/Q_c with Q_c exact: dQ = (Q/Q_s)^2 dQ_s (first-order propagation),
    checked against the combined Q of Q_s +- dQ_s."""
    modes = _modes()[:1]
    modes[0].update(q_uncertainty=10.0, q_extrapolated=990.0)
    cl.attach_losses(modes, [cl.ModeLoss(1, 150.0, {}, {"frame": 1.0}, {})])
    numeric = (cl.combined_q(1010.0, 150.0) - cl.combined_q(990.0, 150.0)) / 2
    assert modes[0]["q_uncertainty"] == pytest.approx(numeric, rel=1e-3)
    assert modes[0]["q_extrapolated"] == pytest.approx(cl.combined_q(990.0, 150.0), rel=1e-15)


def test_outputs_show_both_qs():
    """modes.csv carries q_solver and q_conductor after q and the loss shares; the terminal
    table and the report's mode table show both Q's once a conductor Q is known."""
    modes = _modes()
    summary = {"case": "tag", "grid": {}, "modes": modes, "hazards": []}
    cl.mark_without_losses(modes)
    assert "Q cond" not in format_summary_table(summary)
    cl.attach_losses(modes, [cl.ModeLoss(1, 150.0, {}, {"frame": 0.75, "lid": 0.25}, {})])
    header, rows = csv_rows(summary)
    assert header[:5] == ["index", "frequency_hz", "q", "q_solver", "q_conductor"]
    assert rows[0][3:5] == [repr(1000.0), repr(150.0)] and rows[1][4] == ""
    assert rows[0][header.index("conductor_loss")] == "frame=0.75; lid=0.25"
    table = format_summary_table(summary).splitlines()
    assert table[0].split()[:6] == ["mode", "frequency", "Q", "Q", "solver", "Q"]
    assert table[2].split()[3:6] == ["130", "1000", "150"]   # mode, "2.000000 GHz", Q's
    html = build_report_html(summary, b"", [])
    assert "<th>Q solver</th><th>Q conductor</th>" in html and 'id="q-note"' in html
