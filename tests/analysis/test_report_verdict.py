"""The report's verdict line and hazard table (ringprint.analysis.report_verdict).

Reference: the half-power (-3 dB) bandwidth of a resonator is f/Q, so its response is
above half power over f +- f/2Q (Pozar, Microwave Engineering, 4th ed., 2012, sec. 6.1).
"""

import pytest

from ringprint.analysis.report_verdict import (band_coverage, half_power_band, participation_text,
                                               verdict_text)
from ringprint.analysis.results import q_over_chu_text

GNSS = {"name": "GNSS L1", "low_hz": 1559e6, "high_hz": 1610e6, "source": "case file"}
BLE = {"name": "BLE", "low_hz": 2400e6, "high_hz": 2483.5e6, "source": "case file"}


def _tag_mode(**extra):
    """The tag demo's first mode as the issue saw it: 2.28 GHz, Q 1.8, "29 % from GNSS L1"."""
    return {"index": 1, "frequency_hz": 2.281964e9, "q": 1.7947, "frequency_uncertainty_hz": 0.07e9,
            "q_uncertainty": 0.5, "error": 1e-7, "q_chu": 0.9988, "chu_applies": False,
            "rings_in": "ground plane",
            "participation": {"ground plane": 0.17, "housing": 0.27, "coin-cell holder": 0.024},
            "bands": [{"band": "GNSS L1", "status": "near", "distance_percent": 29.4},
                      {"band": "BLE", "status": "near", "distance_percent": 5.2}], **extra}


def test_half_power_band_is_f_over_2q_each_side():
    lo, hi = half_power_band(2.0e9, 10.0)
    assert (lo, hi) == pytest.approx((1.9e9, 2.1e9), rel=1e-15)
    assert hi - lo == pytest.approx(2.0e9 / 10.0)          # full width f/Q (Pozar 6.1)


def test_a_low_q_mode_covers_a_band_it_sits_far_from():
    """Issue 13: the tag's Q 1.8 mode at 2.28 GHz spans 1.646-2.918 GHz at half power:
    all of BLE (5.2 % away) and, though "near" GNSS L1, not L1 itself (its lower edge
    stays 36 MHz above 1610 MHz; the issue's "covers it" was loose). A Q 200 mode 2 %
    below BLE covers none of it."""
    m = _tag_mode()
    lo, hi = half_power_band(m["frequency_hz"], m["q"])
    assert lo == pytest.approx(1.6462e9, rel=1e-4) and hi == pytest.approx(2.9177e9, rel=1e-4)
    assert band_coverage(m["frequency_hz"], m["q"], BLE["low_hz"], BLE["high_hz"]) == 1.0
    assert band_coverage(m["frequency_hz"], m["q"], GNSS["low_hz"], GNSS["high_hz"]) == 0.0
    assert band_coverage(2.352e9, 200.0, BLE["low_hz"], BLE["high_hz"]) == 0.0
    # half inside: a band from f to f + f/Q has its lower half under the half-power band
    assert band_coverage(2e9, 10.0, 2e9, 2.2e9) == pytest.approx(0.5)


def test_verdict_names_mode_f_q_part_band_and_margin():
    m = _tag_mode()
    hazards = [{"mode": 1, "band": "BLE", "status": "near", "distance_percent": 5.2, "rank": 1},
               {"mode": 1, "band": "GNSS L1", "status": "near", "distance_percent": 29.4, "rank": 2}]
    text = verdict_text({"modes": [m]}, hazards, [GNSS, BLE])
    assert text.startswith("Worst: mode 1 at 2.28 \u00b1 0.07 GHz, Q 1.8 \u00b1 0.5, rings in ground plane: "
                           "near BLE, 5.2 % from its edge; its half-power band 1.65\u20132.92 GHz "
                           "covers all of it."), text
    assert text.endswith("1 more hazard below.") and "\n" not in text
    # without mode fields (--no-fields) the carrier is not known: not said at all
    bare = {k: v for k, v in m.items() if k != "rings_in"}
    assert verdict_text({"modes": [bare]}, hazards, [GNSS, BLE]).startswith(
        "Worst: mode 1 at 2.28 \u00b1 0.07 GHz, Q 1.8 \u00b1 0.5: near BLE, 5.2 % from its edge")
    # inside a band: how deep
    inside = {**m, "bands": [{"band": "BLE", "status": "inside", "distance_percent": -1.2}]}
    assert "inside BLE, 1.2 % inside it" in verdict_text(
        {"modes": [inside]}, [{"mode": 1, "band": "BLE", "status": "inside", "distance_percent": -1.2,
                              "rank": 1}], [BLE])
    assert "No band hazard" in verdict_text({"modes": [m]}, [], [GNSS])
    assert "No resonance" in verdict_text({"modes": []}, [], [GNSS])


def test_energy_share_names_the_rest_air_and_chu_says_na():
    m = _tag_mode()
    text = participation_text(m)
    assert text == "ground plane; energy: housing 27 %, ground plane 17 %, coin-cell holder 2.4 %, air 54 %"
    assert participation_text({**m, "rings_in": None}).startswith("no part (air); energy:")
    assert q_over_chu_text(m) == "n/a"                        # Q below 5: Chu does not apply
    assert q_over_chu_text({**m, "chu_applies": True, "q": 10.0, "q_uncertainty": None}) == "10.0"
