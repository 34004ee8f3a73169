"""Tests of the case file reader (ringprint.analysis.case).

The bad-case corpus lives in tests/corpus/cases/: one file per defect, each with
``# defect:`` (what it tests), ``# expect-line:`` and ``# expect:`` comments.
"""

from __future__ import annotations

import dataclasses
import math
import re
import shutil
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, strategies as st
from scipy.constants import c as C0, epsilon_0

from ringprint.analysis._toml_lines import KeyLines
from ringprint.analysis._units import format_frequency, parse_frequency
from ringprint.analysis.case import load_case
from ringprint.analysis.materials import dielectric_q
from ringprint.errors import RingprintError

CORPUS = Path(__file__).resolve().parents[1] / "corpus" / "cases"
BAD_CASES = sorted(CORPUS.glob("*.toml"))

EXAMPLE = """\
title = "Asset tag, 2.4 GHz radio and GNSS"
units = "mm"
band_presets = ["lte-b7", "gps-l1"]

[spectrum]
f_min = "0.6 GHz"
f_max = "6 GHz"

[[part]]
name = "ground plane"
file = "tag/pcb_ground.stl"
material = "pec"

[[part]]
name = "housing"
file = "tag/housing.step"
material = { eps_r = 3.0, loss_tangent = 0.01 }
translate = [1.0, -2.0, 0.5]
rotate = { axis = [0, 0, 1], degrees = 90 }
scale = 2.0
mirror = "x"
overlap_rank = 3

[[band]]
name = "telemetry"
low = "2.30 GHz"
high = 2.32e9

[probe]
at = [12.0, 4.0, 3.5]
normal = "z"
size = 2.0

[grid]
cells_per_wavelength = 20
padding = 15.0

[analysis]
q_max = 200
"""


def write_case(folder: Path, text: str = EXAMPLE, name: str = "case.toml") -> Path:
    (folder / "tag").mkdir(parents=True, exist_ok=True)
    (folder / "tag" / "pcb_ground.stl").write_text("solid ground\nendsolid ground\n")
    (folder / "tag" / "housing.step").write_text("ISO-10303-21;\n")
    path = folder / name
    path.write_text(text)
    return path


def minimal(extra: str = "", units: str = "mm") -> str:
    return (f'units = "{units}"\n[spectrum]\nf_min = "1 GHz"\nf_max = "4 GHz"\n'
            '[[part]]\nname = "p"\nfile = "tag/pcb_ground.stl"\nmaterial = "pec"\n' + extra)


# -- the bad-case corpus ------------------------------------------------------

def _expectations(path: Path) -> tuple[str, int, str]:
    text = path.read_text()
    defect = re.search(r"^# defect: (.+)$", text, re.M)
    line = re.search(r"^# expect-line: (\d+)$", text, re.M)
    expect = re.search(r"^# expect: (.+)$", text, re.M)
    assert defect and line and expect, f"{path.name} lacks its # defect/expect comments"
    return defect.group(1), int(line.group(1)), expect.group(1)


def test_corpus_is_populated():
    assert len(BAD_CASES) >= 30


@pytest.mark.parametrize("path", BAD_CASES, ids=[p.stem for p in BAD_CASES])
def test_bad_case_names_file_line_and_key(path: Path):
    _, line, expect = _expectations(path)
    with pytest.raises(RingprintError) as info:
        load_case(str(path))
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{path}:{line}:"), message
    assert expect in message, message


def test_syntax_error_gives_column():
    path = CORPUS / "syntax_error.toml"
    with pytest.raises(RingprintError, match=rf"^{re.escape(str(path))}:4:7: not valid TOML"):
        load_case(path)


def test_unterminated_string_at_end(tmp_path):
    path = tmp_path / "c.toml"
    path.write_text('units = "mm\n')
    with pytest.raises(RingprintError, match="not valid TOML"):
        load_case(path)


def test_missing_case_file(tmp_path):
    with pytest.raises(RingprintError, match="case file not found"):
        load_case(tmp_path / "nope.toml")


# -- a good case, SI inside ---------------------------------------------------

def test_example_case_in_si(tmp_path):
    case = load_case(write_case(tmp_path))
    assert case.source == (tmp_path / "case.toml").resolve()
    assert case.title.startswith("Asset tag")
    assert case.unit_m == 1e-3
    assert case.spectrum.f_min_hz == 0.6e9 and case.spectrum.f_max_hz == 6e9
    # default loss conversion frequency: the geometric centre, to 4 digits (1.897 GHz)
    assert case.spectrum.loss_at_hz == float(f"{math.sqrt(0.6e9 * 6e9):.4g}") == 1.897e9
    ground, housing = case.parts
    assert ground.material.is_pec and ground.material_name == "pec"
    assert ground.file == (tmp_path / "tag" / "pcb_ground.stl").resolve() and ground.file.is_absolute()
    assert housing.translate_m == pytest.approx((1e-3, -2e-3, 0.5e-3), rel=1e-15)
    assert (housing.scale, housing.mirror, housing.overlap_rank) == (2.0, "x", 3)
    assert case.probe.at_m == pytest.approx((0.012, 0.004, 0.0035), rel=1e-15)
    assert case.probe.size_m == pytest.approx(0.002) and case.probe.normal == "z"
    assert case.grid.padding_m == pytest.approx(0.015) and case.grid.cells_per_wavelength == 20
    assert case.analysis.q_max == 200 and case.analysis.detuning_margin == 0.03
    assert [b.name for b in case.bands] == ["lte-b7-ul", "lte-b7-dl", "gps-l1", "telemetry"]
    assert case.custom_bands[0].low_hz == 2.30e9 and case.custom_bands[0].high_hz == 2.32e9
    with pytest.raises(dataclasses.FrozenInstanceError):
        case.title = "x"


def test_defaults(tmp_path):
    case = load_case(write_case(tmp_path, minimal()))
    assert case.title == "case"
    assert case.probe is None
    assert case.bands == ()
    assert case.analysis.q_max == 200 and case.analysis.detuning_margin == 0.03
    assert case.grid.cells_per_wavelength == 20 and case.grid.absorber_cells == 10
    assert case.notes == ()
    # padding default: the radiansphere radius lambda/(2 pi) at sqrt(f_min f_max) (Wheeler 1947)
    assert case.grid.padding_m == pytest.approx(C0 / (2 * math.pi * 2e9), rel=1e-12)
    assert case.output.fields and case.output.images
    # graded grid by default; min_feature a tenth of the air cell c0 / (f_max n)
    assert case.grid.graded is True
    assert case.grid.min_feature_m == pytest.approx(C0 / (4e9 * 20) / 10, rel=1e-12)
    # probe size default: two air cells at f_max
    case = load_case(write_case(tmp_path, minimal('[probe]\nat = [0, 0, 0]\nnormal = "y"\n')))
    assert case.probe.size_m == pytest.approx(2 * C0 / (4e9 * 20), rel=1e-12)


@pytest.mark.parametrize("units, metres", [("m", 1.0), ("cm", 0.01), ("mm", 1e-3), ("um", 1e-6),
                                           ("in", 0.0254), ("mil", 0.0000254)])
def test_length_units(tmp_path, units, metres):
    """1 in = 25.4 mm exactly and 1 mil = 1/1000 in (NIST SP 811, appendix B)."""
    case = load_case(write_case(tmp_path, minimal('[grid]\npadding = 3.0\n', units)))
    assert case.grid.padding_m == pytest.approx(3.0 * metres, rel=1e-15)
    assert case.parts[0].file_unit_m == metres


@pytest.mark.parametrize("text, hz", [("600MHz", 600e6), ("0.6 GHz", 600e6), ("2.4 ghz", 2.4e9),
                                      ("433.92e6 Hz", 433.92e6), ("13560 kHz", 13.56e6),
                                      (2.4e9, 2.4e9), ("50 Hz", 50.0), (5e6, 5e6), ("1e9", 1e9),
                                      ("700 mhz", 700e6), ("700 MHZ", 700e6)])
def test_frequency_forms(text, hz):
    assert parse_frequency(text) == pytest.approx(hz, rel=1e-15)


@given(st.floats(min_value=1.0, max_value=1e12, allow_nan=False))
def test_frequency_format_round_trips(hz):
    text = format_frequency(hz)
    assert parse_frequency(text) == hz


def test_material_loss_is_exact_at_loss_at(tmp_path):
    """Q_d = 1/tan_d at the conversion frequency (Pozar 2012, sec. 6.7)."""
    text = minimal().replace('material = "pec"', 'material = { eps_r = 3.0, loss_tangent = 0.01 }')
    case = load_case(write_case(tmp_path, text + '\n'))
    eps_r, sigma, pec = case.medium(case.parts[0])
    assert not pec and eps_r == 3.0
    f0 = case.spectrum.loss_at_hz
    assert sigma == pytest.approx(2 * math.pi * f0 * epsilon_0 * 3.0 * 0.01, rel=1e-14)
    assert dielectric_q(sigma, eps_r, f0) == pytest.approx(100.0, rel=1e-12)


def test_sigma_material_and_library_names(tmp_path):
    text = minimal().replace('material = "pec"', 'material = { eps_r = 4.0, sigma = 0.002 }')
    text += '[[part]]\nname = "q"\nfile = "tag/housing.step"\nmaterial = "FR4"\n'
    text += '[[part]]\nname = "r"\nfile = "tag/housing.step"\nmaterial = { conductor = true, sigma = 5.8e7 }\n'
    case = load_case(write_case(tmp_path, text))
    assert case.medium(case.parts[0]) == (4.0, 0.002, False)
    assert case.parts[1].material.name == "fr4" and case.parts[1].material_name == "FR4"
    # the solver keeps a finite metal perfect; its sigma gives the conductor loss afterwards
    assert case.medium(case.parts[2]) == (1.0, 0.0, True)
    assert case.parts[2].material.is_lossy_conductor and case.parts[2].material.sigma == 5.8e7


def test_conductor_without_sigma_is_pec_and_mu_r_round_trips(tmp_path):
    text = minimal().replace('material = "pec"', 'material = { conductor = true }')
    text += ('[[part]]\nname = "can"\nfile = "tag/housing.step"\n'
             'material = { name = "plated", conductor = true, sigma = 1.43e7, mu_r = 3.0 }\n')
    case = load_case(write_case(tmp_path, text))
    assert not case.parts[0].material.is_lossy_conductor and case.parts[0].material.sigma is None
    plated = case.parts[1].material
    assert plated.mu_r == 3.0 and plated.is_lossy_conductor
    again = tmp_path / "resolved.toml"
    again.write_text(case.resolved_toml())
    assert load_case(again).parts[1].material == plated


@pytest.mark.parametrize("material, key, fix", [
    ("{ conductor = true, sigma = 0 }", "material.sigma", '"pec"'),
    ("{ conductor = true, sigma = -5.8e7 }", "material.sigma", '"pec"'),
    ("{ eps_r = 3.0, mu_r = 2.0 }", "material.mu_r", "conductor = true"),
    ("{ conductor = true, sigma = 1e7, mu_r = 0.5 }", "material.mu_r", ">= 1"),
])
def test_bad_conductor_is_refused_in_one_line_through_the_cli(tmp_path, capsys, material, key, fix):
    """A conductor with sigma <= 0 (or a misplaced mu_r): `ringprint mesh` prints one
    line naming the file, the key and the fix, exits 1 and writes nothing."""
    from ringprint.analysis import cli
    path = write_case(tmp_path, minimal().replace('material = "pec"', f"material = {material}"))
    out = tmp_path / "out"
    code = cli.main(["mesh", str(path), "--out", str(out)])
    lines = capsys.readouterr().err.splitlines()
    assert code == 1 and len(lines) == 1, lines
    assert lines[0].startswith("ringprint: error: ") and "Traceback" not in lines[0]
    for fragment in (str(path), repr(key), fix):
        assert fragment in lines[0], (fragment, lines[0])
    assert not out.exists() or list(out.iterdir()) == []


def test_part_matrix_order(tmp_path):
    """scale, then mirror, then rotate about the origin, then translate."""
    case = load_case(write_case(tmp_path))
    housing = case.parts[1]
    p = np.array([1.0, 2.0, 3.0])                    # a mesh vertex, in mm
    q = p * 2.0 * 1e-3                               # scaled, in metres
    q[0] = -q[0]                                     # mirrored in x
    q = np.array([-q[1], q[0], q[2]])                # +90 degrees about z
    q += [1e-3, -2e-3, 0.5e-3]
    got = housing.matrix() @ np.append(p, 1.0)
    np.testing.assert_allclose(got[:3], q, rtol=0, atol=1e-15)


def test_resolved_toml_round_trip(tmp_path):
    case = load_case(write_case(tmp_path))
    text = case.resolved_toml()
    data = tomllib.loads(text)
    assert data["grid"]["padding"] == 15.0 and data["units"] == "mm"
    assert data["part"][1]["material"] == {"name": "custom", "eps_r": 3.0, "loss_tangent": 0.01}
    assert data["analysis"]["detuning_margin"] == 0.03
    again = tmp_path / "elsewhere" / "case.resolved.toml"
    again.parent.mkdir()
    again.write_text(text)
    back = load_case(again)
    assert back.resolved() == case.resolved()
    assert back.digest() == case.digest()


def test_old_key_names_still_work_with_one_note_each(tmp_path):
    """Renamed keys (issue 13): bands -> band_presets, priority -> overlap_rank,
    [grid] absorber_cells -> cpml_cells, band preset wifi-5g -> wifi-5ghz. The old
    spelling gives the same case and one note per old name, however often it is used."""
    new = load_case(write_case(tmp_path, EXAMPLE.replace('"gps-l1"', '"gps-l1", "wifi-5ghz"')
                               .replace("padding = 15.0\n", "padding = 15.0\ncpml_cells = 12\n")))
    old_text = (EXAMPLE.replace("band_presets = ", "bands = ").replace('"gps-l1"', '"gps-l1", "wifi-5g"')
                .replace("overlap_rank = 3", "priority = 3")
                .replace('material = "pec"', 'material = "pec"\npriority = 0')
                .replace("padding = 15.0\n", "padding = 15.0\nabsorber_cells = 12\n"))
    old = load_case(write_case(tmp_path, old_text, name="old.toml"))
    assert old.resolved() == new.resolved() and old.digest() == new.digest()
    assert [b.name for b in old.bands] == [b.name for b in new.bands]
    assert new.notes == ()
    assert len(old.notes) == 4, old.notes                    # priority used twice: one note
    for old_name, new_name in (("bands", "band_presets"), ("priority", "overlap_rank"),
                               ("absorber_cells", "cpml_cells"), ("wifi-5g", "wifi-5ghz")):
        assert sum(f"'{old_name}' is now called '{new_name}'" in n for n in old.notes) == 1, old.notes
    with pytest.raises(RingprintError, match="old name of 'overlap_rank'"):
        load_case(write_case(tmp_path, new_text := EXAMPLE.replace(
            "overlap_rank = 3", "overlap_rank = 3\npriority = 1"), name="both.toml"))
    assert new_text


def test_resolved_toml_is_readable(tmp_path):
    """case.resolved.toml (issue 13): part files relative to the folder it is written to,
    the default loss_at rounded, every vector on one line; and it loads back from there."""
    case = load_case(write_case(tmp_path))
    out = tmp_path / "run"
    out.mkdir()
    text = case.resolved_toml(relative_to=out)
    assert 'file = "../tag/pcb_ground.stl"' in text and str(tmp_path) not in text
    assert 'loss_at = "1.897 GHz"' in text
    assert "translate = [1.0, -2.0, 0.5]" in text and "axis = [0.0, 0.0, 1.0]" in text
    assert not re.search(r"\[\n\s+[-\d]", text), text
    (out / "case.resolved.toml").write_text(text)
    back = load_case(out / "case.resolved.toml")
    assert back.digest() == case.digest()


def test_resolved_fills_library_values(tmp_path):
    text = minimal().replace('material = "pec"', 'material = "abs"')
    case = load_case(write_case(tmp_path, text))
    material = case.resolved()["part"][0]["material"]
    assert material["eps_r"] == 2.8 and material["loss_tangent"] == 0.005 and material["at"] == "1.0 GHz"
    assert "padding" in case.resolved()["grid"] and "loss_at" in case.resolved()["spectrum"]


def test_digest_tracks_what_changes_the_run(tmp_path):
    path = write_case(tmp_path)
    base = load_case(path).digest()
    assert base == load_case(path).digest() and re.fullmatch(r"[0-9a-f]{64}", base)
    # the title, bands and output switches do not change the simulated fields
    path.write_text(EXAMPLE.replace("Asset tag", "Another tag").replace('"lte-b7", ', "")
                    + "[output]\nimages = false\n")
    assert load_case(path).digest() == base
    # moving the whole case folder does not either
    moved = tmp_path.parent / (tmp_path.name + "-moved")
    shutil.copytree(tmp_path, moved)
    assert load_case(moved / "case.toml").digest() == base
    # a changed mesh file, material or padding does
    (tmp_path / "tag" / "housing.step").write_text("ISO-10303-21; changed\n")
    changed = load_case(path).digest()
    assert changed != base
    path.write_text(EXAMPLE.replace("padding = 15.0", "padding = 16.0"))
    assert load_case(path).digest() not in (base, changed)


def test_grid_graded_and_min_feature_keys(tmp_path):
    case = load_case(write_case(tmp_path, minimal("[grid]\ngraded = false\nmin_feature = 0.05\n")))
    assert case.grid.graded is False and case.grid.min_feature_m == pytest.approx(0.05e-3, rel=1e-12)
    data = tomllib.loads(case.resolved_toml())
    assert data["grid"]["graded"] is False and data["grid"]["min_feature"] == pytest.approx(0.05, rel=1e-12)
    # both keys change the simulated grid, so both enter the digest
    base = load_case(write_case(tmp_path, minimal())).digest()
    assert load_case(write_case(tmp_path, minimal("[grid]\ngraded = false\n"))).digest() != base
    assert load_case(write_case(tmp_path, minimal("[grid]\nmin_feature = 0.05\n"))).digest() != base
    # the default min_feature is written out and reads back to the same digest
    again = tmp_path / "again.toml"
    again.write_text(load_case(write_case(tmp_path, minimal())).resolved_toml())
    assert load_case(again).digest() == base


@pytest.mark.parametrize("text,fragment", [("min_feature = 0", "min_feature"), ("min_feature = -1", "min_feature"),
                                           ('graded = "yes"', "true or false")])
def test_grid_bad_graded_keys(tmp_path, text, fragment):
    path = write_case(tmp_path, minimal(f"[grid]\n{text}\n"))
    with pytest.raises(RingprintError, match=fragment) as info:
        load_case(path)
    assert str(info.value).startswith(f"{path}:") and "\n" not in str(info.value)


def test_error_message_shape(tmp_path):
    path = write_case(tmp_path, minimal().replace('name = "p"', 'name = "p"\nfiel = "x"'))
    with pytest.raises(RingprintError) as info:
        load_case(path)
    assert str(info.value) == (f"{path}:7: [[part]] 1 ('p') key 'fiel': unknown key; "
                               "did you mean 'file'?")


# -- the line finder ----------------------------------------------------------

def test_key_lines_heuristic():
    text = (
        'title = "a = b # not a comment"\n'    # 1
        "units = 'mm'  # comment\n"            # 2
        "[spectrum]\n"                         # 3
        "f_min = 1\n"                          # 4
        "[[part]]\n"                           # 5
        "translate = [1,\n"                    # 6
        "  2, # x = 1\n"                       # 7
        "  3]\n"                               # 8
        'notes = """\n'                        # 9
        "fake = 1\n"                           # 10
        '"""\n'                                # 11
        "material = { eps_r = 3 }\n"           # 12
        "[[part]]\n"                           # 13
        '"quoted key" = 2\n'                   # 14
        "a.b = 4\n"                            # 15
    )
    tomllib.loads(text)  # the fixture is valid TOML
    lines = KeyLines(text)
    assert lines.line(("title",)) == 1 and lines.line(("units",)) == 2
    assert lines.line(("spectrum", "f_min")) == 4 and lines.line(("spectrum",)) == 3
    assert lines.line(("part", 0, "translate", 2)) == 6
    assert lines.line(("part", 0, "fake")) == 5        # inside a string: not a key
    assert lines.line(("part", 0, "material", "eps_r")) == 12
    assert lines.line(("part", 1, "quoted key")) == 14
    assert lines.line(("part", 1, "a", "b")) == 15
    assert lines.line(("part", 1)) == 13 and lines.line(("nothing",)) == 1


def test_key_lines_nested_array_tables():
    """[[a.b]] belongs to the current [[a]] element and counts within it; a [a.c]
    sub-table likewise (the [[assembly.rule]] and [part.rotate] layouts)."""
    text = (
        "[[assembly]]\n"                       # 1
        'file = "a.step"\n'                    # 2
        "[[assembly.rule]]\n"                  # 3
        'match = "x"\n'                        # 4
        "[[assembly.rule]]\n"                  # 5
        'match = ["y", "z"]\n'                 # 6
        "[[assembly]]\n"                       # 7
        "[[assembly.rule]]\n"                  # 8
        'material = "pec"\n'                   # 9
        "[[part]]\n"                           # 10
        "[part.rotate]\n"                      # 11
        "degrees = 90\n"                       # 12
    )
    data = tomllib.loads(text)
    assert data["assembly"][1]["rule"][0]["material"] == "pec"  # the layout the paths mirror
    lines = KeyLines(text)
    assert lines.line(("assembly", 0, "file")) == 2
    assert lines.line(("assembly", 0, "rule", 0, "match")) == 4
    assert lines.line(("assembly", 0, "rule", 1, "match", 1)) == 6
    assert lines.line(("assembly", 1, "rule", 0, "material")) == 9
    assert lines.line(("assembly", 1, "rule", 0)) == 8 and lines.line(("assembly", 1)) == 7
    assert lines.line(("part", 0, "rotate", "degrees")) == 12


def test_assembly_and_part_together(tmp_path):
    """[[part]] and [[assembly]] in one case; the assembly alone is enough; the bad
    cases (rules matching nothing, unmatched bodies, taken names) are corpus files."""
    shutil.copy(CORPUS / "parts" / "handset.step", tmp_path / "handset.step")
    head = EXAMPLE.split("[[part]]")[0]
    rules = ('[[assembly]]\nfile = "handset.step"\n[[assembly.rule]]\nmatch = "*"\n'
             'material = "pec"\n')
    path = write_case(tmp_path, head + rules)
    assert [p.name for p in load_case(path).parts] == ["Frame Left", "Frame Right", "Shield Can",
                                                       "Battery"]
    path = write_case(tmp_path, EXAMPLE.replace("[[band]]", rules + "[[band]]", 1))
    names = [p.name for p in load_case(path).parts]
    assert names == ["ground plane", "housing", "Frame Left", "Frame Right", "Shield Can", "Battery"]


def test_tracker_demo_case_loads():
    """The demo assembly: six bodies, the two screws skipped by their rule."""
    case = load_case(Path(__file__).resolve().parents[2] / "cases" / "tracker" / "case.toml")
    assert [(p.name, p.material.is_pec) for p in case.parts] == [
        ("Frame", True), ("Board Ground", True), ("Coin Cell", True), ("Housing", False)]
