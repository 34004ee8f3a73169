"""``ringprint show``: every bad input is one line on stderr and a non-zero exit; a
good results directory gives a picture of the chosen mode.

The results directory is made by hand: modes.json in results layout 2 and
fields.h5 written by ``fieldset_io.write_fieldset`` from the synthetic TE10l cavity
of test_field_plots."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from ringprint.analysis import cli
from ringprint.analysis.fieldset_io import write_fieldset
from test_field_plots import PNG_SIGNATURE, cavity_fieldset, decode, not_blank


def summary_for(fs, hazards=True) -> dict:
    modes = [{"index": m.index, "frequency_hz": m.frequency_hz, "q": m.q,
              "participation": {"bezel ring": 0.7, "battery": 0.2}, "rings_in": "bezel ring"}
             for m in fs.modes]
    return {"results_layout": 2, "modes": modes,
            "hazards": [{"mode": 2, "band": "invented band", "status": "inside",
                         "distance_percent": -1.0, "rank": 1},
                        {"mode": 1, "band": "invented band", "status": "near",
                         "distance_percent": 2.0, "rank": 2}] if hazards else [],
            "fields": {"file": "fields.h5", "lattice_step_m": fs.spacing}}


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    fs = cavity_fieldset()
    out = tmp_path_factory.mktemp("run")
    (out / "modes.json").write_text(json.dumps(summary_for(fs)))
    write_fieldset(out / "fields.h5", fs)
    return out


def fails(capsys, argv, *pieces):
    """Run the CLI; expect exit 1 and one stderr line holding every piece, no traceback."""
    assert cli.main(argv) == 1
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("ringprint: error: ")
    assert "Traceback" not in err
    for piece in pieces:
        assert piece in err, err
    return err


def test_missing_dir(tmp_path, capsys):
    fails(capsys, ["show", str(tmp_path / "nope"), "--png", str(tmp_path / "a.png")],
          "no such directory")


def test_dir_without_modes_json(tmp_path, capsys):
    fails(capsys, ["show", str(tmp_path)], "has no modes.json")


def test_broken_modes_json(tmp_path, capsys):
    (tmp_path / "modes.json").write_text("{ not json")
    fails(capsys, ["show", str(tmp_path)], "not readable JSON", "run the case again")


@pytest.mark.parametrize("layout", [None, 1])
def test_older_results(tmp_path, capsys, layout):
    summary = {"modes": [{"index": 1, "frequency_hz": 1e9, "q": 10.0}]}
    if layout is not None:
        summary["results_layout"] = layout
    (tmp_path / "modes.json").write_text(json.dumps(summary))
    fails(capsys, ["show", str(tmp_path)], "older ringprint (no mode fields)", "run the case again")


def test_fields_skipped(tmp_path, capsys):
    summary = summary_for(cavity_fieldset(1), hazards=False)
    summary["fields"] = None   # what `ringprint run --no-fields` writes
    (tmp_path / "modes.json").write_text(json.dumps(summary))
    fails(capsys, ["show", str(tmp_path), "--png", str(tmp_path / "a.png")],
          "holds no mode fields", "--no-fields", "run the case again with fields")


def test_fields_file_missing(tmp_path, capsys):
    (tmp_path / "modes.json").write_text(json.dumps(summary_for(cavity_fieldset(1))))
    fails(capsys, ["show", str(tmp_path)], "holds no mode fields")


def test_no_such_mode(results, tmp_path, capsys):
    fails(capsys, ["show", str(results), "--mode", "12", "--png", str(tmp_path / "a.png")],
          "there is no mode 12 (this result has modes 1-2)")


def test_no_display_asks_for_png(results, capsys, monkeypatch):
    monkeypatch.setattr(sys, "platform", "linux")
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    fails(capsys, ["show", str(results)], "no display", "pass --png FILE")


def test_png_folder_missing(results, tmp_path, capsys):
    fails(capsys, ["show", str(results), "--png", str(tmp_path / "no" / "a.png")],
          "does not exist")


def test_bad_quantity_is_a_usage_error(results, capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(["show", str(results), "--quantity", "b"])
    assert exc.value.code == 2


def test_default_mode_is_the_worst_hazard(results, tmp_path, capsys):
    png = tmp_path / "view.png"
    assert cli.main(["show", str(results), "--png", str(png), "--quantity", "energy"]) == 0
    assert "mode 2" in capsys.readouterr().out
    data = png.read_bytes()
    assert data.startswith(PNG_SIGNATURE)
    img = decode(data)
    assert img.shape[:2] == (768, 1024)
    not_blank(img, min_std=0.08, min_colours=200)


def test_default_mode_without_hazards_is_mode_1(tmp_path, capsys):
    fs = cavity_fieldset()
    (tmp_path / "modes.json").write_text(json.dumps(summary_for(fs, hazards=False)))
    write_fieldset(tmp_path / "fields.h5", fs)
    assert cli.main(["show", str(tmp_path), "--png", str(tmp_path / "v.png")]) == 0
    assert "mode 1" in capsys.readouterr().out


def test_command_line_prints_nothing_on_stderr(results, tmp_path):
    """The installed entry point, headless: no VTK display warning leaks out."""
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY")}
    png = tmp_path / "cli.png"
    done = subprocess.run([sys.executable, "-m", "ringprint.analysis.cli", "show", str(results),
                           "--mode", "1", "--png", str(png)], capture_output=True, text=True,
                          env=env, timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    assert png.read_bytes().startswith(PNG_SIGNATURE)


def test_title_writes_f_and_q_as_the_report_does():
    """Issue 13: one mode reads the same everywhere; the 3-D view's title too."""
    from ringprint.analysis import cmd_show

    summary = {"modes": [{"index": 1, "frequency_hz": 2.28196e9, "q": 1.7947,
                          "frequency_uncertainty_hz": 7e7, "q_uncertainty": 0.5}]}
    assert cmd_show._title(summary, 1) == "mode 1, 2.28 GHz, Q 1.8"
    assert cmd_show._title({"modes": []}, 1) is None
