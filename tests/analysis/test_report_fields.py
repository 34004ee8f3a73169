"""The report's hazardous-mode field section (``ringprint.analysis.report_fields``), on
the synthetic TE10l cavity of test_field_plots."""

from __future__ import annotations

import base64
import re
import xml.etree.ElementTree as ET

import pytest

from ringprint.analysis import report_fields, touch
from ringprint.errors import RingprintError
from test_field_plots import PNG_SIGNATURE, cavity_fieldset, decode, not_blank


def summary_for(fs, participation=None):
    share = participation or {"bezel ring": 0.712, "battery": 0.18, "shield can": 0.04}
    modes = [{"index": m.index, "frequency_hz": m.frequency_hz, "q": m.q,
              "frequency_uncertainty_hz": 0.01 * m.frequency_hz,      # a 1 % stated bound
              "participation": share, "rings_in": "bezel ring"} for m in fs.modes]
    hazards = [{"mode": 2, "band": "band A", "status": "inside", "distance_percent": -1.0, "rank": 1},
               {"mode": 1, "band": "band B", "status": "near", "distance_percent": 2.0, "rank": 2},
               {"mode": 2, "band": "band B", "status": "near", "distance_percent": 3.0, "rank": 3}]
    return {"results_layout": 2, "modes": modes, "hazards": hazards}


@pytest.fixture(scope="module")
def fs():
    return cavity_fieldset()


@pytest.fixture(scope="module")
def spots(fs):
    return {m.index: touch.worst_spots(fs.touch[m.index], n=4, min_separation_m=0.004,
                                       q_before=m.q) for m in fs.modes}


@pytest.fixture(scope="module")
def section(fs, spots):
    return report_fields.hazard_field_section(summary_for(fs), fs, spots)


def parse(fragment: str) -> ET.Element:
    """The fragment must be well-formed (self-closed images, escaped text)."""
    return ET.fromstring(fragment)


def test_heading_names_frequency_and_parts():
    """The frequency reads as in every table: to the digits its uncertainty supports."""
    mode = {"index": 4, "frequency_hz": 2.4113e9, "frequency_uncertainty_hz": 0.07e9,
            "participation": {"battery": 0.18, "bezel ring": 0.71, "screw": 0.01}}
    assert report_fields.mode_heading(mode) == "mode 4, 2.41 GHz: 71 % bezel ring, 18 % battery"
    assert report_fields.mode_heading({"index": 1, "frequency_hz": 9.0e8,
                                       "frequency_uncertainty_hz": 2e7}) == "mode 1, 900 MHz"


def test_modes_worst_first_with_pictures_and_tables(section, fs, spots):
    root = parse(section)
    assert root.tag == "section" and root.get("id") == "mode-fields"
    headings = [h.text for h in root.iter("h3")]
    # TE102 of 30 x 20 mm: c/2 sqrt(1/a^2 + 4/d^2) = 15.8 GHz (Pozar eq. 6.46)
    assert headings == ["mode 2, 15.80 GHz: 71 % bezel ring, 18 % battery",
                        "mode 1, 9.01 GHz: 71 % bezel ring, 18 % battery"]
    paragraphs = [p.text for p in root.iter("p")]
    assert "Q 650; inside band A, near band B (hazard rank 1)" in paragraphs
    images = [img.get("src") for img in root.iter("img")]
    assert len(images) == 4  # field picture and touch map per mode
    for src in images:
        png = base64.b64decode(src.removeprefix("data:image/png;base64,"))
        assert png.startswith(PNG_SIGNATURE)
        not_blank(decode(png))
        assert len(png) < 250_000
    for index in (1, 2):
        table = root.find(f".//table[@id='touch-spots-mode-{index}']")
        rows = table.findall("./tbody/tr")
        assert len(rows) == len(spots[index]) == 4
        first = [td.text for td in rows[0]]
        spot = spots[index][0]
        assert first[0] == "1"
        assert first[1] == ", ".join(f"{1e3 * v:.1f}" for v in spot["point_m"])
        assert float(first[2]) == pytest.approx(spot["shift_percent"], abs=0.005)


def test_text_is_escaped(fs):
    summary = summary_for(fs, {"<b>can</b> & co": 0.9})
    summary["hazards"][0]["band"] = "<script>"
    out = report_fields.hazard_field_section(summary, fs, {1: [], 2: []})
    assert "<b>" not in out and "<script>" not in out
    assert "90 % &lt;b&gt;can&lt;/b&gt; &amp; co" in out
    root = parse(out)
    assert "No touch spots" in " ".join(p.text or "" for p in root.iter("p"))


def test_at_most_max_modes_and_a_note_for_the_rest(fs, spots):
    out = report_fields.hazard_field_section(summary_for(fs), fs, spots, max_modes=1)
    root = parse(out)
    assert [h.get("id") for h in root.iter("h3")] == ["fields-mode-2"]
    assert "1 more hazardous mode without pictures here (mode 1)" in out


def test_no_hazards_gives_nothing(fs):
    summary = summary_for(fs)
    summary["hazards"] = []
    assert report_fields.hazard_field_section(summary, fs) == ""


def test_mode_without_field_or_touch_map(fs):
    one = cavity_fieldset(1)
    one.touch.clear()
    out = report_fields.hazard_field_section(summary_for(fs), one)
    assert "No field was stored for this mode." in out   # mode 2 is not in `one`
    assert "No touch map for this mode" in out
    assert len(re.findall("<img ", out)) == 1


def test_hazard_of_an_unknown_mode_is_refused(fs):
    summary = summary_for(fs)
    summary["hazards"][0]["mode"] = 9
    with pytest.raises(RingprintError, match="summary.hazards names mode 9"):
        report_fields.hazard_field_section(summary, fs)
