"""Build the meshes of the handset-size benchmark case (an invented scenario).

    python benchmarks/handset/build.py

An invented bar-shaped handset, 150 x 72 x 9 mm: a metal frame broken into four
segments by 1.5 mm slots, a plastic back cover, a display glass with a metal mid
plate behind it, a battery can and a main board with a 0.5 mm gap between them, and
a shield can on the board. Every dimension is made up (plausible for such a product).
It exists to measure turnaround on a case of real size (benchmarks/bench_turnaround.py);
it is not a demo of good design. Coordinates in mm, origin at the centre of the back face.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import gmsh
import meshio

HERE = Path(__file__).resolve().parent
_spec = importlib.util.spec_from_file_location("build_meshes", HERE.parents[1] / "cases" / "build_meshes.py")
bm = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(bm)

L, W, H = 150.0, 72.0, 9.0      # outside of the frame
WALL, SLOT, SLOT_X = 1.5, 1.5, 55.0


def frame():
    occ = gmsh.model.occ
    outer = occ.addBox(-L / 2, -W / 2, 0.0, L, W, H)
    inner = occ.addBox(-L / 2 + WALL, -W / 2 + WALL, -1.0, L - 2 * WALL, W - 2 * WALL, H + 2)
    ring, _ = occ.cut([(3, outer)], [(3, inner)])
    slots = [(3, occ.addBox(x - SLOT / 2, -W, -1.0, SLOT, 2 * W, H + 2)) for x in (-SLOT_X, SLOT_X)]
    occ.cut(ring, slots)


def _box(x0, y0, z0, x1, y1, z1):
    return lambda: gmsh.model.occ.addBox(x0, y0, z0, x1 - x0, y1 - y0, z1 - z0)


PARTS = {
    # inside of the frame: x +-73.5, y +-34.5
    "frame.stl": frame,
    "back_cover.stl": _box(-73.5, -34.5, 0.0, 73.5, 34.5, 1.0),     # plastic, 1 mm
    "battery.stl": _box(-42.0, -30.0, 1.5, 28.0, 30.0, 6.0),        # metal can 70 x 60 x 4.5
    "board.stl": _box(28.5, -32.0, 2.5, 66.0, 32.0, 3.5),           # 0.5 mm from the battery
    "shield_can.stl": _box(40.0, -10.0, 3.5, 56.0, 8.0, 5.0),       # on the board
    "mid_plate.stl": _box(-72.5, -33.5, 6.5, 72.5, 33.5, 7.1),      # 1 mm short of the frame
    "display.stl": _box(-73.5, -34.5, 7.6, 73.5, 34.5, 8.8),        # glass, 1.2 mm
}


def main():
    gmsh.initialize(["-noenv"])
    gmsh.option.setNumber("General.Terminal", 0)
    try:
        for fname, build in PARTS.items():
            verts, faces = bm.mesh_part(build, 6.0)
            faces = bm.orient_outward(verts, faces)
            bm.check_surface(verts, faces, "solid", f"handset/{fname}")
            meshio.write(HERE / fname, meshio.Mesh(verts, [("triangle", faces)]), file_format="stl",
                         binary=True)
            print(f"handset/{fname}: {len(faces)} triangles")
    finally:
        gmsh.finalize()
    return 0


if __name__ == "__main__":
    sys.exit(main())
