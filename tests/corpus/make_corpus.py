"""Write the corpus of bad part files under tests/corpus/meshes/ (committed output),
and the good STEP assembly that the [[assembly]] cases of tests/corpus/cases/ use.

Each file goes with an entry in meshes/expected.json: the keyword arguments to load
it with (``unit``, ``conductor``) and a fragment the one-line RingprintError must
contain. Run: ``python tests/corpus/make_corpus.py`` (deterministic).
"""

import json
import os
import struct

import numpy as np

HERE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "meshes")

TRI = """solid {name}
  facet normal 0 0 1
    outer loop
      vertex {a}
      vertex 1 0 0
      vertex 0 1 0
    endloop
  endfacet
endsolid {name}
"""


def _binary_stl(n_header, n_written, first=0.0):
    tri = struct.pack("<12fH", *([0.0, 0.0, 1.0, first, 0, 0, 1, 0, 0, 0, 1, 0]), 0)
    return b"\0" * 80 + struct.pack("<I", n_header) + tri * n_written


def _step_without_solids(path):
    import gmsh

    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.add("sheet")
        gmsh.model.occ.addRectangle(0, 0, 0, 10, 5)
        gmsh.model.occ.synchronize()
        from ringprint.meshing._cad import quiet_stdio

        with quiet_stdio():
            gmsh.write(path)
    finally:
        gmsh.finalize()


def _assembly_step(path):
    """A four-body STEP assembly for the [[assembly]] cases of ../cases (boxes, mm)."""
    import gmsh

    from ringprint.meshing._cad import write_named_step

    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.add("handset")
        for x, y, dx, dy in ((0, 0, 40, 2), (0, 20, 40, 2), (10, 5, 10, 10), (25, 5, 10, 10)):
            gmsh.model.occ.addBox(x, y, 0, dx, dy, 3)
        gmsh.model.occ.synchronize()
        write_named_step(path, ["Frame Left", "Frame Right", "Shield Can", "Battery"], "Handset")
    finally:
        gmsh.finalize()


def main():
    os.makedirs(HERE, exist_ok=True)
    rng = np.random.default_rng(20240601)
    files = {
        "empty.stl": (b"", {}, "empty"),
        "empty.obj": (b"", {}, "empty"),
        "truncated_binary.stl": (_binary_stl(100, 37)[:-11], {}, "truncated"),
        "garbage.stl": (rng.integers(0, 256, 777, dtype=np.uint8).tobytes(), {}, "STL"),
        "garbage.ply": (rng.integers(0, 256, 501, dtype=np.uint8).tobytes(), {}, "garbage.ply"),
        "garbage.msh": (rng.integers(0, 256, 640, dtype=np.uint8).tobytes(), {}, "garbage.msh"),
        "garbage.step": (b"ISO-10303-21;\nthis is not a model\x00\x01\x02", {}, "garbage.step"),
        "ascii_no_endsolid.stl": (TRI.format(name="cut", a="0 0 0").rsplit("endsolid", 1)[0].encode(),
                                  {}, "truncated"),
        "nan_vertex.stl": (_binary_stl(3, 3, first=float("nan")), {}, "NaN"),
        "no_faces.obj": (b"v 0 0 0\nv 1 0 0\nv 0 1 0\n", {}, "no triangles"),
        "bad_index.off": (b"OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 7\n", {}, "bad_index.off"),
        "part.xyz": (b"0 0 0\n1 0 0\n", {}, "unknown file extension"),
        "unknown_unit.stl": (TRI.format(name="ok", a="0 0 0").encode(), {"unit": "furlong"}, "unknown length unit"),
    }
    expected = {}
    for name, (data, kwargs, fragment) in files.items():
        with open(os.path.join(HERE, name), "wb") as fh:
            fh.write(data)
        expected[name] = {"kwargs": kwargs, "message_contains": fragment}
    _step_without_solids(os.path.join(HERE, "no_solids.step"))
    expected["no_solids.step"] = {"kwargs": {}, "message_contains": "no solid bodies"}
    _assembly_step(os.path.join(os.path.dirname(HERE), "cases", "parts", "handset.step"))
    with open(os.path.join(HERE, "expected.json"), "w") as fh:
        json.dump(expected, fh, indent=1, sort_keys=True)
        fh.write("\n")


if __name__ == "__main__":
    main()
