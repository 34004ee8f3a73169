"""``ringprint match``: measured resonances paired with simulated modes, offsets, the
unmatched on both sides, the overlay picture and the material hint.

The measured file is made from known poles: the simulated modes moved by a known
permittivity change of one part through first-order perturbation, ``df/f = -(W_e,part
/ W) d eps/eps`` (Harrington, Time-Harmonic Electromagnetic Fields, 1961, sec. 7-2),
so the hint must name that part and that change."""

from __future__ import annotations

import json

import numpy as np
import pytest

from ringprint.analysis import cli
from ringprint.analysis.bench_match import material_hint, pair_modes
from ringprint.analysis.touchstone import write_s1p

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
D_EPS = 0.06            # the housing's permittivity is 6 % higher on the bench
SIM = [  # (f, Q, electric energy share in the housing, in the battery)
    (1.20e9, 150.0, 0.10, 0.01),
    (1.60e9, 300.0, 0.30, 0.02),
    (2.10e9, 250.0, 0.05, 0.20),
    (2.70e9, 400.0, 0.20, 0.00),     # no measured counterpart
]
EXTRA = (3.30e9, 200.0)              # a measured resonance the run does not have


def _rational(f, poles):
    """S11 = 0.4 + sum_k r/(s - p) + conj, residue scaled so each circle is 0.3 across."""
    s = 2j * np.pi * f
    out = np.full(f.shape, 0.4, complex)
    for fk, q in poles:
        w = 2 * np.pi * fk
        p = complex(-w / (2 * q), w)
        r = -0.3 * (-p.real)
        out += r / (s - p) + np.conj(r) / (s - np.conj(p))
    return out


@pytest.fixture
def bench(tmp_path):
    run = tmp_path / "run"
    run.mkdir()
    modes = [{"index": k + 1, "frequency_hz": f, "q": q,
              "participation_detail": {"housing": {"electric_inside": e1},
                                       "battery": {"electric_inside": e2}}}
             for k, (f, q, e1, e2) in enumerate(SIM)]
    summary = {"results_layout": 2, "modes": modes,
               "case": {"name": "invented", "parts": [{"name": "housing", "eps_r": 2.7},
                                                      {"name": "battery", "eps_r": 4.0}]},
               "bands": [{"name": "an invented band", "low_hz": 1.55e9, "high_hz": 1.65e9,
                          "source": "test"}]}
    (run / "modes.json").write_text(json.dumps(summary))
    f = np.linspace(1.0e9, 3.5e9, 2501)
    write_s1p(run / "probe.s11.s1p", f, _rational(f, [(fk, q) for fk, q, _, _ in SIM]))
    moved = [(fk * (1 - e1 * D_EPS), q) for fk, q, e1, _ in SIM[:3]] + [EXTRA]
    measured = write_s1p(tmp_path / "bench.s1p", f, _rational(f, moved))
    return run, measured, tmp_path


def test_pairing_keeps_order_and_leaves_the_far_ones_out():
    p = pair_modes([1.0, 2.0, 3.0], [100, 100, 100], [1.02, 2.9, 3.05], [100, 100, 100], 0.1)
    assert p.pairs == [(0, 0), (2, 2)] and p.sim_only == [1] and p.meas_only == [1]


def test_pairing_prefers_the_similar_q_of_two_near_candidates():
    p = pair_modes([1.00, 1.04], [20, 2000], [1.02], [1900], 0.1)
    assert p.pairs == [(1, 0)] and p.sim_only == [0]


def test_material_hint_recovers_a_known_change():
    e = {"a": np.array([0.1, 0.3, 0.05]), "b": np.array([0.01, 0.02, 0.2])}
    y = -e["a"] * 0.04
    h = material_hint(y, e, {"a": 3.0})
    assert h["part"] == "a" and abs(h["d_eps_over_eps"] - 0.04) < 1e-12
    assert abs(h["suggested_eps_r"] - 3.12) < 1e-12 and h["residual_rms"] < 1e-15 and h["explains"]


def test_material_hint_says_when_no_part_explains_the_offsets():
    e = {"a": np.array([0.1, 0.3, 0.05])}
    h = material_hint(np.array([0.01, -0.01, 0.01]), e, {"a": 3.0})
    assert not h["explains"] and h["residual_rms"] > 0.5 * h["offset_rms"]


def test_match_command_end_to_end(bench, capsys):
    run, measured, tmp = bench
    out = tmp / "cmp"
    assert cli.main(["match", str(run), str(measured), "--out", str(out)]) == 0
    text = capsys.readouterr().out
    result = json.loads((out / "match.json").read_text())
    assert [r["mode"] for r in result["pairs"]] == [1, 2, 3]
    for r, (fk, q, e1, _) in zip(result["pairs"], SIM):
        # the moved pole's loaded frequency; the circle's f_L sits on it to ~1/Q^2
        assert abs(r["offset_percent"] - (-100 * e1 * D_EPS)) < 0.01
    assert [m["mode"] for m in result["unmatched_simulated"]] == [4]
    assert len(result["unmatched_measured"]) == 1
    assert abs(result["unmatched_measured"][0]["frequency_hz"] / EXTRA[0] - 1) < 1e-4
    hint = result["material_hint"]
    assert hint["part"] == "housing" and hint["explains"]
    assert abs(hint["d_eps_over_eps"] - D_EPS) < 2e-3
    assert abs(hint["suggested_eps_r"] - 2.7 * (1 + D_EPS)) < 0.01
    assert "hint:" in text and "'housing'" in text
    assert (out / "match.png").read_bytes().startswith(PNG_SIGNATURE)


def test_match_without_participation_says_why_there_is_no_hint(bench, capsys):
    run, measured, tmp = bench
    data = json.loads((run / "modes.json").read_text())
    for m in data["modes"]:
        m.pop("participation_detail")
    (run / "modes.json").write_text(json.dumps(data))
    (run / "probe.s11.s1p").unlink()
    assert cli.main(["match", str(run), str(measured), "--out", str(tmp / "o2")]) == 0
    assert "hint: none (the run has no participation" in capsys.readouterr().out


def test_match_refuses_a_directory_without_modes(tmp_path, capsys):
    f = np.linspace(1e9, 2e9, 11)
    measured = write_s1p(tmp_path / "m.s1p", f, 0.5 + 0 * f)
    assert cli.main(["match", str(tmp_path / "nothing"), str(measured)]) == 1
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no such directory" in err
