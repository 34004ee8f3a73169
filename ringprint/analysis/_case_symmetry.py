"""The case key ``[grid] symmetry``: mirror planes through the model's centre (private helper of ``case``).

Form (one key per mirrored axis)::

    [grid]
    symmetry = { x = "pec", z = "both" }

Each entry declares a mirror plane normal to that axis through the centre of the
assembly's bounding box. ``"pec"`` puts a perfect electric wall there (tangential E
zero: the modes whose E is odd about the plane), ``"pmc"`` a perfect magnetic wall
(tangential H zero: E even about the plane), ``"both"`` runs the case once with each
wall and merges the two mode lists (each mode labelled with its wall). With several
axes, every combination of their walls is run.
"""

from __future__ import annotations

import itertools

from ringprint.analysis._case_checks import Checker

#: The walls a plane may have, and the word that asks for each of them in turn.
WALLS = ("pec", "pmc")
BOTH = "both"
AXES = ("x", "y", "z")
EXAMPLE = '{ x = "pec" } (a wall "pec" or "pmc" per axis, or "both")'


def parse_symmetry(ck: Checker, value) -> tuple[tuple[str, str], ...]:
    """``(axis, "pec" | "pmc" | "both")`` pairs in axis order from the ``symmetry`` table."""
    path = ("grid", "symmetry")
    if not isinstance(value, dict):
        ck.fail(path, f"expected a table such as {EXAMPLE}, got {type(value).__name__} {value!r}")
    table = ck.table(value, path, AXES)
    out = []
    for axis in AXES:
        if axis in table:
            out.append((axis, ck.choice(table[axis], path + (axis,), WALLS + (BOTH,))))
    if not out:
        ck.fail(path, f"the table is empty; name at least one axis, e.g. {EXAMPLE}, or remove the key")
    return tuple(out)


def wall_classes(symmetry) -> list[dict]:
    """Every wall combination the case asks for, ``[{axis: "pec" | "pmc"}, ...]``
    (one dict without mirrors: ``[{}]``)."""
    options = [[(axis, w) for w in (WALLS if kind == BOTH else (kind,))] for axis, kind in symmetry]
    return [dict(combo) for combo in itertools.product(*options)]


def class_label(walls: dict) -> str:
    """``"x:pec, z:pmc"``: the words of one wall combination ("" without mirrors)."""
    return ", ".join(f"{axis}:{kind}" for axis, kind in sorted(walls.items()))
