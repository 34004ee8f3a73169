"""Bad input through the command line: one line on stderr, exit 1, nothing written.

Runs ``ringprint mesh`` over every file of the two bad-input corpora:

- ``tests/corpus/meshes/`` (bad part files; ``expected.json`` gives, per file, the
  loading keywords and a fragment the message must contain): each is referenced from
  a minimal case file written in tmp_path;
- ``tests/corpus/cases/`` (bad case files; ``# expect:`` comments give the fragment):
  each is run in place, since several reference ``parts/plate.stl`` beside them.

plus a grid too large for memory, an output path that is a file and an output name
taken by a directory.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import meshio
import numpy as np
import pytest

from ringprint.analysis import cli

CORPUS = Path(__file__).resolve().parents[1] / "corpus"
MESHES = sorted(p for p in (CORPUS / "meshes").iterdir() if p.suffix not in (".json", ".md"))
EXPECTED = json.loads((CORPUS / "meshes" / "expected.json").read_text())
CASES = sorted((CORPUS / "cases").glob("*.toml"))


def run_cli(argv, capsys):
    """Run the CLI; return (exit code, stderr lines)."""
    code = cli.main(argv)
    err = capsys.readouterr().err
    return code, err.splitlines()


def assert_one_line_error(code, lines, *fragments):
    assert code == 1, lines
    assert len(lines) == 1, lines
    line = lines[0]
    assert line.startswith("ringprint: error: "), line
    assert "Traceback" not in line
    for fragment in fragments:
        assert fragment in line, (fragment, line)


def assert_nothing_written(out: Path):
    assert not out.exists() or list(out.iterdir()) == [], list(out.iterdir())


def minimal_case(folder: Path, mesh: Path, units: str = "mm", extra: str = "") -> Path:
    case = folder / "case.toml"
    case.write_text(f"""\
units = "{units}"
[spectrum]
f_min = "1 GHz"
f_max = "3 GHz"
[[part]]
name = "part"
file = "{mesh.as_posix()}"
material = "pec"
{extra}""")
    return case


def test_corpora_are_there():
    assert len(MESHES) >= 10 and len(CASES) >= 30
    assert {p.name for p in MESHES} == set(EXPECTED)


@pytest.mark.parametrize("mesh", MESHES, ids=[p.name for p in MESHES])
def test_bad_mesh_file(mesh, tmp_path, capsys):
    expected = EXPECTED[mesh.name]
    units = expected["kwargs"].get("unit", "mm")
    case = minimal_case(tmp_path, mesh, units=units)
    out = tmp_path / "out"
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    if "unit" in expected["kwargs"]:
        # a bad unit is a case-file key here: the message names the case file and key
        assert_one_line_error(code, lines, str(case), "units", units)
    else:
        assert_one_line_error(code, lines, mesh.name, expected["message_contains"])
    assert_nothing_written(out)


@pytest.mark.parametrize("case", CASES, ids=[p.stem for p in CASES])
def test_bad_case_file(case, tmp_path, capsys):
    expect = re.search(r"^# expect: (.+)$", case.read_text(), re.M)
    assert expect, f"{case.name} lacks its '# expect:' comment"
    out = tmp_path / "out"
    out.mkdir()  # an existing, empty directory: must stay empty
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    assert_one_line_error(code, lines, str(case), expect.group(1))
    assert_nothing_written(out)


def _plate(folder: Path) -> Path:
    path = folder / "plate.stl"
    pts = np.array([[0, 0, 0], [10, 0, 0], [10, 8, 0], [0, 8, 0]], float)
    meshio.write_points_cells(path, pts, [("triangle", np.array([[0, 1, 2], [0, 2, 3]]))])
    return path


def test_grid_too_large_for_memory(tmp_path, capsys):
    """10 000 cells per wavelength at 3 GHz: 10 um cells over a 10 mm plate plus the
    default padding (27.5 mm a side), about 6500^3 = 3e11 cells, some 7 TB."""
    case = minimal_case(tmp_path, _plate(tmp_path), extra="[grid]\ncells_per_wavelength = 10000\n")
    out = tmp_path / "out"
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    assert_one_line_error(code, lines, str(case), "cells_per_wavelength")
    numbers = re.findall(r"(\d+(?:\.\d+)?) GiB", lines[0])
    assert len(numbers) >= 2, lines[0]  # what the run needs and what is available
    need = float(re.search(r"needs (\d+(?:\.\d+)?) GiB", lines[0]).group(1))
    have = float(re.search(r"only (\d+(?:\.\d+)?) GiB", lines[0]).group(1))
    assert need > have
    assert_nothing_written(out)


def test_frequencies_too_low_for_the_parts(tmp_path, capsys):
    """A spectrum in kHz (meant GHz) made one cell larger than the whole part and ended in
    an internal error (issue 13): refused in one line, in the case's unit. The air cell
    is c0 / (f_max n) = 3e8 / (5e3 x 20) m = 3 km."""
    case = minimal_case(tmp_path, _plate(tmp_path))
    case.write_text(case.read_text().replace('"1 GHz"', '"1 kHz"').replace('"3 GHz"', '"5 kHz"'))
    out = tmp_path / "out"
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    assert_one_line_error(code, lines, str(case), "f_max = 5 kHz makes one cell (3e+06 mm) larger "
                          "than all the parts together (10 mm across)", 'write e.g. f_max = "5 GHz"')
    assert_nothing_written(out)


def test_units_slip_gets_a_hint(tmp_path, capsys):
    """units = "m" for a mesh drawn in mm: a 10 mm plate becomes 10 m and the memory
    check refuses (200 cells per wavelength at 3 GHz: 0.5 mm cells over 10 x 8 m, some
    3e10 cells); the message says how large the parts came out and the likely unit."""
    case = minimal_case(tmp_path, _plate(tmp_path), units="m",
                        extra="[grid]\ncells_per_wavelength = 200\n")
    out = tmp_path / "out"
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    assert_one_line_error(code, lines, str(case), "GiB", 'the parts came out 10 m across (units = "m")',
                          'if the meshes are drawn in mm, set units = "mm"')
    assert_nothing_written(out)


def test_out_dir_is_a_file(tmp_path, capsys):
    case = minimal_case(tmp_path, _plate(tmp_path))
    out = tmp_path / "taken"
    out.write_text("keep me")
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    assert_one_line_error(code, lines, str(out), "is a file")
    assert out.read_text() == "keep me"
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_output_name_taken_by_a_directory_writes_nothing(tmp_path, capsys):
    case = minimal_case(tmp_path, _plate(tmp_path))
    out = tmp_path / "out"
    (out / "model.png").mkdir(parents=True)
    code, lines = run_cli(["mesh", str(case), "--out", str(out)], capsys)
    assert_one_line_error(code, lines, str(out / "model.png"))
    assert sorted(p.name for p in out.iterdir()) == ["model.png"]
    assert list((out / "model.png").iterdir()) == []


def test_missing_case_file(tmp_path, capsys):
    missing = tmp_path / "nowhere.toml"
    code, lines = run_cli(["mesh", str(missing), "--out", str(tmp_path / "out")], capsys)
    assert_one_line_error(code, lines, str(missing), "not found")
    assert_nothing_written(tmp_path / "out")
