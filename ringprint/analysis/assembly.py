"""Assemblies: one CAD file holding many bodies, turned into parts by name rules.

A product arrives as one STEP file with every body in it. In the case file::

    [[assembly]]
    file = "handset.step"           # relative to the case file
    prefix = "hs-"                  # optional: put before every part name made here
    overlap_rank = 0                # optional: default overlap rank of the rules below
    translate = [0, 0, 0]           # optional placement of the whole file, as for a part
    rotate = { axis = [0, 0, 1], degrees = 0 }          # (also scale, mirror)

    [[assembly.rule]]               # one or more, tried in order
    match = "frame*"                # a name pattern, or a list of them
    material = "aluminium"          # as for a part, or "skip" to leave the bodies out
    prefix = "frame-"               # optional, instead of the assembly's prefix
    overlap_rank = 2                # optional, instead of the assembly's overlap_rank

Rules applied (when the case file is read, from the body names alone; the bodies are
tessellated later, when the case is meshed):

- Body names are the file's own (STEP product names), else the file stem and the
  body's 1-based position, ``handset:7``; a name given to several bodies is numbered,
  ``screw:1``, ``screw:2`` (:func:`ringprint.meshing.body_labels`).
- A pattern is a shell-style glob (``*`` any text, ``?`` one character, ``[ab]`` one of
  them), compared without regard to case with the whole body name.
- Each body goes to the first rule that matches it, and becomes a part named
  ``prefix + body name`` (unless the rule says ``skip``).
- Refused, in one line each: a pattern that matches no body (a typo, or a body renamed
  in the CAD tool), the bodies that no rule matches (all listed in one message; add a
  rule, or a rule with ``material = "skip"``), and a part name taken twice.

The file and placement keys are read here for ``[[part]]`` too (:func:`part_file`,
:func:`placement`), so both tables place their files the same way.
"""

from __future__ import annotations

import fnmatch
import functools
import os
from dataclasses import dataclass
from pathlib import Path

from ringprint import meshing
from ringprint.errors import RingprintError

__all__ = ["ASSEMBLY_KEYS", "PLACEMENT_KEYS", "RULE_KEYS", "SKIP", "Taken", "body_names", "expand",
           "name_list", "part_file", "placement"]

AXES = ("x", "y", "z")

#: The material word of a rule whose bodies are left out of the model.
SKIP = "skip"
PLACEMENT_KEYS = ("translate", "rotate", "scale", "mirror")
ASSEMBLY_KEYS = ("file", "prefix", "overlap_rank", "rule") + PLACEMENT_KEYS
RULE_KEYS = ("match", "material", "prefix", "overlap_rank")
#: Names shown in one message before "and N more".
SHOWN = 12


@dataclass(frozen=True)
class Taken:
    """One body a rule takes: the body's name, the part's name, the rule's key path
    (for messages and the rule's material) and the part's overlap rank."""

    body: str
    name: str
    rule: tuple
    overlap_rank: int
    material: object               #: the rule's material value as written


@functools.lru_cache(maxsize=32)
def _names(path: str, _mtime_ns: int, _size: int) -> tuple[str, ...]:
    return tuple(meshing.body_names(path))


def body_names(ck, file: Path, here: tuple) -> tuple[str, ...]:
    """Body names of ``file`` (read once per file version); a read error cites ``here``."""
    try:
        stat = os.stat(file)
        return _names(os.fspath(file), stat.st_mtime_ns, stat.st_size)
    except RingprintError as exc:
        ck.fail(here, str(exc))


def name_list(names) -> str:
    """``'a', 'b', ... and N more`` for a message."""
    names = list(names)
    text = ", ".join(repr(n) for n in names[:SHOWN])
    return text + (f" and {len(names) - SHOWN} more" if len(names) > SHOWN else "")


def part_file(ck, table: dict, here: tuple, folder: Path) -> Path:
    """The absolute path of the table's ``file`` (relative to the case file), which exists."""
    written = ck.string(ck.require(table, "file", here), here + ("file",))
    file = (folder / Path(written).expanduser()).resolve()
    if not file.is_file():
        ck.fail(here + ("file",), f"file {written!r} not found (looked for {file}); paths are "
                "relative to the case file")
    return file


def placement(ck, table: dict, here: tuple, unit: float) -> dict:
    """The placement keys of a ``[[part]]`` or ``[[assembly]]`` as ``Part`` fields (metres)."""
    translate = tuple(v * unit for v in ck.vector3(table.get("translate", [0, 0, 0]),
                                                   here + ("translate",)))
    axis, degrees = (0.0, 0.0, 1.0), 0.0
    if "rotate" in table:
        rot = ck.table(table["rotate"], here + ("rotate",), ("axis", "degrees"))
        axis = ck.vector3(ck.require(rot, "axis", here + ("rotate",)), here + ("rotate", "axis"))
        if not any(axis):
            ck.fail(here + ("rotate", "axis"), "the rotation axis must not be [0, 0, 0]")
        degrees = ck.number(ck.require(rot, "degrees", here + ("rotate",)),
                            here + ("rotate", "degrees"))
    scale = ck.positive(table.get("scale", 1.0), here + ("scale",))
    mirror = ck.choice(table.get("mirror", "none"), here + ("mirror",), ("none",) + AXES)
    return {"translate_m": translate, "rotate_axis": axis, "rotate_degrees": degrees,
            "scale": scale, "mirror": None if mirror == "none" else mirror}


def _patterns(ck, rule: dict, here: tuple) -> list[tuple[str, tuple]]:
    value = ck.require(rule, "match", here)
    if isinstance(value, list) and value:
        return [(ck.string(v, here + ("match", i)), here + ("match", i)) for i, v in enumerate(value)]
    return [(ck.string(value, here + ("match",)), here + ("match",))]


def expand(ck, table: dict, here: tuple, file: Path) -> list[Taken]:
    """The bodies an ``[[assembly]]`` table takes, in the file's body order.

    ``table`` has been checked for unknown keys; ``file`` exists. Rules whose material
    is :data:`SKIP` take their bodies and make no part.

    Raises
    ------
    RingprintError
        A bad rule, a pattern matching no body, bodies matching no rule (see the
        module docstring).
    """
    names = body_names(ck, file, here + ("file",))
    prefix = ck.string(table["prefix"], here + ("prefix",)) if "prefix" in table else ""
    rank = ck.number(table.get("overlap_rank", 0), here + ("overlap_rank",), integer=True)
    rules = table.get("rule")
    if not isinstance(rules, list) or not rules:
        ck.fail(here, f"no [[assembly.rule]] tables; add one per group of bodies, e.g. "
                f"match = \"*\" and a material (the file holds {name_list(names)})")
    winner: dict[str, Taken] = {}
    for j, rule in enumerate(rules):
        where = here + ("rule", j)
        rule = ck.renamed(rule, where, "priority", "overlap_rank")
        ck.table(rule, where, RULE_KEYS)
        ck.require(rule, "material", where)
        own_prefix = ck.string(rule["prefix"], where + ("prefix",)) if "prefix" in rule else prefix
        own_rank = ck.number(rule.get("overlap_rank", rank), where + ("overlap_rank",), integer=True)
        for pattern, at in _patterns(ck, rule, where):
            hits = [b for b in names if fnmatch.fnmatchcase(b.lower(), pattern.lower())]
            if not hits:
                ck.fail(at, f"{pattern!r} matches none of the {len(names)} bodies of {file.name} "
                        f"({name_list(names)}); correct the pattern or remove it")
            for body in hits:
                winner.setdefault(body, Taken(body, own_prefix + body, where, own_rank, rule["material"]))
    left = [b for b in names if b not in winner]
    if left:
        ck.fail(here + ("file",), f"{len(left)} of the {len(names)} bodies of {file.name} match no "
                f"rule: {name_list(left)}; add a [[assembly.rule]] for them, or one with "
                f"material = \"{SKIP}\" to leave them out")
    return [winner[b] for b in names]
