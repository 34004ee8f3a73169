"""[[assembly]] in the case file: one STEP file, parts made by name rules.

Uses the four-body STEP of the bad-case corpus (tests/corpus/cases/parts/handset.step,
built by tests/corpus/make_corpus.py: boxes named "Frame Left", "Frame Right",
"Shield Can", "Battery"); the refusals themselves are corpus cases
(tests/corpus/cases/assembly_*.toml, part_unknown_body.toml).
"""

from __future__ import annotations

import shutil
import tomllib
from pathlib import Path

import pytest

from ringprint.analysis import cli
from ringprint.analysis.assembly import SHOWN, name_list
from ringprint.analysis.case import load_case
from ringprint.analysis.model import load_surfaces
from ringprint.errors import RingprintError

PARTS = Path(__file__).resolve().parents[1] / "corpus" / "cases" / "parts"
HEAD = """\
units = "mm"
[spectrum]
f_min = "1 GHz"
f_max = "3 GHz"
"""
ASSEMBLY = """\
[[part]]
name = "plate"
file = "plate.stl"
material = "pec"

[[assembly]]
file = "handset.step"
prefix = "hs-"
translate = [1.0, 2.0, 3.0]

[[assembly.rule]]
match = "frame l*"
material = "fr4"
prefix = "left-"

[[assembly.rule]]
match = "FRAME*"
material = "pec"
overlap_rank = 2

[[assembly.rule]]
match = "shield can"
material = "abs"

[[assembly.rule]]
match = "*"
material = "skip"
"""
#: Box sizes of the corpus assembly (mm), from make_corpus.py: 40 x 2 x 3 frames,
#: 10 x 10 x 3 can and battery.
VOLUMES_MM3 = {"Frame Left": 240.0, "Frame Right": 240.0, "Shield Can": 300.0, "Battery": 300.0}


def _case(folder: Path, body: str = ASSEMBLY) -> Path:
    for name in ("handset.step", "plate.stl"):
        if not (folder / name).exists():
            shutil.copy(PARTS / name, folder / name)
    path = folder / "case.toml"
    path.write_text(HEAD + body)
    return path


def test_rules_make_parts(tmp_path):
    case = load_case(_case(tmp_path))
    got = {p.name: p for p in case.parts}
    assert list(got) == ["plate", "left-Frame Left", "hs-Frame Right", "hs-Shield Can"]  # Battery skipped
    left, right, can = got["left-Frame Left"], got["hs-Frame Right"], got["hs-Shield Can"]
    assert left.material_name == "fr4"            # the first matching rule wins
    assert right.material.is_pec and right.overlap_rank == 2 and can.overlap_rank == 0
    assert (left.body, right.body, can.body) == ("Frame Left", "Frame Right", "Shield Can")
    assert all(p.file == tmp_path / "handset.step" for p in (left, right, can))
    assert right.translate_m == pytest.approx((1e-3, 2e-3, 3e-3))  # assembly placement, in metres
    assert got["plate"].body is None


def test_old_priority_key_still_works(tmp_path):
    """``priority`` (renamed ``overlap_rank``, issue 13) on an assembly and a rule: same
    parts, one note."""
    body = ASSEMBLY.replace("overlap_rank = 2", "priority = 2").replace(
        'prefix = "hs-"', 'prefix = "hs-"\npriority = 1')
    case = load_case(_case(tmp_path, body))
    got = {p.name: p.overlap_rank for p in case.parts}
    assert got == {"plate": 0, "left-Frame Left": 1, "hs-Frame Right": 2, "hs-Shield Can": 1}
    assert len(case.notes) == 1 and "'priority' is now called 'overlap_rank'" in case.notes[0]


def test_surfaces_are_the_bodies_in_place(tmp_path):
    """Each assembly part gets its own body, moved by the assembly's placement; box
    volumes are exact (planar faces tessellate exactly)."""
    case = load_case(_case(tmp_path))
    models = {m.name: m for m in load_surfaces(case, cell=2e-3)}
    for name, body in (("left-Frame Left", "Frame Left"), ("hs-Shield Can", "Shield Can")):
        (s,) = models[name].surfaces
        assert s.volume == pytest.approx(VOLUMES_MM3[body] * 1e-9, rel=1e-9)
    (frame,) = models["hs-Frame Right"].surfaces
    assert frame.bounds[0] == pytest.approx((1e-3, 22e-3, 3e-3), abs=1e-12)  # box at (0, 20, 0) mm


def test_resolved_toml_lists_the_parts_and_loads_back(tmp_path):
    case = load_case(_case(tmp_path))
    resolved = tomllib.loads(case.resolved_toml())
    assert "assembly" not in resolved
    assert [(p["name"], p.get("body")) for p in resolved["part"]] == [
        ("plate", None), ("left-Frame Left", "Frame Left"), ("hs-Frame Right", "Frame Right"),
        ("hs-Shield Can", "Shield Can")]
    again = tmp_path / "again.toml"
    again.write_text(case.resolved_toml())
    back = load_case(again)
    assert [(p.name, p.body, p.material.name) for p in back.parts] == \
        [(p.name, p.body, p.material.name) for p in case.parts]
    assert back.digest() == case.digest()


def test_digest_covers_the_assembly_file_and_the_rules(tmp_path):
    path = _case(tmp_path)
    first = load_case(path).digest()
    step = tmp_path / "handset.step"
    step.write_text(step.read_text().replace("FILE_NAME('", "FILE_NAME('x", 1))  # same bodies
    assert load_case(path).digest() != first
    second = load_case(path).digest()
    path.write_text(HEAD + ASSEMBLY.replace('material = "skip"', 'material = "abs"'))  # Battery in
    assert load_case(path).digest() != second


def test_part_body_key_takes_one_body(tmp_path):
    case = load_case(_case(tmp_path, '[[part]]\nname = "can"\nfile = "handset.step"\n'
                                     'body = "Shield Can"\nmaterial = "pec"\n'))
    (part,) = case.parts
    assert part.body == "Shield Can"
    (model,) = load_surfaces(case, cell=2e-3)
    assert [s.name for s in model.surfaces] == ["Shield Can"]


def test_same_file_twice_needs_a_prefix(tmp_path):
    twice = "\n".join(ASSEMBLY.split("\n")[5:])  # the [[assembly]] without the plate
    with pytest.raises(RingprintError, match=r"makes a part named 'left-Frame Left', which already "
                       r"exists \(\[\[assembly\]\] 1 \('handset.step'\) body 'Frame Left'\)"):
        load_case(_case(tmp_path, twice + twice))
    case = load_case(_case(tmp_path, twice + twice.replace('prefix = "hs-"', 'prefix = "copy-"')
                           .replace('prefix = "left-"', 'prefix = "copy-left-"')))
    assert len(case.parts) == 6 and len({p.name for p in case.parts}) == 6


def test_long_name_lists_are_cut():
    names = [f"screw:{k}" for k in range(1, 31)]
    text = name_list(names)
    assert text.count("'screw:") == SHOWN and text.endswith(f"and {30 - SHOWN} more")


def test_mesh_command_on_an_assembly(tmp_path, capsys):
    """``ringprint mesh`` meshes the assembly's parts and writes the resolved case with
    them; the body volumes it reports are the exact box volumes."""
    path = _case(tmp_path)
    out = tmp_path / "out"
    assert cli.main(["mesh", str(path), "--out", str(out)]) == 0
    text = capsys.readouterr().out
    for name in ("left-Frame Left", "hs-Frame Right", "hs-Shield Can"):
        assert f". {name}: " in text
    assert "Battery" not in text
    assert "volume 300 mm^3" in text and "volume 240 mm^3" in text
    resolved = tomllib.loads((out / "case.resolved.toml").read_text())
    assert [p.get("body") for p in resolved["part"]] == [None, "Frame Left", "Frame Right", "Shield Can"]
