"""Tests of band presets and the judgement of modes against bands (ringprint.analysis.bands)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, strategies as st
from scipy.integrate import quad

from ringprint.analysis.bands import (CLEAR, DEFAULT_MARGIN, INSIDE, NEAR, Band, judge,
                                      preset_bands, preset_names, preset_renamed, rank_hazards)
from ringprint.errors import RingprintError

LTE = [1, 2, 3, 4, 5, 7, 8, 12, 13, 14, 17, 20, 25, 26, 28, 38, 40, 41, 66, 71]
OTHERS = ["nr-n77", "nr-n78", "nr-n79", "gps-l1", "gps-l2", "gps-l5", "galileo-e1", "galileo-e5a",
          "galileo-e5b", "glonass-l1", "beidou-b1i", "wifi-2g4", "wifi-5ghz", "wifi-6ghz", "ism-433",
          "srd-868", "ism-915", "ism-2g4", "ism-5g8", "uwb-ch5", "uwb-ch9", "gnss", "wifi"]
MHZ = 1e6


def edges(name):
    (band,) = preset_bands(name)
    return band.low_hz / MHZ, band.high_hz / MHZ


def centre(name):
    lo, hi = edges(name)
    return (lo + hi) / 2


def test_required_presets_exist_and_cite_a_document():
    names = set(preset_names())
    for name in [f"lte-b{n}" for n in LTE] + OTHERS:
        assert name in names, name
        for band in preset_bands(name):
            assert band.source and 0 < band.low_hz < band.high_hz


def test_paired_bands_expand_to_uplink_and_downlink():
    ul, dl = preset_bands("lte-b7")
    assert (ul.name, dl.name) == ("lte-b7-ul", "lte-b7-dl")
    assert (ul.low_hz, ul.high_hz, dl.low_hz, dl.high_hz) == (2500e6, 2570e6, 2620e6, 2690e6)
    assert preset_bands("lte-b7-dl") == (dl,)
    assert "from memory" in ul.source


def test_refarmed_nr_bands_keep_the_lte_edges():
    """TS 38.101-1 refarms LTE bands with the same edges (n1 = band 1, ...)."""
    for n in (1, 2, 3, 5, 7, 8, 20, 25, 28, 38, 40, 41, 66, 71):
        lte = [(b.low_hz, b.high_hz) for b in preset_bands(f"lte-b{n}")]
        nr = [(b.low_hz, b.high_hz) for b in preset_bands(f"nr-n{n}")]
        assert lte == nr, n


def test_nr_n78_lies_inside_n77():
    assert edges("nr-n77")[0] <= edges("nr-n78")[0] and edges("nr-n78")[1] <= edges("nr-n77")[1]


def test_gnss_carriers_are_multiples_of_the_fundamental():
    """GPS and Galileo carriers are integer multiples of f0 = 10.23 MHz: L1 = 154 f0,
    L2 = 120 f0, L5 = E5a = 115 f0, E5b = 118 f0 (IS-GPS-200, IS-GPS-705, Galileo OS SIS
    ICD); BeiDou B1I = 152.6 f0 (BDS-SIS-ICD-B1I)."""
    f0 = 10.23
    for name, m in [("gps-l1", 154), ("gps-l2", 120), ("gps-l5", 115), ("galileo-e1", 154),
                    ("galileo-e5a", 115), ("galileo-e5b", 118), ("beidou-b1i", 152.6)]:
        assert centre(name) == pytest.approx(m * f0, abs=1e-6), name


def test_glonass_l1_covers_its_channels():
    """GLONASS L1 FDMA carriers 1602 + k 0.5625 MHz, k = -7..+6 (GLONASS ICD)."""
    lo, hi = edges("glonass-l1")
    carriers = 1602 + np.arange(-7, 7) * 0.5625
    assert lo < carriers.min() and carriers.max() < hi


def test_uwb_channels_are_multiples_of_499_2_mhz():
    """HRP UWB channel centres: channel 5 = 13 x 499.2 MHz, channel 9 = 16 x 499.2 MHz,
    499.2 MHz wide (IEEE 802.15.4-2020 / 802.15.4z)."""
    for name, m in [("uwb-ch5", 13), ("uwb-ch9", 16)]:
        lo, hi = edges(name)
        assert centre(name) == pytest.approx(m * 499.2, abs=1e-6)
        assert hi - lo == pytest.approx(499.2, abs=1e-6)


def test_wifi_channel_plans_fit_their_presets():
    """IEEE 802.11 channel centres: 2407 + 5 n MHz (2.4 GHz, n = 1..13), 5000 + 5 n
    (5 GHz, n = 32..177), 5950 + 5 n (6 GHz, n = 1..233), 20 MHz channels."""
    for name, base, chans in [("wifi-2g4", 2407, range(1, 14)), ("wifi-5ghz", 5000, range(32, 178, 4)),
                              ("wifi-6ghz", 5950, range(1, 234, 4))]:
        lo, hi = edges(name)
        centres = base + 5 * np.array(list(chans))
        assert lo <= centres.min() - 10 and centres.max() + 10 <= hi, name


def test_groups_select_their_members():
    gnss = {b.name for b in preset_bands("gnss")}
    assert {"gps-l1", "gps-l5", "galileo-e1", "beidou-b1i", "glonass-l1"} <= gnss
    assert [b.name for b in preset_bands("wifi")] == ["wifi-2g4", "wifi-5ghz", "wifi-6ghz"]


def test_renamed_wifi_presets_keep_their_old_names():
    """wifi-5g / wifi-6g read like 5G / 6G cellular (issue 13): now wifi-5ghz / wifi-6ghz;
    the old names still select the same band, under its new name."""
    for old, new in (("wifi-5g", "wifi-5ghz"), ("wifi-6g", "wifi-6ghz")):
        assert preset_bands(old) == preset_bands(new) and preset_bands(old)[0].name == new
        assert preset_renamed(old) == new and preset_renamed(new) is None
    assert "wifi-5g" not in preset_names()


def test_unknown_preset_suggests_names():
    with pytest.raises(RingprintError, match=r"unknown band preset 'gps-l6'; did you mean .*'gps-l"):
        preset_bands("gps-l6")


def test_band_rejects_bad_edges():
    with pytest.raises(RingprintError, match="need 0 < low < high"):
        Band("x", 2e9, 1e9)


# -- judgement on hand-made cases -----------------------------------------------

LOW, HIGH = 2.40e9, 2.50e9


def test_inside_near_clear_by_hand():
    f = np.array([2.45e9, 2.40e9, 2.55e9, 2.35e9, 2.60e9, 2.60e9])
    q = np.array([100.0, 100.0, 100.0, 100.0, 100.0, 8.0])
    j = judge(f, q, [LOW], [HIGH], margin=0.03)
    assert j.status.shape == (6, 1)
    # 2.45 GHz: inside, 0.05 GHz from the nearer edge -> -0.05/2.45 = -2.04 %
    assert j.status[0, 0] == INSIDE and j.distance_percent[0, 0] == pytest.approx(-100 * 0.05 / 2.45)
    # on the low edge: inside, distance 0
    assert j.status[1, 0] == INSIDE and j.distance_percent[1, 0] == 0.0
    # 2.55 GHz: 0.05 GHz above -> 1.96 %, within the 3 % margin -> near
    assert j.status[2, 0] == NEAR and j.distance_percent[2, 0] == pytest.approx(100 * 0.05 / 2.55)
    # 2.35 GHz: 2.13 % below -> near
    assert j.status[3, 0] == NEAR
    # 2.60 GHz, Q 100: 3.85 % away, beyond the margin and beyond f/Q = 1 % -> clear
    assert j.status[4, 0] == CLEAR and j.distance_percent[4, 0] == pytest.approx(100 * 0.1 / 2.6)
    # 2.60 GHz, Q 8: its half-power bandwidth f/Q = 12.5 % reaches the edge -> near
    assert j.status[5, 0] == NEAR


def test_margin_is_configurable_and_defaults_to_three_percent():
    assert DEFAULT_MARGIN == 0.03
    f, q = [2.55e9], [1000.0]                    # 1.96 % above the band
    assert judge(f, q, [LOW], [HIGH]).status[0, 0] == NEAR
    assert judge(f, q, [LOW], [HIGH], margin=0.01).status[0, 0] == CLEAR


def lorentz_fraction_by_quadrature(f, q, lo, hi):
    """Fraction of a Lorentzian power line (centre f, FWHM f/Q) inside [lo, hi], by
    numerical integration of the normalised density (g/pi)/((x - f)^2 + g^2)."""
    g = f / (2 * q)
    density = lambda x: (g / np.pi) / ((x - f) ** 2 + g**2)  # noqa: E731
    points = [p for p in (f,) if lo < p < hi]
    return quad(density, lo, hi, points=points or None, epsabs=1e-13, limit=200)[0]


@pytest.mark.parametrize("f, q", [(2.45e9, 50.0), (2.41e9, 300.0), (2.52e9, 40.0), (2.3e9, 5.0),
                                  (2.499e9, 2000.0)])
def test_overlap_is_the_lorentzian_fraction_in_band(f, q):
    j = judge([f], [q], [LOW], [HIGH])
    assert j.overlap[0, 0] == pytest.approx(lorentz_fraction_by_quadrature(f, q, LOW, HIGH), abs=1e-9)


def test_infinite_q():
    j = judge([2.45e9, 2.6e9], [np.inf, np.inf], [LOW], [HIGH])
    assert list(j.overlap[:, 0]) == [1.0, 0.0]
    assert list(j.status[:, 0]) == [INSIDE, CLEAR]


def test_ranking_worst_first():
    f = np.array([2.60e9, 2.45e9, 2.41e9, 2.55e9, 2.45e9, 2.45e9])
    q = np.array([100.0, 20.0, 200.0, 100.0, 500.0, 500.0])
    lows, highs = [LOW, 5.0e9], [HIGH, 5.2e9]
    j = judge(f, q, lows, highs)
    order = rank_hazards(j)
    # inside first: Q 500 deep at the centre (overlap ~1), then Q 200 near an edge
    # (overlap ~0.5+), then the broad Q 20 mode (its Lorentzian spills out)
    assert [tuple(r) for r in order[:4]] == [(4, 0), (5, 0), (2, 0), (1, 0)]
    assert tuple(order[4]) == (3, 0)                     # the near one
    assert len(order) == 5                               # clear pairs left out by default
    everything = rank_hazards(j, include_clear=True)
    assert everything.shape == (12, 2)
    assert all(j.status[m, b] == CLEAR for m, b in everything[5:])


@given(st.lists(st.tuples(st.floats(0.5e9, 8e9), st.floats(1.0, 1e4)), min_size=1, max_size=20),
       st.floats(0.0, 0.2))
def test_judgement_invariants(modes, margin):
    f = np.array([m[0] for m in modes])
    q = np.array([m[1] for m in modes])
    lows, highs = np.array([0.7e9, 2.4e9, 5.15e9]), np.array([0.96e9, 2.4835e9, 5.895e9])
    j = judge(f, q, lows, highs, margin=margin)
    inside = (f[:, None] >= lows) & (f[:, None] <= highs)
    assert np.array_equal(j.status == INSIDE, inside)
    assert np.all((j.distance_percent <= 0) == inside)
    assert np.all((j.overlap >= 0) & (j.overlap <= 1 + 1e-12))
    near = j.status == NEAR
    reach = 100 * np.maximum(margin, 1 / q)[:, None]
    assert np.all(j.distance_percent[near] <= reach.repeat(3, 1)[near] + 1e-9)
    order = rank_hazards(j)
    assert np.all(np.diff(j.status[order[:, 0], order[:, 1]]) >= 0)


@pytest.mark.parametrize("args, match", [
    (([0.0], [10], [1e9], [2e9]), "frequencies must be finite and > 0"),
    (([1e9], [-1], [1e9], [2e9]), "Q values must be > 0"),
    (([1e9], [10], [2e9], [1e9]), "0 < low < high"),
    (([1e9, 2e9], [10], [1e9], [2e9]), "must have one shape"),
])
def test_judge_checks_inputs(args, match):
    with pytest.raises(RingprintError, match=match):
        judge(*args)
    with pytest.raises(RingprintError, match="fraction in"):
        judge([1e9], [10], [1e9], [2e9], margin=3.0)
