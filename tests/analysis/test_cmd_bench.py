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
    assert set(res) == {"cells", "steps", "seconds", "mcells_per_s", "bandwidth_gb_s",
                        "roofline_mcells_per_s", "ratio"}
    assert res["cells"] == 32 ** 3 and res["steps"] == 3
    assert res["mcells_per_s"] == pytest.approx(res["cells"] * 3 / res["seconds"] / 1e6)
    assert res["roofline_mcells_per_s"] == pytest.approx(res["bandwidth_gb_s"] * 1e9 / 48 / 1e6)
    assert res["ratio"] == pytest.approx(res["mcells_per_s"] / res["roofline_mcells_per_s"])


def test_bench_text_output(capsys, small_triad):
    assert main(["bench", "--size", "32", "--steps", "2"]) == 0
    out = capsys.readouterr().out
    assert "Mcells/s" in out and "ratio" in out


def test_bench_refuses_tiny_grid(capsys):
    assert main(["bench", "--size", "8"]) == 1
    assert "--size 8" in capsys.readouterr().err
