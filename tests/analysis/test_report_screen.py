"""report.html in a real browser: the answer is in the first screen (issue 13).

Headless Chromium (the system's ``chromium``, driven by Playwright) opens a report
shaped like the tag demo's (two modes, three hazards, warnings, five parts) in a
1400 x 1000 viewport, measures the verdict line and the hazard table with
``getBoundingClientRect()`` and saves the screenshot. Both must lie wholly in the
first screen. Skipped only when no Chromium is installed (``.ci/run`` installs it).
"""

import shutil
import struct

import numpy as np
import pytest

from ringprint.analysis.report import write_report_html

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = pytest.mark.skipif(CHROMIUM is None, reason="no chromium on this machine "
                                "(.ci/run installs the Debian package); the screen test needs it")
VIEWPORT = {"width": 1400, "height": 1000}
FLAGS = ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]
BANDS = [{"name": "LTE-M band 20", "low_hz": 791e6, "high_hz": 862e6, "source": "case file"},
         {"name": "SRD 868", "low_hz": 863e6, "high_hz": 870e6, "source": "case file"},
         {"name": "GNSS L1", "low_hz": 1559e6, "high_hz": 1610e6, "source": "case file"},
         {"name": "BLE", "low_hz": 2400e6, "high_hz": 2483.5e6, "source": "case file"}]


def _tag_like_summary():
    """Invented figures in the shape of the tag demo's results (not physics)."""
    def mode(i, f, q, u_f, u_q, bands, shares):
        return {"index": i, "frequency_hz": f, "q": q, "decay_rate_per_s": np.pi * f / q,
                "amplitude": 1.0 / i, "error": 1e-7, "fit_error": 1e-7, "q_chu": 1.0,
                "chu_applies": False, "frequency_uncertainty_hz": u_f, "q_uncertainty": u_q,
                "uncertainty_basis": "stated bound", "rings_in": "ground plane",
                "bands": [{"band": b, "status": s, "distance_percent": d} for b, s, d in bands],
                "participation": shares}
    clear = [("LTE-M band 20", "clear", 62.0), ("SRD 868", "clear", 61.9)]
    modes = [mode(1, 2.28e9, 1.8, 0.07e9, 0.5, clear + [("GNSS L1", "near", 29.4), ("BLE", "near", 5.2)],
                  {"ground plane": 0.17, "housing": 0.27, "coin-cell holder": 0.024}),
             mode(2, 4.45e9, 2.2, 0.14e9, 0.6, clear + [("GNSS L1", "clear", 63.8), ("BLE", "near", 44.2)],
                  {"ground plane": 0.14, "housing": 0.22})]
    hazards = [{"mode": 1, "band": "BLE", "status": "near", "distance_percent": 5.2, "rank": 1},
               {"mode": 1, "band": "GNSS L1", "status": "near", "distance_percent": 29.4, "rank": 2},
               {"mode": 2, "band": "BLE", "status": "near", "distance_percent": 44.2, "rank": 3}]
    parts = [{"name": n, "material": "pec", "perfect_conductor": True, "conductor": True}
             for n in ("ground plane", "shield can", "coin-cell holder", "flex strip")]
    parts.append({"name": "housing", "material": "custom", "eps_r": 2.7, "loss_tangent": 0.006,
                  "sigma_s_per_m": 1.69e-3})
    return {"case": {"name": "tag/case", "title": "Asset tag with shield can, coin cell and folded "
                     "flex (invented demo)", "units": "mm", "parts": parts,
                     "spectrum": {"f_min_hz": 0.7e9, "f_max_hz": 5e9, "loss_at_hz": 1.871e9}},
            "grid": {"nodes": [63, 55, 41], "cells": 133920, "step_min_m": 1.824e-3,
                     "step_max_m": 1.824e-3, "cpml_cells": 10},
            "modes": modes, "hazards": hazards,
            "run": {"steps": 12288, "dt_s": 2.46e-12, "wall_time_s": 225.0},
            "notes": ["part 'housing' is about 1.5 mm thick, thinner than one cell (1.824 mm): it is "
                      "staircased to whole edges; refine the grid (cells_per_wavelength)",
                      "mode 1: Q 1.8 is below the Chu bound 1.0 check range; treat it as suspect"]}


def _record(summary, dt=2e-11, n=4000):
    t = np.arange(n) * dt
    return sum(m["amplitude"] * np.exp(-m["decay_rate_per_s"] * t) * np.cos(2 * np.pi * m["frequency_hz"] * t)
               for m in summary["modes"])


def test_verdict_and_hazard_table_are_in_the_first_screen(tmp_path):
    from playwright.sync_api import sync_playwright   # the test extras install it

    summary = _tag_like_summary()
    page_path = write_report_html(tmp_path, summary, {"record": _record(summary), "dt_s": 2e-11}, BANDS)
    shot = tmp_path / "first_screen.png"
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=FLAGS)
        try:
            page = browser.new_page(viewport=VIEWPORT)
            page.goto(page_path.resolve().as_uri())
            box = page.evaluate("""() => {
                const r = id => { const b = document.getElementById(id).getBoundingClientRect();
                                  return {top: b.top, bottom: b.bottom, left: b.left, right: b.right}; };
                return {verdict: r("verdict"), hazards: r("hazards"), width: innerWidth,
                        height: innerHeight, text: document.getElementById("verdict").innerText};
            }""")
            page.screenshot(path=str(shot))
        finally:
            browser.close()
    assert (box["width"], box["height"]) == (1400, 1000)
    for name in ("verdict", "hazards"):
        b = box[name]
        assert 0 <= b["top"] < b["bottom"] <= box["height"], (name, b)
        assert 0 <= b["left"] < b["right"] <= box["width"], (name, b)
    assert box["verdict"]["bottom"] <= box["hazards"]["top"]
    assert box["text"].startswith("Worst: mode 1 at 2.28 \u00b1 0.07 GHz, Q 1.8 \u00b1 0.5")
    head = shot.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n" and struct.unpack(">II", head[16:24]) == (1400, 1000)
    shutil.copy(shot, tmp_path.parent / "ringprint_first_screen.png")   # kept to look at
