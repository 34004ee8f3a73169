"""`ringprint bench`: the command runs and reports consistent figures (speed is
measured by the benchmark itself, never asserted here)."""

from __future__ import annotations

import json

import pytest

from ringprint.analysis.cli import main
from ringprint.fdtd import bench


@pytest.fixture
def small_triad(monkeypatch):
    # keep the bandwidth probe small in the test suite (the real run uses 128 MiB arrays)
    real = bench.measure_bandwidth
    monkeypatch.setattr(bench, "measure_bandwidth", lambda: real(1 << 20, 2))


def test_bench_json_keys_and_consistency(capsys, small_triad):
    assert main(["bench", "--size", "32", "--steps", "3", "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    assert set(res) >= {"cells", "steps", "seconds", "mcells_per_s", "bandwidth_gb_s",
                        "roofline_mcells_per_s", "ratio", "bare_mcells_per_s", "full_over_bare",
                        "cpml_share", "padded"}
    assert res["cells"] == 32 ** 3 and res["steps"] == 3
    assert res["mcells_per_s"] == pytest.approx(res["cells"] * 3 / res["seconds"] / 1e6)
    assert res["roofline_mcells_per_s"] == pytest.approx(res["bandwidth_gb_s"] * 1e9 / 48 / 1e6)
    assert res["ratio"] == pytest.approx(res["mcells_per_s"] / res["roofline_mcells_per_s"])
    assert res["full_over_bare"] == pytest.approx(res["mcells_per_s"] / res["bare_mcells_per_s"])
    pad = res["padded"]
    # share of an n^3 box in a layer c cells thick on every face: 1 - ((n - 2c)/n)^3
    assert pad["cpml_share"] == pytest.approx(1 - ((32 - 2 * pad["cpml_cells"]) / 32) ** 3)
    c = pad["cpml_cells"]
    near = [abs(1 - ((32 - 2 * t) / 32) ** 3 - 0.4) for t in (c - 1, c, c + 1)]
    assert near[1] == min(near)  # the thickness whose share is closest to the default 0.4
    assert pad["full_over_bare"] == pytest.approx(pad["mcells_per_s"] / res["bare_mcells_per_s"])


def test_bench_text_output(capsys, small_triad):
    assert main(["bench", "--size", "32", "--steps", "2"]) == 0
    out = capsys.readouterr().out
    assert "Mcells/s" in out and "ratio" in out
    assert "bare kernel" in out and "full/bare" in out and "padded" in out


def test_bench_refuses_tiny_grid(capsys):
    assert main(["bench", "--size", "8"]) == 1
    assert "--size 8" in capsys.readouterr().err


def test_bench_refuses_a_layer_share_without_room(capsys):
    assert main(["bench", "--padded-share", "0.9"]) == 1
    assert "--padded-share 0.9" in capsys.readouterr().err
