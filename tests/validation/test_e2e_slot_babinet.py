"""``ringprint run`` on a slot in a conducting plate against its complementary strip (Babinet).

Reference: Babinet's principle in Booker's form for electromagnetic fields (Booker, H.
G., J. IEE 93(IIIA):620-626, 1946; Balanis, C. A., *Antenna Theory*, 3rd ed., Wiley,
2005, sec. 12.8; Jackson, J. D., *Classical Electrodynamics*, 3rd ed., Wiley, 1999,
sec. 10.13; from memory): the source-free fields of a slot in an infinite, perfectly
conducting, vanishingly thin screen follow from those of the complementary strip by
``E -> Z0 H``, ``H -> -E / Z0`` (with opposite signs on the two sides of the screen).
The map keeps the time dependence, so the slot and the strip have the same complex
natural frequencies: the same resonant frequency and, since ``Q = Re(w) / (2 |Im w|)``
of the same pole, the same Q (the slot radiates into both half spaces, but its stored
energy is shared the same way, so the ratio is the strip's). The strip's pole is the
zero of Hallen's equation (Hallen 1938; Tesche, IEEE Trans. Antennas Propag.
21(1):53-62, 1973; ``_references.thin_wire_pole``), the strip of width w as a wire of
radius w / 4 (Balanis 2005 sec. 9.3.5, equivalent radii; from memory).

Setup: strip 62 x 4.6 mm (as in test_e2e_strip.py); the complementary slot, the same
62 x 4.6 mm hole centred in square plates of side 120, 140 and 170 mm (0.84, 0.98 and
1.19 wavelengths at the strip's resonance), all zero-thickness sheets in z = 0 on the
same uniform 2 mm grid (f_max 3.2 GHz), spectrum 1.0-3.2 GHz so the plates' own low
modes fall inside it, q_max 20, fields off. Every part is centred on the origin, so
the grid has nodes on every even millimetre and the staircase (ringprint.analysis.model,
sheet nodes) holds the strip as the nodes |x| <= 30, |y| <= 2 mm and the plate as the
nodes |x| >= 32 or |y| >= 4 mm: the strip's nodes and the plate's are complements.
The edges joining the two sets are metal in neither run, so on the grid the slot is
bounded by the strip's nodes (60 x 4 mm) and by the plate's innermost ones (64 x 8 mm).

Probes by hand, each where its mode's magnetic field is strong, off the symmetry
planes x = 0 and y = 0 (and off the sheet's plane): for the strip a one-cell loop with
normal y, face x -10..-8, z 2..4 mm in the plane y = 2 mm, in the H that circles the
current (cos(pi 9/62) = 0.90 of its peak there); for the slot a one-cell loop with
normal z, face x -26..-24, y 0..2 mm in the plane z = 2 mm, in the normal H of the
aperture near its end (the dual of the strip's end charge, sin(pi 25/62) = 0.95 of
its peak).

Measured (2 mm cells, NUMBA_NUM_THREADS=1): strip 2.0896 GHz, Q 3.83 (+0.98 % from the
Hallen pole 2.0694 GHz, Q 4.05, of the drawn strip); slot in the 120 mm plate 2.0964
GHz, Q 4.80; 140 mm 1.9764 GHz, Q 4.02; 170 mm 2.0526 GHz, Q 4.45 (against the strip
+0.33 %, -5.42 %, -1.77 %, mean of the three -2.29 %). Earlier runs with the same
setup: 100 mm plate 2.1825 GHz, Q 3.48 (+4.4 %; the plate's own modes there at 1.02
and 1.64 GHz); 200 mm plate 1.961 GHz, Q 3.90 (-6.2 %), which the run drops because
the inversion's error estimate (5e-3) exceeds its default limit; the plate modes that
the runs report (1.37 and 2.95 GHz at 120 mm, 1.17, 2.54, 3.11 GHz at 140 mm, 1.62 and
2.57 GHz at 170 mm) are weak in the probe (amplitude <= 0.014 of the slot's).

What this shows, and the tolerances:

- A finite plate is not an infinite screen: the field the slot sends along the plate
  comes back from the plate's edges, 0.4-0.6 wavelengths away, and pulls the slot's
  pole up or down as the plate grows (measured +4.4 % to -6.2 % over 100-200 mm,
  oscillating with the side). So each plate's slot must agree with the strip within
  6 % (the spread measured over those five plates), and the mean over the three
  plates, which span about one period of that oscillation, within 3 % (measured
  -2.29 %; the grid's extra ring of free edges makes the slot larger than the strip's
  exact complement, which lowers it; see below). This is a coarser agreement than the
  brief hoped for: the plates needed for the edges' echo to fall below 1 % are several
  wavelengths across, too costly here.
- Against Hallen: the strip between the pole of the drawn strip (62 x 4.6 mm) and that
  of the strip its nodes hold (60 x 4 mm), each widened by 2 % (the Hallen solution's
  own drift and its 1.7 % offset from Tesche's value, as in test_e2e_strip.py); the slot
  between the poles of strips the size of the grid slot's two outlines, the hole's
  nodes (60 x 4 mm) and the plate's innermost nodes (64 x 8 mm), widened by the same
  2 % (Babinet maps the slot to a strip of the same outline; which outline the
  staircased slot acts as lies between the two).
- The slot mode is the pole nearest the strip's, the strongest in the probe, and it
  stays when the plate grows: from 120 to 170 mm a plate mode, which scales with
  1/side, would fall by 29 %; the slot mode must move less than 10 % (measured -2.1 %).
- Q is not asserted: Babinet gives the slot the strip's Q only on an infinite screen,
  and the edge echoes of these plates spread it by +5 % to +25 % (3.48-4.80 against
  3.83), more than any tolerance that would still test something.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.constants import c as C0

from ringprint.meshing import primitives
from ringprint.meshing.surface import Surface

try:  # works both as a rootdir-relative module and inside a tests package
    from . import _e2e
    from . import _references as ref
except ImportError:
    import _e2e
    import _references as ref

pytestmark = pytest.mark.slow

LENGTH_MM, WIDTH_MM = 62.0, 4.6
CELL_MM = 2.0
F_MIN, F_MAX = 1.0e9, 3.2e9
PLATES_MM = (120.0, 140.0, 170.0)
STRIP_PROBE = {"at": [-9.0, 2.0, 3.2], "normal": "y", "size": CELL_MM}
SLOT_PROBE = {"at": [-25.2, 1.2, 2.0], "normal": "z", "size": CELL_MM}
#: Outlines (length, width, mm) the staircase gives the strip and the slot (module docstring).
HELD_STRIP = (60.0, 4.0)
SLOT_OUTER = (64.0, 8.0)


def plate_with_slot(side_mm: float, name: str = "plate") -> Surface:
    """Square zero-thickness plate in z = 0, side ``side_mm``, with the centred
    ``LENGTH_MM x WIDTH_MM`` rectangular hole: the frame between the two outlines as
    four quadrilaterals of two triangles each (normals +z)."""
    a, l, w = side_mm / 2, LENGTH_MM / 2, WIDTH_MM / 2
    outer = [(-a, -a), (a, -a), (a, a), (-a, a)]
    inner = [(-l, -w), (l, -w), (l, w), (-l, w)]
    pts = np.array([(x, y, 0.0) for x, y in outer + inner])
    faces = []
    for k in range(4):
        k1 = (k + 1) % 4
        faces += [(k, k1, 4 + k1), (k, 4 + k1, 4 + k)]
    return Surface(name, pts, np.array(faces, np.int64))


def _run(folder, sheet, probe) -> dict:
    _e2e.write_stl(folder / "sheet.stl", sheet)
    case = _e2e.write_case(folder, "sheet", [("sheet", "sheet.stl", "pec")],
                           {"f_min": f"{F_MIN / 1e9} GHz", "f_max": f"{F_MAX / 1e9} GHz"},
                           grid={"cells_per_wavelength": C0 / (F_MAX * CELL_MM * 1e-3)},
                           analysis={"q_max": 20}, probe=probe)
    return _e2e.run(case)


@pytest.fixture(scope="module")
def strip(tmp_path_factory):
    sheet = primitives.plate((-LENGTH_MM / 2, -WIDTH_MM / 2), (LENGTH_MM / 2, WIDTH_MM / 2), 0.0)
    return _run(tmp_path_factory.mktemp("strip"), sheet, STRIP_PROBE)


@pytest.fixture(scope="module")
def slots(tmp_path_factory):
    return {side: _run(tmp_path_factory.mktemp(f"slot{int(side)}"), plate_with_slot(side), SLOT_PROBE)
            for side in PLATES_MM}


def _pole(outline_mm) -> complex:
    """Hallen pole of a strip of this length x width (mm), as a wire of radius w / 4."""
    return ref.thin_wire_pole(outline_mm[0] * 1e-3, outline_mm[1] * 1e-3 / 4)


def _strip_mode(strip) -> dict:
    return _e2e.nearest_mode(strip, _pole((LENGTH_MM, WIDTH_MM)).real)


def _slot_mode(run, strip) -> dict:
    """The slot mode: the pole nearest the strip's."""
    return _e2e.nearest_mode(run, _strip_mode(strip)["frequency_hz"])


def test_grids_have_nodes_on_even_millimetres(strip, slots):
    """The docstring's node sets need 2 mm cells with a node at the origin in every run."""
    for run in (strip, *slots.values()):
        g = run["grid"]
        assert g["step_min_m"] == pytest.approx(CELL_MM * 1e-3, rel=1e-9)
        assert g["step_max_m"] == pytest.approx(CELL_MM * 1e-3, rel=1e-9)
        origin_cells = np.asarray(g["origin_m"]) / (CELL_MM * 1e-3)
        np.testing.assert_allclose(origin_cells, np.round(origin_cells), atol=1e-6)


def test_strip_between_the_hallen_poles_of_the_drawn_and_the_held_strip(strip):
    """Strip frequency between the Hallen poles (Tesche 1973) of the drawn 62 x 4.6 mm and
    the node-held 60 x 4 mm strip, each widened by 2 % (module docstring)."""
    drawn, held = _pole((LENGTH_MM, WIDTH_MM)), _pole(HELD_STRIP)
    f = _strip_mode(strip)["frequency_hz"]
    assert 0.98 * drawn.real < f < 1.02 * held.real, (drawn, held, _e2e.describe(strip))


def test_slot_between_the_hallen_poles_of_its_two_grid_outlines(strip, slots):
    """Babinet (Booker 1946): each slot rings at the pole of a strip of its outline; on the
    grid that outline lies between 60 x 4 and 64 x 8 mm (Hallen poles widened by 2 %)."""
    lo, hi = _pole(SLOT_OUTER).real, _pole(HELD_STRIP).real
    for side, run in slots.items():
        f = _slot_mode(run, strip)["frequency_hz"]
        assert 0.98 * lo < f < 1.02 * hi, (side, lo, hi, _e2e.describe(run))


def test_slot_rings_at_the_strip_frequency(strip, slots):
    """Babinet (Booker 1946; Balanis 2005 sec. 12.8): slot and strip share their natural
    frequency. Each plate within 6 %, the mean of the three plates within 3 % (finite
    plate edges; module docstring)."""
    f_strip = _strip_mode(strip)["frequency_hz"]
    ratios = {side: _slot_mode(run, strip)["frequency_hz"] / f_strip for side, run in slots.items()}
    assert all(abs(r - 1.0) < 0.06 for r in ratios.values()), ratios
    assert abs(np.mean(list(ratios.values())) - 1.0) < 0.03, ratios


def test_slot_mode_is_the_strongest_and_stays_when_the_plate_grows(strip, slots):
    """The slot mode is the strongest pole in the probe in every plate, and from the
    smallest to the largest plate it moves less than 10 %, where a plate mode (half-wave
    along a side, common practice) would move by 1 - 120/170 = 29 %."""
    modes = {side: _slot_mode(run, strip) for side, run in slots.items()}
    for side, run in slots.items():
        assert modes[side]["amplitude"] == max(m["amplitude"] for m in run["modes"]), _e2e.describe(run)
    small, large = min(PLATES_MM), max(PLATES_MM)
    shift = modes[large]["frequency_hz"] / modes[small]["frequency_hz"] - 1.0
    plate_shift = small / large - 1.0
    assert abs(shift) < 0.10 < abs(plate_shift), (shift, plate_shift)
