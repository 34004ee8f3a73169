"""Tests of the tolerance keys and the spread they give (ringprint.analysis.tolerance),
and of the report's "what moves it" tables (ringprint.analysis.report_sensitivity).

The share of the tolerance range inside a band is the probability that a sum of
independent uniform terms falls between two edges. For n equal terms of half-width
w the sum is an Irwin-Hall variable: ``S = w (2 U - n)`` with U the sum of n
uniforms on [0, 1], whose CDF is
``F(u) = 1/n! sum_{k=0}^{floor(u)} (-1)^k C(n, k) (u - k)^n`` (Irwin, J. O.,
Biometrika 19:225-239, 1927; Hall, P., Biometrika 19:240-245, 1927).
"""

from __future__ import annotations

import math
import tomllib

import pytest

from ringprint.analysis.case import load_case
from ringprint.analysis.report_sensitivity import sensitivity_rows, sensitivity_section
from ringprint.analysis.tolerance import (DISTRIBUTION, PartTolerance, Tolerances, inside_share,
                                          mode_spread, tolerance_terms)
from ringprint.analysis.bands import Band

try:
    from .test_case import minimal, write_case
except ImportError:
    from test_case import minimal, write_case


def _irwin_hall_cdf(u: float, n: int) -> float:
    if u <= 0:
        return 0.0
    if u >= n:
        return 1.0
    return sum((-1) ** k * math.comb(n, k) * (u - k) ** n for k in range(int(math.floor(u)) + 1)) \
        / math.factorial(n)


@pytest.mark.parametrize("n", [1, 2, 3, 5])
@pytest.mark.parametrize("lo, hi", [(-0.3, 0.8), (0.5, 4.0), (-10.0, -0.9), (2.0, 3.0)])
def test_inside_share_is_the_irwin_hall_probability(n, lo, hi):
    w, f = 1.0e6, 2.0e9                  # n terms of +-1 MHz around 2 GHz; edges in MHz
    got = inside_share(f, [w] * n, f + lo * w, f + hi * w)
    cdf = lambda s: _irwin_hall_cdf((s + n) / 2, n)  # noqa: E731  S/w = 2U - n
    assert got == pytest.approx(cdf(hi) - cdf(lo), abs=1e-3)


def test_inside_share_without_terms_is_the_nominal_verdict():
    assert inside_share(2.4e9, [], 2.3e9, 2.5e9) == 1.0
    assert inside_share(2.6e9, [0.0], 2.3e9, 2.5e9) == 0.0


def _sensitivity():
    return {"parts": {
        "shell": {"eps_r_hz_per_unit": -4e6, "eps_r_mhz_per_percent": -0.12, "offset_hz_per_m": -2e10,
                  "move_hz_per_m": [1e9, 0.0, -3e9], "offset_mhz_per_0_1_mm": -2.0,
                  "move_mhz_per_0_1_mm": [0.1, 0.0, -0.3]},
        "frame": {"eps_r_hz_per_unit": None, "eps_r_mhz_per_percent": None, "offset_hz_per_m": 5e9,
                  "move_hz_per_m": [0.0, 2e9, 0.0], "offset_mhz_per_0_1_mm": 0.5,
                  "move_mhz_per_0_1_mm": [0.0, 0.2, 0.0]}}}


def test_terms_spread_and_worst_case():
    tol = Tolerances(PartTolerance((1e-4,) * 3, 5e-5, 0.0),
                     (("shell", PartTolerance((1e-4,) * 3, 5e-5, 5.0)),))
    terms = tolerance_terms(_sensitivity()["parts"], tol)
    hz = {(t["part"], t["quantity"]): t["hz"] for t in terms}
    assert hz[("shell", "eps_r")] == pytest.approx(-0.12e6 * 5)
    assert hz[("shell", "offset")] == pytest.approx(-2e10 * 5e-5)
    assert hz[("shell", "move z")] == pytest.approx(-3e9 * 1e-4)
    assert ("shell", "move y") not in hz and ("frame", "eps_r") not in hz    # zero terms left out
    mode = {"frequency_hz": 2.0e9, "sensitivity": _sensitivity(),
            "bands": [{"band": "b", "status": "near"}]}
    spread = mode_spread(mode, tol, [Band("b", 2.0005e9, 2.1e9), Band("far", 3e9, 3.1e9)])
    size = [abs(v) for v in hz.values()]
    assert spread["rss_hz"] == pytest.approx(math.sqrt(sum(s * s for s in size)))
    assert spread["worst_hz"] == pytest.approx(sum(size))
    assert [b["band"] for b in spread["bands"]] == ["b"]          # "far" is out of reach
    assert 0.0 < spread["bands"][0]["inside_share"] < 0.5
    assert spread["distribution"] == DISTRIBUTION
    assert abs(spread["terms"][0]["hz"]) == max(size)               # largest first


def test_case_keys_are_read_in_si_and_round_trip(tmp_path):
    text = minimal('tolerance = { offset = 0.02 }\n'
                   '[[part]]\nname = "shell"\nfile = "tag/pcb_ground.stl"\n'
                   'material = { eps_r = 3.0 }\ntolerance = { eps_r = 4, position = [0.1, 0.2, 0] }\n'
                   '[tolerance]\nposition = 0.05\neps_r = 2\n')
    case = load_case(write_case(tmp_path, text))
    tol = case.tolerances
    assert tol.default == PartTolerance((5e-5,) * 3, 0.0, 2.0)
    assert tol.of("p") == PartTolerance((5e-5,) * 3, 2e-5, 2.0)
    assert tol.of("shell").position_m == pytest.approx((1e-4, 2e-4, 0.0))
    assert tol.of("shell").eps_r_percent == 4.0
    again = tmp_path / "resolved.toml"
    again.write_text(case.resolved_toml())
    assert tomllib.loads(again.read_text())["tolerance"]["eps_r"] == 2.0
    back = load_case(again)
    assert back.tolerances.of("shell").position_m == pytest.approx(tol.of("shell").position_m)
    assert back.tolerances.of("p") == tol.of("p")
    assert back.digest() == case.digest()           # tolerances do not change the run


def test_report_table_is_ranked_and_escaped():
    mode = {"index": 3, "frequency_hz": 2.0e9, "sensitivity": _sensitivity()}
    rows = sensitivity_rows(mode)
    assert rows[0][:3] == ("shell", "surface offset (outward)", -2.0)
    assert [abs(r[2]) for r in rows] == sorted((abs(r[2]) for r in rows), reverse=True)
    mode["sensitivity"]["parts"]["<b>"] = mode["sensitivity"]["parts"].pop("frame")
    html = sensitivity_section({"modes": [mode], "hazards": [{"mode": 3, "rank": 1}]})
    assert 'id="what-moves-mode-3"' in html and "&lt;b&gt;" in html and "<b>" not in html
    assert "No tolerances in the case" in html
    assert sensitivity_section({"modes": [mode], "hazards": []}) == ""
