"""Tests of the results writers: modes.json, modes.csv, spectrum.png, report.html.

The summary below is INVENTED for a writer test: its numbers are made up to exercise
the writers and say nothing about any real object. Only the spectrum tests check a
computation, against the Fourier transform of a damped cosine (a Lorentzian line
centred on the cosine's frequency; any signal-processing text, e.g. Harris 1978)
and against numpy's own FFT as an independent implementation.
"""

from __future__ import annotations

import base64
import copy
import csv
import dataclasses
import json
import os
from html.parser import HTMLParser

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ringprint.analysis.outputs import TEMP_MARKER
from ringprint.analysis.plots import check_spectrum, render_spectrum_png, spectrum_from_record
from ringprint.analysis.report import (SAFETY_NOTE, build_report_html, write_report_html,
                                       write_results)
from ringprint.analysis.summary_table import format_summary_table
from ringprint.analysis.results import (CSV_COLUMNS, MODE_KEYS,
                                        hazards_from_modes, validate_summary, write_csv,
                                        write_json)
from ringprint.analysis.textformat import (format_bytes, format_duration, format_error,
                                           format_frequency, format_number, format_q, format_si)
from ringprint.errors import RingprintError

BANDS = [
    {"name": "test-band-low", "low_hz": 1.70e9, "high_hz": 1.88e9, "source": "invented"},
    {"name": "test-band-high", "low_hz": 2.40e9, "high_hz": 2.48e9, "source": "invented"},
]


def _mode(index, f, q, amp, err, q_chu, entries, participation, **extra):
    return {"index": index, "frequency_hz": f, "q": q, "decay_rate_per_s": np.pi * f / q,
            "amplitude": amp, "error": err, "q_chu": q_chu,
            "bands": [{"band": b, "status": s, "distance_percent": d} for b, s, d in entries],
            "participation": participation, **extra}


def invented_summary():
    """Made-up modes of a made-up assembly (writer test data, not physics)."""
    modes = [
        _mode(1, 1.2345678e9, 8.4, 0.8, 2e-6, 3.1,
              [("test-band-low", "clear", 27.0), ("test-band-high", "clear", 49.0)],
              {"frame segment": 0.7, "battery": 0.2}, confidence="high"),
        _mode(2, 1.80e9, 52.3, 0.3, 4e-4, 1.2,
              [("test-band-low", "inside", -4.4), ("test-band-high", "clear", 25.0)],
              {"shield can": 0.9}, confidence="high"),
        _mode(3, 2.36e9, 1234.5, 0.05, 0.012, None,
              [("test-band-low", "clear", 20.0), ("test-band-high", "near", 1.7)],
              {"flex cable": 0.55, "frame segment": 0.3}, confidence="low"),
    ]
    return {
        "case": {"name": "made-up-handset", "title": "Made-up handset <test>",
                 "parts": [{"name": "frame segment", "material": "metal"},
                           {"name": "flex cable", "material": "polyimide"}],
                 "spectrum": {"f_min_hz": 0.8e9, "f_max_hz": 3.0e9}},
        "grid": {"nodes": [120, 80, 40], "cells": 366639, "step_min_m": 5e-4,
                 "step_max_m": 5e-4, "cpml_cells": 10},
        "modes": modes,
        "hazards": [
            {"mode": 3, "band": "test-band-high", "status": "near", "distance_percent": 1.7,
             "rank": 2},
            {"mode": 2, "band": "test-band-low", "status": "inside", "distance_percent": -4.4,
             "rank": 1},
        ],
        "run": {"steps": 40000, "dt_s": 9.6e-13, "wall_time_s": 312.4,
                "memory_bytes": 812345678},
        "notes": ["made-up note for the test"],
    }


def invented_record(summary, dt=2e-11, n=4000):
    """A probe record made of the invented modes as damped cosines."""
    t = np.arange(n) * dt
    return sum(m["amplitude"] * np.exp(-m["decay_rate_per_s"] * t)
               * np.cos(2 * np.pi * m["frequency_hz"] * t) for m in summary["modes"])


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    out = tmp_path_factory.mktemp("run") / "results"  # does not exist yet
    summary = invented_summary()
    paths = write_results(out, summary, {"record": invented_record(summary), "dt_s": 2e-11},
                          BANDS, log_lines=["made-up log line 1", "made-up log line 2"])
    return out, summary, paths


class _Collector(HTMLParser):
    """Records start tags in order, every attribute, and the visible text."""

    def __init__(self):
        super().__init__()
        self.tags, self.text, self.table_ids = [], [], []
        self._table_rows: dict[str, list[list[str]]] = {}
        self._current_table = None
        self._row = None
        self._in_cell = False

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.tags.append((tag, attrs))
        if tag == "table":
            self._current_table = attrs.get("id")
            self.table_ids.append(self._current_table)
            self._table_rows[self._current_table] = []
        elif tag == "tr":
            self._row = []
        elif tag in ("td", "th"):
            self._in_cell = True
            self._row.append("")

    def handle_endtag(self, tag):
        if tag == "tr" and self._row is not None:
            self._table_rows[self._current_table].append(self._row)
            self._row = None
        elif tag in ("td", "th"):
            self._in_cell = False

    def handle_data(self, data):
        self.text.append(data)
        if self._in_cell and self._row is not None:
            self._row[-1] += data

    def rows(self, table_id):
        return self._table_rows[table_id]


def _parse(path):
    parser = _Collector()
    parser.feed(path.read_text(encoding="utf-8"))
    parser.close()
    return parser


# --- the whole set ----------------------------------------------------------------

def test_write_results_writes_every_file_and_no_temp(written):
    out, _, paths = written
    assert sorted(os.listdir(out)) == ["modes.csv", "modes.json", "report.html", "run.log",
                                       "spectrum.png"]
    assert set(paths) == {"json", "csv", "png", "html", "log"}
    assert all(p.parent == out for p in paths.values())
    assert (out / "run.log").read_text().splitlines() == ["made-up log line 1",
                                                         "made-up log line 2"]


def test_json_round_trip(written):
    out, summary, _ = written
    loaded = json.loads((out / "modes.json").read_text(encoding="utf-8"))
    expected = json.loads(json.dumps(validate_summary(summary)))
    expected["bands"] = BANDS
    from ringprint import __version__
    expected["ringprint_version"] = __version__
    assert loaded == expected
    for mode in loaded["modes"]:
        assert set(MODE_KEYS) <= set(mode)
    assert [m["index"] for m in loaded["modes"]] == [1, 2, 3]


def test_write_json_converts_numpy_and_round_trips(tmp_path):
    summary = invented_summary()
    summary["modes"][0]["frequency_hz"] = np.float64(summary["modes"][0]["frequency_hz"])
    summary["modes"][0]["index"] = np.int64(1)
    summary["grid"]["nodes"] = np.array([120, 80, 40])
    loaded = json.loads(write_json(tmp_path, summary).read_text())
    assert loaded["grid"]["nodes"] == [120, 80, 40]
    assert loaded["modes"][0]["frequency_hz"] == 1.2345678e9
    assert loaded["modes"][1] == invented_summary()["modes"][1]


def test_csv_one_row_per_mode_with_contract_columns(written):
    out, summary, _ = written
    with open(out / "modes.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(summary["modes"])
    assert set(MODE_KEYS) - {"error"} <= set(rows[0]) and list(rows[0])[:len(CSV_COLUMNS)] == list(CSV_COLUMNS)
    for row, mode in zip(rows, summary["modes"]):
        assert int(row["index"]) == mode["index"]
        for key in ("frequency_hz", "q", "decay_rate_per_s", "amplitude"):
            assert float(row[key]) == mode[key]  # full precision
        assert float(row["fit_error"]) == mode["error"]   # the column is fit_error (issue 13)
        assert "test-band-low: " in row["bands"] and "test-band-high: " in row["bands"]
    assert "error" not in rows[0]
    assert rows[2]["q_chu"] == "" and rows[2]["q_over_chu"] == ""  # unknown -> empty
    assert float(rows[0]["q_over_chu"]) == pytest.approx(8.4 / 3.1)
    assert rows[1]["worst_status"] == "inside" and rows[2]["worst_status"] == "near"
    assert rows[0]["participation"] == "frame segment=0.7; battery=0.2"


# --- the HTML report --------------------------------------------------------------

def test_html_is_self_contained(written):
    out, _, _ = written
    text = (out / "report.html").read_text(encoding="utf-8")
    assert "http://" not in text and "https://" not in text
    parsed = _parse(out / "report.html")
    tags = [t for t, _ in parsed.tags]
    assert "script" not in tags and "link" not in tags and "iframe" not in tags
    sources = [a["src"] for t, a in parsed.tags if "src" in a]
    assert sources and all(s.startswith("data:image/png;base64,") for s in sources)
    png = base64.b64decode(sources[0].split(",", 1)[1], validate=True)
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    assert not any(v and "url(" in v for _, a in parsed.tags for v in a.values())


def test_html_structure_the_answer_first(written):
    """Issue 13: the verdict line, then the hazard table, then the run's warnings and the
    safety note; all modes, the spectrum, the case and the run facts after them."""
    out, _, _ = written
    parsed = _parse(out / "report.html")
    ids = parsed.table_ids
    assert "hazards" in ids and "modes" in ids and "run-facts" in ids
    assert ids.index("hazards") < ids.index("modes") < ids.index("case-facts") < ids.index("run-facts")
    order = [a.get("id") for _, a in parsed.tags if a.get("id")]
    assert order.index("verdict") < order.index("hazards") < order.index("notes") \
        < order.index("safety-note") < order.index("modes") < order.index("spectrum")
    assert [t for t, _ in parsed.tags].index("h1") < [a.get("id") for _, a in parsed.tags].index("verdict")
    hazard_rows = parsed.rows("hazards")[1:]
    # ranked worst first, whatever order the summary listed them in
    assert [(r[0], r[1], r[4], r[5]) for r in hazard_rows] == [
        ("1", "2", "test-band-low", "inside"), ("2", "3", "test-band-high", "near")]
    assert len(parsed.rows("modes")) == 1 + 3


def test_html_case_summary_run_facts_and_safety(written):
    out, _, _ = written
    parsed = _parse(out / "report.html")
    text = " ".join("".join(parsed.text).split())
    assert " ".join(SAFETY_NOTE.split()) in text
    assert "SAR" in text and "local codes" in text
    assert "Made-up handset <test>" in text  # escaped in HTML, read back as text
    for word in ("frame segment", "polyimide", "800 MHz to 3 GHz",
                 "120 × 80 × 40 nodes, 366,639 cells, cell 500 µm",
                 "test-band-low", "40,000", "5 min 12 s", "775 MiB", "made-up note"):
        assert word in text, word
    run = {r[0]: r[1] for r in parsed.rows("run-facts")}
    assert run["time steps"] == "40,000" and run["time step"] == "960 fs"
    assert run["simulated time"] == "38.4 ns"


def test_html_derives_hazards_when_summary_has_none(tmp_path):
    summary = invented_summary()
    del summary["hazards"]
    png = render_spectrum_png(np.linspace(1e9, 3e9, 50), np.zeros(50), dpi=30)
    path = tmp_path / "report.html"
    path.write_text(build_report_html(validate_summary(summary, BANDS), png, BANDS))
    rows = _parse(path).rows("hazards")[1:]
    assert [(r[1], r[5]) for r in rows] == [("2", "inside"), ("3", "near")]


def test_hazards_from_modes_order():
    """inside before near; then larger overlap; then smaller distance; then higher Q."""
    e = lambda b, s, d, **k: {"band": b, "status": s, "distance_percent": d, **k}  # noqa: E731
    modes = [
        {"index": 1, "q": 10.0, "bands": [e("A", "near", 0.5)]},
        {"index": 2, "q": 20.0, "bands": [e("A", "near", 2.0), e("B", "inside", -1.0)]},
        {"index": 3, "q": 30.0, "bands": [e("B", "inside", -1.0), e("C", "clear", 9.0)]},
        {"index": 4, "q": 5.0, "bands": [e("C", "inside", -0.1, overlap=0.9)]},
    ]
    got = [(h["mode"], h["band"], h["rank"]) for h in hazards_from_modes(modes)]
    assert got == [(4, "C", 1), (3, "B", 2), (2, "B", 3), (1, "A", 4), (2, "A", 5)]


def test_write_report_html_alone(tmp_path):
    summary = invented_summary()
    spectrum = {"frequency_hz": np.linspace(0.8e9, 3e9, 400), "magnitude_db": -np.linspace(0, 60, 400)}
    p = write_report_html(tmp_path, summary, spectrum, BANDS)
    assert p.name == "report.html" and os.listdir(tmp_path) == ["report.html"]
    assert "hazards" in _parse(p).table_ids


# --- the picture ------------------------------------------------------------------

def test_spectrum_png_is_a_real_non_blank_image(written):
    import matplotlib.image as mpimg

    out, _, _ = written
    img = mpimg.imread(out / "spectrum.png")
    assert img.ndim == 3 and img.shape[0] >= 300 and img.shape[1] >= 600
    grey = img[..., :3].mean(axis=2)
    assert grey.std() > 0.05  # not one flat colour
    assert (grey < 0.2).mean() > 0.005  # a dark trace, axes and labels are drawn
    assert (grey > 0.95).mean() > 0.3  # on a light background
    shaded = (np.abs(img[..., 0] - img[..., 2]) > 0.03) & (grey > 0.3)
    assert shaded.mean() > 0.005  # the tinted band shading is there


def test_render_without_modes_bands_or_limits_uses_whole_span():
    import io

    import matplotlib.image as mpimg

    png = render_spectrum_png(np.linspace(1e6, 9e6, 200), np.sin(np.linspace(0, 9, 200)), dpi=40)
    img = mpimg.imread(io.BytesIO(png), format="png")
    assert img.shape[:2] == (round(4.8 * 40), 9 * 40) and img[..., :3].std() > 0.05


def test_spectrum_names_bands_and_gives_f_and_q_at_each_mode(monkeypatch):
    """Issue 13: the band names on the plot itself, f and Q at every mode marker (written
    as the tables write them), and what 0 dB is on the axis."""
    from matplotlib.axes import Axes

    texts = []
    real_text, real_annotate, real_ylabel = Axes.text, Axes.annotate, Axes.set_ylabel
    monkeypatch.setattr(Axes, "text", lambda self, x, y, s, *a, **k: texts.append(s) or real_text(self, x, y, s, *a, **k))
    monkeypatch.setattr(Axes, "annotate", lambda self, s, *a, **k: texts.append(s) or real_annotate(self, s, *a, **k))
    monkeypatch.setattr(Axes, "set_ylabel", lambda self, s, *a, **k: texts.append(s) or real_ylabel(self, s, *a, **k))
    summary = _with_uncertainty()
    freq, mag = spectrum_from_record(invented_record(summary), 2e-11)
    render_spectrum_png(freq, mag, summary["modes"], BANDS, (0.8e9, 3e9), dpi=40)
    assert "test-band-low" in texts and "test-band-high" in texts
    assert "1: 1.235 GHz\nQ 8.4" in texts and "2: 1.80 GHz\nQ 52" in texts, texts
    assert "probe spectrum (dB re its peak at any frequency)" in texts


def test_spectrum_png_same_picture_as_embedded(written):
    out, _, _ = written
    parsed = _parse(out / "report.html")
    src = next(a["src"] for t, a in parsed.tags if t == "img")
    assert base64.b64decode(src.split(",", 1)[1]) == (out / "spectrum.png").read_bytes()


def test_spectrum_from_record_peaks_at_the_mode():
    """A damped cosine's spectrum is a Lorentzian centred at its frequency f0 (Fourier
    transform of exp(-g t) cos(2 pi f0 t)); the Hann window and zero padding keep the
    peak there to within the padded bin spacing (+ a small image-term pull)."""
    dt, n, f0, g = 1e-11, 3000, 2.2e9, 2e7
    t = np.arange(n) * dt
    record = np.exp(-g * t) * np.cos(2 * np.pi * f0 * t)
    freq, mag = spectrum_from_record(record, dt)
    bin_hz = freq[1] - freq[0]
    assert bin_hz <= 1 / (4 * n * dt) + 1e-6
    assert abs(freq[np.argmax(mag)] - f0) <= bin_hz
    assert mag.max() == 0.0 and mag.min() >= -120.0


def test_spectrum_from_record_matches_numpy_fft_and_combines_pickups():
    """Without window and padding the result is |FFT|^2 in dB re peak (numpy.fft as the
    independent reference); two pickups add their powers."""
    rng = np.random.default_rng(7)
    a, b = rng.standard_normal(256), rng.standard_normal(256)
    freq, mag = spectrum_from_record(np.vstack([a, b]), 1e-9, pad_factor=1, window="boxcar")
    power = sum(np.abs(np.fft.rfft(x - x.mean())) ** 2 for x in (a, b))
    ref = 10 * np.log10(power / power.max())
    keep = ref > -100
    np.testing.assert_allclose(mag[keep], ref[keep], atol=1e-9)
    np.testing.assert_allclose(freq, np.fft.rfftfreq(256, 1e-9))


def test_start_index_drops_the_source_part():
    dt = 1e-11
    t = np.arange(4000) * dt
    record = np.cos(2 * np.pi * 1e9 * t)
    record[:2000] += 50 * np.cos(2 * np.pi * 3e9 * t[:2000])  # a loud "source" early on
    freq, mag = spectrum_from_record(record, dt, start_index=2000)
    assert abs(freq[np.argmax(mag)] - 1e9) < 2 * (freq[1] - freq[0])
    assert mag[np.argmin(np.abs(freq - 3e9))] < -60


@pytest.mark.parametrize("spectrum, words", [
    ({"frequency_hz": [3.0, 2.0, 1.0], "magnitude_db": [0, 0, 0]}, "strictly increasing"),
    ({"frequency_hz": [1.0, 2.0], "magnitude_db": [0.0]}, "same length"),
    ({"frequency_hz": [1.0, 2.0]}, "magnitude_db"),
    ({"record": np.ones(100)}, "dt_s"),
    ({"record": np.ones(100), "dt_s": -1.0}, "dt_s"),
    ({"record": np.ones(100), "dt_s": 1e-9, "start_index": 99}, "at least 8"),
    ({"record": np.full(100, np.nan), "dt_s": 1e-9}, "NaN"),
    ([1, 2, 3], "dict"),
])
def test_bad_spectrum_is_a_ringprint_error(spectrum, words):
    with pytest.raises(RingprintError, match=words):
        check_spectrum(spectrum)


# --- checks of the summary --------------------------------------------------------

def _broken(edit):
    summary = invented_summary()
    edit(summary)
    return summary


@pytest.mark.parametrize("edit, where", [
    (lambda s: s.pop("modes"), "summary has no 'modes'"),
    (lambda s: s["modes"][1].pop("q"), r"summary.modes\[1\] has no 'q'"),
    (lambda s: s["modes"][0].update(q=float("nan")), r"summary.modes\[0\].q is nan"),
    (lambda s: s["modes"][0].update(amplitude=1 + 2j), r"summary.modes\[0\].amplitude is complex"),
    (lambda s: s["modes"][0].update(frequency_hz=5e9), r"summary.modes\[1\].frequency_hz"),
    (lambda s: s["modes"][2].update(index=7), r"summary.modes\[2\].index"),
    (lambda s: s["modes"][0]["bands"][0].update(status="close"), "'inside', 'near' or 'clear'"),
    (lambda s: s["modes"][0]["bands"][0].update(band="no-such-band"), "not in the band list"),
    (lambda s: s["modes"][0]["participation"].update(battery=1.5), "between 0 and 1"),
    (lambda s: s["hazards"][0].update(mode=9), r"summary.hazards\[0\].mode"),
    (lambda s: s["hazards"][0].update(rank=1), "repeats a rank"),
    (lambda s: s["hazards"][0].update(band="test-band-low"), "mode 3's entry for 'test-band-low' says 'clear'"),
    (lambda s: s["modes"][2]["bands"].pop(1), "'test-band-high' is not among mode 3's bands"),
    (lambda s: s.update(case={"title": "no name"}), "summary.case has no 'name'"),
])
def test_bad_summary_names_the_key(edit, where):
    with pytest.raises(RingprintError, match=where) as err:
        validate_summary(_broken(edit), BANDS)
    assert "\n" not in str(err.value) and ";" in str(err.value)  # one line: what; fix


def test_bad_input_writes_nothing(tmp_path):
    out = tmp_path / "results"
    bad = _broken(lambda s: s["modes"][0].update(q=-1.0))
    with pytest.raises(RingprintError):
        write_results(out, bad, {"frequency_hz": [1e9, 2e9], "magnitude_db": [0, -3]}, BANDS)
    assert not out.exists()


def test_output_path_that_is_a_file(tmp_path):
    f = tmp_path / "results"
    f.write_text("")
    spectrum = {"frequency_hz": [1e9, 2e9], "magnitude_db": [0, -3]}
    with pytest.raises(RingprintError, match="is a file"):
        write_results(f, invented_summary(), spectrum, BANDS)


def test_failure_mid_run_leaves_only_complete_files(tmp_path, monkeypatch):
    """If the HTML step fails, the files already written are complete and nothing
    partial or temporary is left."""
    import ringprint.analysis.report as report

    def boom(*args, **kwargs):
        raise RuntimeError("pretend failure while building the page")
    monkeypatch.setattr(report, "build_report_html", boom)
    spectrum = {"frequency_hz": np.linspace(1e9, 3e9, 50), "magnitude_db": np.zeros(50)}
    with pytest.raises(RuntimeError):
        write_results(tmp_path, invented_summary(), spectrum, BANDS)
    assert sorted(os.listdir(tmp_path)) == ["modes.csv", "modes.json", "spectrum.png"]
    json.loads((tmp_path / "modes.json").read_text())


def test_band_objects_are_accepted(tmp_path):
    @dataclasses.dataclass(frozen=True)
    class BandLike:  # stands in for ringprint.analysis.bands.Band
        name: str
        low_hz: float
        high_hz: float
        source: str = ""

    bands = [BandLike(**b) for b in BANDS]
    p = write_csv(tmp_path, invented_summary())
    assert p.exists()
    assert validate_summary(invented_summary(), bands)["modes"][0]["index"] == 1


def test_writers_do_not_modify_their_input(tmp_path):
    summary = invented_summary()
    before = copy.deepcopy(summary)
    write_json(tmp_path, summary)
    write_csv(tmp_path, summary)
    assert summary == before


# --- text ------------------------------------------------------------------------

def test_summary_table_names_the_carrier_as_the_report_does():
    """Issue 13: one word for the carrier: 'rings in', and 'no part (air)' when none."""
    summary = invented_summary()
    summary["modes"][0]["rings_in"] = "frame segment"
    summary["modes"][1]["rings_in"] = None
    lines = format_summary_table(summary).splitlines()
    assert lines[0].rstrip().endswith("rings in")
    assert lines[2].rstrip().endswith("frame segment") and lines[3].rstrip().endswith("no part (air)")


def test_summary_table_columns_are_aligned():
    table = format_summary_table(invented_summary())
    lines = table.splitlines()
    assert len(lines) == 2 + 3
    header, rule = lines[0], lines[1]
    assert header.split()[:3] == ["mode", "frequency", "Q"]
    # every right-aligned column ends where its header ends
    q_end = header.index(" Q ") + 2
    for line in lines[2:]:
        assert line[q_end - 1] != " " and line[q_end] == " "
    assert "test-band-low inside" in lines[3] and "test-band-high near (1.7 %)" in lines[4]
    assert lines[2].rstrip().endswith("-")  # mode 1 hits no band
    assert set(rule) <= {"-", " "}
    empty = dict(invented_summary(), modes=[], hazards=[])
    assert "no resonances" in format_summary_table(empty)


@pytest.mark.parametrize("func, value, text", [
    (format_q, 1234.5, "1230"), (format_q, 0.866, "0.866"), (format_q, 5, "5.00"),
    (format_q, 43.21, "43.2"), (format_q, 4.567e6, "4.57e6"), (format_q, None, "-"),
    (format_error, 3.4e-7, "0.34 ppm"), (format_error, 0.012, "1.2 %"),
    (format_error, 1.5e-4, "150 ppm"),
    (format_bytes, 3 * 2**30, "3.00 GiB"), (format_bytes, 512, "512 B"),
    (format_duration, 245, "4 min 05 s"), (format_duration, 12.34, "12.3 s"),
    (format_duration, 3725, "1 h 02 min"),
    (lambda x: format_si(x, "s"), 9.6e-13, "960 fs"),
    (format_number, 0.8, "0.800"), (format_number, 4.617e8, "4.62e8"),
])
def test_number_formats(func, value, text):
    assert func(value) == text


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=1e-2, max_value=9.9e5))
def test_q_has_three_significant_digits(q):
    shown = format_q(q)
    assert abs(float(shown) - q) <= 0.005 * q + 1e-12  # rounding to 3 digits: <= 0.5 %
    digits = shown.replace(".", "").lstrip("0")
    if "." in shown:
        assert len(digits) == 3, shown  # e.g. 0.866, 5.00, 43.2
    else:
        assert len(digits) >= 3 and set(digits[3:]) <= {"0"}, shown  # e.g. 1230


def test_frequency_digits_follow_the_error():
    assert format_frequency(1.57542e9, rel_error=1e-6) == "1.575420 GHz"
    assert format_frequency(1.57542e9, rel_error=1e-3) == "1.575 GHz"
    assert format_frequency(845.2e6) == "845.20 MHz"
    assert format_frequency(7e8, trim=True) == "700 MHz"
    assert format_frequency(2.5e9, trim=True) == "2.5 GHz"


def test_no_temp_files_anywhere(written):
    out, _, _ = written
    assert not [n for n in os.listdir(out) if TEMP_MARKER in n or n.startswith(".")]


# --- uncertainty ------------------------------------------------------------------

def _with_uncertainty():
    """The invented summary with invented uncertainties (writer test data, not physics)."""
    summary = invented_summary()
    for m, (u_f, u_q, basis) in zip(summary["modes"], [(1.2e7, 0.6, "grid study"),
                                                       (2.0e7, 3.1, "stated bound"),
                                                       (3.0e7, 160.0, "stated bound")]):
        m.update(fit_error=m["error"], frequency_uncertainty_hz=u_f, q_uncertainty=u_q,
                 uncertainty_basis=basis, frequency_extrapolated_hz=None, q_extrapolated=None)
    summary["modes"][0].update(frequency_extrapolated_hz=1.2301e9, q_extrapolated=8.31)
    summary["uncertainty"] = {"basis": "grid study", "stated_bound": "made-up basis",
                              "grid_study": {"method": "made-up method", "ratio": 1.3,
                                             "grids": [{"cells_per_wavelength": 20.0},
                                                       {"cells_per_wavelength": 15.38}],
                                             "order_reason": "1: made up", "safety_factor": 3.0,
                                             "matched": [1], "unmatched": [
                                                 {"mode": 2, "reason": "made-up reason"}]}}
    return summary


def test_tables_print_the_digits_the_uncertainty_supports():
    """f and Q with their uncertainty (one digit, two when it is 1; Q / Q_Chu to Q's
    relative uncertainty); the fit error in ppm is gone from the terminal table."""
    table = format_summary_table(_with_uncertainty())
    lines = table.splitlines()
    assert "uncertainty from" in lines[0] and "error" not in lines[0] and "ppm" not in table
    assert "1.235 \u00b1 0.012 GHz" in lines[2] and "8.4 \u00b1 0.6" in lines[2]
    assert "1.80 \u00b1 0.02 GHz" in lines[3] and "52 \u00b1 4" in lines[3]
    assert "1230 \u00b1 160" in lines[4]
    assert "2.7" in lines[2].split()  # Q / Q_Chu = 2.71 to 7 % -> 2.7


def test_report_shows_uncertainty_and_keeps_the_fit_error_in_details(tmp_path):
    summary = _with_uncertainty()
    path = write_report_html(tmp_path, summary, {"record": invented_record(summary), "dt_s": 2e-11},
                             BANDS)
    parser = _parse(path)
    modes = parser.rows("modes")
    assert modes[0][6] == "uncertainty from" and modes[1][1] == "1.235 \u00b1 0.012 GHz"
    assert modes[1][6] == "grid study" and modes[2][6] == "stated bound"
    details = parser.rows("uncertainty")
    assert details[0][-1] == "fit error" and details[1][-1] == "2.0 ppm"
    # one mode reads the same everywhere (issue 13): the details use the same digits
    assert details[1][1] == "1.235 \u00b1 0.012 GHz" and details[1][2] == "1.230 GHz"
    assert details[2][2] == "-"                                   # not extrapolated
    hazards = parser.rows("hazards")
    assert hazards[1][2] == "1.80 \u00b1 0.02 GHz"                 # rank 1 is mode 2
    text = " ".join(parser.text)
    assert "Mode 2 kept the stated bound: made-up reason." in text
    assert "Stated bound: made-up basis." in text


def test_csv_has_the_uncertainty_columns(tmp_path):
    path = write_csv(tmp_path, _with_uncertainty())
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    for key in ("fit_error", "frequency_uncertainty_hz", "q_uncertainty", "uncertainty_basis",
                "frequency_extrapolated_hz", "q_extrapolated", "grid_order"):
        assert key in rows[0]
    assert float(rows[0]["frequency_uncertainty_hz"]) == 1.2e7
    assert rows[1]["frequency_extrapolated_hz"] == "" and rows[0]["grid_order"] == ""
    plain = write_csv(tmp_path / "plain.csv", invented_summary())   # no uncertainty: empty cells
    with open(plain, newline="", encoding="utf-8") as fh:
        assert next(csv.DictReader(fh))["q_uncertainty"] == ""


@pytest.mark.parametrize("edit, where", [
    (lambda m: m.update(q_uncertainty=-1.0), r"modes\[0\].q_uncertainty"),
    (lambda m: m.update(uncertainty_basis="guess"), "'grid study' or 'stated bound'"),
    (lambda m: m.update(frequency_uncertainty_hz="1 MHz"), r"modes\[0\].frequency_uncertainty_hz"),
])
def test_bad_uncertainty_names_the_key(edit, where):
    summary = _with_uncertainty()
    edit(summary["modes"][0])
    with pytest.raises(RingprintError, match=where):
        validate_summary(summary, BANDS)
