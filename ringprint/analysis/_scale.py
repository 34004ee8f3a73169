"""Sanity of scale: unit slips that would otherwise end deep inside the meshing (private
helper of :mod:`ringprint.analysis.model`).

Two slips give absurd grids rather than bad values, so the case reader cannot see them:

- frequencies far too low for the parts (``f_max = "5 kHz"``, or a unit written for
  MHz): one cell, ``c0 / (f_max n)``, is then larger than the whole assembly and the
  grid has nothing to resolve; refused with the numbers in the case's unit;
- a length unit that does not match the meshes (``units = "m"`` for files drawn in
  mm): the assembly becomes a thousand times too large and the memory estimate reads
  in terabytes; the memory refusal then says how large the model came out and which
  unit would give it a product's size.

The meshing layer words its warnings in metres (SI inside); :func:`in_case_units`
rewrites them in the case's unit, so every line a user reads speaks one unit.
"""

from __future__ import annotations

import contextlib
import re

import numpy as np

from ringprint.analysis._units import LENGTH_UNITS
from ringprint.analysis.textformat import format_frequency
from ringprint.errors import RingprintError

__all__ = ["model_extent", "check_scale", "unit_hint", "in_case_units"]

#: Sizes (m) a product's assembly plausibly spans; outside them a memory refusal hints
#: at the ``units`` key (common practice: handheld and wearable radios, 5 mm to 1 m).
PLAUSIBLE_M = (5e-3, 1.0)


def model_extent(parts) -> float:
    """The largest side (m) of the box around every surface of every part."""
    lo = np.min([s.bounds[0] for p in parts for s in p.surfaces], axis=0)
    hi = np.max([s.bounds[1] for p in parts for s in p.surfaces], axis=0)
    return float(np.max(hi - lo))


def _length(metres: float, case) -> str:
    return f"{metres / case.unit_m:.3g} {case.units}"


def check_scale(case, parts, cell_m: float) -> None:
    """Refuse a case whose air cell at ``f_max`` is larger than the whole assembly."""
    extent = model_extent(parts)
    if cell_m > extent:
        f_max = format_frequency(case.spectrum.f_max_hz, digits=4, trim=True)
        raise RingprintError(
            f"{case.source}: [spectrum] f_max = {f_max} makes one cell "
            f"({_length(cell_m, case)}) larger than all the parts together "
            f"({_length(extent, case)} across), so nothing of them can ring there; check the "
            "frequencies' unit (a bare number is in hertz: write e.g. f_max = \"5 GHz\")")


#: Units tried for the hint, the most common CAD units first.
_HINT_ORDER = ("mm", "in", "cm", "mil", "um", "m")


def _better_unit(case, extent_m: float) -> str | None:
    """The first unit of :data:`_HINT_ORDER` that would make the assembly a product's size."""
    in_file_units = extent_m / case.unit_m
    for name in _HINT_ORDER:
        if name != case.units and PLAUSIBLE_M[0] <= in_file_units * LENGTH_UNITS[name] <= PLAUSIBLE_M[1]:
            return name
    return None


@contextlib.contextmanager
def unit_hint(case, parts):
    """Add a hint about ``units`` to a memory refusal when the model came out of size."""
    try:
        yield
    except RingprintError as exc:
        extent = model_extent(parts)
        if PLAUSIBLE_M[0] <= extent <= PLAUSIBLE_M[1]:
            raise
        better = _better_unit(case, extent)
        hint = (f"; the parts came out {_length(extent, case)} across (units = \"{case.units}\"): "
                + (f"if the meshes are drawn in {better}, set units = \"{better}\""
                   if better else "check the units key against the meshes"))
        raise RingprintError(f"{exc}{hint}") from None


#: A length in metres inside a message: a number, a space, "m" as a whole word.
_METRES = re.compile(r"(?<![\w.])([-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?) m\b")


def in_case_units(text: str, case) -> str:
    """``text`` with every ``"<number> m"`` written in the case's unit, 4 digits
    (``"0.0015 m thick"`` -> ``"1.5 mm thick"`` in a mm case)."""
    if case.units == "m":
        return text
    return _METRES.sub(lambda m: f"{float(m.group(1)) / case.unit_m:.4g} {case.units}", text)

