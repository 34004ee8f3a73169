"""Stopping on convergence, end to end, and the shortened field pass, on a small case.

The case: one dielectric puck (radius = height = 8 mm, eps_r 38), whose TE01delta
mode Kajfez & Guillon (*Dielectric Resonators*, 1986; about 2 % accurate, from
memory) put near 3.0 GHz, with a radiation Q of a few tens: a ring-down long enough
for the checks to matter, on a grid of about 40^3 cells. References:

- the modes of the full-length record (the ring-down run to the decay rule or the
  q_max ceiling): the run stopped on convergence must give the same list, f to 1e-4
  and Q to 1 % (issue 10);
- the full-length field pass: the pass stopped when the separated fields converge
  must give fields correlated >= 0.999 per mode in the stored-energy inner product
  (Harrington 1961) and the same energy shares (participation) within 1 %.
"""

import json

import meshio
import numpy as np
import pytest

from ringprint.analysis import lattice as lt
from ringprint.analysis import placement, ringdown
from ringprint.analysis.bounds import enclosing_sphere
from ringprint.analysis.case import load_case
from ringprint.analysis.field_window import field_correlation
from ringprint.analysis.mode_fields import compute_fields
from ringprint.analysis.model import build_model
from ringprint.analysis.modes import find_resonances, mode_table
from ringprint.analysis.participation import participation
from ringprint.analysis.pipeline import run_case
from ringprint.meshing import primitives

F_MIN, F_MAX = 2.4e9, 3.6e9


@pytest.fixture(scope="module")
def puck_case(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("puck")
    puck = primitives.cylinder(8.0, 8.0, n=48)
    meshio.write(tmp / "puck.stl", meshio.Mesh(np.asarray(puck.vertices, float), [("triangle", puck.faces)]),
                 file_format="stl", binary=True)
    case = tmp / "puck.toml"
    case.write_text("""
title = "puck"
units = "mm"
probe = { at = [3.0, 0.0, 0.0], normal = "z", size = 2.0 }      # inside the puck, on its axis
grid = { cells_per_wavelength = 10, padding = 4.0, absorber_cells = 8, graded = false }
[spectrum]
f_min = "2.4 GHz"
f_max = "3.6 GHz"
[[part]]
name = "puck"
file = "puck.stl"
material = { eps_r = 38.0 }
[analysis]
q_max = 60
""")
    return case


@pytest.fixture(scope="module")
def two_passes(puck_case):
    """The full-length first pass, and the field pass from its start both ways."""
    model = build_model(load_case(puck_case))
    probe = placement.place_probe(model)
    sim = ringdown.build_simulation(model, probe, placement.pickup_points(model))
    ring = ringdown.ring(model, sim, converge=False, snapshot=True)
    try:
        res, rows = find_resonances(ring, F_MIN, F_MAX)
        modes, _ = mode_table(res, rows, ring.probe_signal, enclosing_sphere(model.vertices())[1], [], 0.03)
        lat = lt.plan_lattice(model, len(modes), 2 ** 28)
        short, full = {}, {}
        fs_short = compute_fields(model, probe, ring, modes, lat, converge=True, record=short)
        fs_full = compute_fields(model, probe, ring, modes, lat, converge=False, record=full)
    finally:
        ringdown.remove_snapshot(ring)      # a temporary file (no output folder here)
    return ring, modes, fs_short, fs_full, short, full


def test_the_field_pass_restarts_at_the_ring_down_and_stops_early(two_passes):
    ring, modes, _s, _f, short, full = two_passes
    assert modes, "the puck rings in the window"
    assert short["start_step"] == ring.start_index == full["start_step"]
    assert full["steps"] == ring.steps
    assert short["stop_reason"].startswith("converged") and short["steps"] < full["steps"]
    assert len(short["checks"]) >= 2


def test_short_fields_equal_the_full_length_ones(two_passes):
    _ring, _modes, fs_short, fs_full, _s, _f = two_passes
    vol = fs_full.node_volumes()
    for a, b in zip(fs_short.modes, fs_full.modes):
        assert field_correlation(a.e, a.h, b.e, b.h, fs_full.eps_r, vol) >= 0.999, a.index
        share_a = participation(fs_short, a)["share"]
        share_b = participation(fs_full, b)["share"]
        assert share_a.keys() == share_b.keys()
        for part in share_b:
            assert share_a[part] == pytest.approx(share_b[part], abs=0.01), (a.index, part)


def test_run_stops_on_convergence_with_the_full_length_modes(two_passes, puck_case):
    ring, full_modes, *_ = two_passes
    out = puck_case.parent / "run"
    summary = run_case(puck_case, out, progress=False, echo=None, fields=True)
    run = summary["run"]
    assert run["stop_reason"].startswith("converged: ") and "stable over two checks" in run["stop_reason"]
    assert run["steps"] < ring.steps
    assert len(summary["modes"]) == len(full_modes)
    for a, b in zip(summary["modes"], full_modes):
        assert a["frequency_hz"] == pytest.approx(b["frequency_hz"], rel=1e-4)
        assert a["q"] == pytest.approx(b["q"], rel=1e-2)
    log = (out / "run.log").read_text()
    assert "convergence check at" in log and "field pass: steps" in log
    assert run["field_pass_start_step"] == int(round(run["ringdown_start_s"] / run["dt_s"]))
    assert run["field_pass_stop_reason"].startswith("converged")
    assert 0 < run["field_pass_steps"] <= run["steps"] - run["field_pass_start_step"]
    assert not (out / ringdown.START_SNAPSHOT).exists()
    assert json.loads((out / "modes.json").read_text())["run"]["convergence_checks"] >= 2


def test_correlation_of_a_field_with_itself_and_an_orthogonal_one():
    """Exact values of the inner product: 1 for any complex multiple, 0 for disjoint support."""
    rng = np.random.default_rng(3)
    e = rng.standard_normal((3, 4, 4, 4)) + 1j * rng.standard_normal((3, 4, 4, 4))
    h = rng.standard_normal((3, 4, 4, 4)) + 0j
    eps = np.full((4, 4, 4), 2.0)
    assert field_correlation(e, h, (2 - 3j) * e, (2 - 3j) * h, eps, 1e-9) == pytest.approx(1.0, abs=1e-12)
    e2, h2 = e.copy(), h.copy()
    e[:, :2], h[:, :2], e2[:, 2:], h2[:, 2:] = 0, 0, 0, 0
    assert field_correlation(e, h, e2, h2, eps, 1e-9) == pytest.approx(0.0, abs=1e-12)
