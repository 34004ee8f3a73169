"""Build the triangle meshes of the demo cases (invented scenarios) as binary STL,
and the STEP assembly of the one case delivered as a single CAD file.

    python cases/build_meshes.py            # rebuild every case's meshes, then check them
    python cases/build_meshes.py --check    # only check the committed meshes

Both devices are invented for the demos; every dimension is made up (chosen to be
plausible for such products). Coordinates are in millimetres. Geometry comes from
gmsh's OpenCASCADE kernel; the surface triangles are taken from gmsh, oriented here
with numpy (every closed solid's normals point out of the material, also on the
inner walls of a hollow shell) and written as binary STL with meshio.

Checks, per file: a solid is watertight (every edge shared by exactly two
triangles, consistently oriented) with outward normals (positive enclosed volume per
outer boundary, negative per cavity); a sheet is open (it has boundary edges) and
consistently oriented; no triangle is degenerate; the file stays small.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import gmsh
import meshio
import numpy as np

HERE = Path(__file__).resolve().parent
MAX_CASE_BYTES = 2_000_000  # all meshes of one case together


# ------------------------------------------------------------------ geometry
def _shell_cylinder(r_out, z0, z1, wall):
    """Closed hollow cylinder (a can with lid and floor): outer minus inner solid."""
    occ = gmsh.model.occ
    outer = occ.addCylinder(0, 0, z0, 0, 0, z1 - z0, r_out)
    inner = occ.addCylinder(0, 0, z0 + wall, 0, 0, z1 - z0 - 2 * wall, r_out - wall)
    occ.cut([(3, outer)], [(3, inner)])


def _rounded_box(x0, y0, z0, dx, dy, dz, radius, vertical_only=False):
    """A box with filleted edges (all twelve, or only the four vertical ones)."""
    occ = gmsh.model.occ
    box = occ.addBox(x0, y0, z0, dx, dy, dz)
    occ.synchronize()
    faces = gmsh.model.getBoundary([(3, box)], combined=False, oriented=False)
    curves = {abs(c) for face in faces
              for _, c in gmsh.model.getBoundary([face], combined=False, oriented=False)}
    if vertical_only:
        vertical = []
        for c in sorted(curves):
            xmin, ymin, zmin, xmax, ymax, zmax = gmsh.model.getBoundingBox(1, c)
            if zmax - zmin > 0.5 * dz:
                vertical.append(c)
        curves = vertical
    out = occ.fillet([box], sorted(curves), [radius])
    return out[0][1]


def wrist_parts():
    """Invented wrist-worn device, 46 mm across: split bezel, battery, board, PC shell."""
    occ = gmsh.model.occ
    parts = {}

    def bezel():
        # 40 mm outer diameter, 1.5 mm wall, 4 mm tall, one 1 mm gap on the +x side
        ring = occ.addCylinder(0, 0, 5.5, 0, 0, 4.0, 20.0)
        hole = occ.addCylinder(0, 0, 5.0, 0, 0, 5.0, 18.5)
        occ.cut([(3, ring)], [(3, hole)])
        gap = occ.addBox(15.0, -0.5, 5.0, 10.0, 1.0, 5.0)
        occ.cut([(3, ring)], [(3, gap)])

    def battery():
        # 30 x 24 x 4 mm pouch in a metal can, 1.2 mm edge radius, under the board
        _rounded_box(-15.0, -12.0, 0.5, 30.0, 24.0, 4.0, 1.2)

    def board_ground():
        # round board, 34 mm diameter, 0.8 mm thick, all ground: a thin metal solid
        occ.addCylinder(0, 0, 5.0, 0, 0, 0.8, 17.0)

    def shell():
        # polycarbonate case: 23 mm outer radius, 13 mm tall, 1.5 mm wall everywhere
        _shell_cylinder(23.0, -1.5, 11.5, 1.5)

    parts["bezel_ring.stl"] = ("solid", bezel)
    parts["battery.stl"] = ("solid", battery)
    parts["board_ground.stl"] = ("solid", board_ground)
    parts["shell.stl"] = ("solid", shell)
    return parts


def tag_parts():
    """Invented asset tag, 52 x 36 x 12 mm: ground sheet, shield can, coin cell, flex, ABS housing."""
    occ = gmsh.model.occ
    parts = {}

    def ground():
        # 44 x 28 mm board ground, zero-thickness sheet at z = 1 mm, 2 mm corner radius
        occ.addRectangle(-22.0, -14.0, 1.0, 44.0, 28.0, roundedRadius=2.0)

    def shield_can():
        # 14 x 14 x 2.5 mm sheet-metal can standing on the ground, bottom open
        box = occ.addBox(-18.0, -10.0, 1.0, 14.0, 14.0, 2.5)
        occ.synchronize()
        faces = gmsh.model.getBoundary([(3, box)], oriented=False)
        bottom = [f for f in faces if gmsh.model.getBoundingBox(*f)[5] < 1.0 + 1e-6]
        occ.remove([(3, box)])
        occ.remove(bottom)

    def coin_cell():
        # holder for a 20 mm coin cell: 21 mm diameter, 3.2 mm tall, at the origin;
        # the case file moves it under the board (translate)
        occ.addCylinder(0, 0, 0, 0, 0, 3.2, 10.5)

    def flex():
        # 5 mm wide flex strip folded back over the board edge (a bent sheet):
        # along the board at z = 1.5, up at x = 23, back over the top at z = 5
        path = [(2.0, 1.5), (23.0, 1.5), (23.0, 5.0), (10.0, 5.0)]
        pts = [occ.addPoint(x, 7.0, z) for x, z in path]
        lines = [occ.addLine(a, b) for a, b in zip(pts[:-1], pts[1:])]
        occ.extrude([(1, ln) for ln in lines], 0.0, 5.0, 0.0)

    def housing():
        # ABS housing, 52 x 36 x 12 mm, 1.5 mm wall, rounded vertical corners
        outer = _rounded_box(-26.0, -18.0, -4.5, 52.0, 36.0, 12.0, 4.0, vertical_only=True)
        inner = _rounded_box(-24.5, -16.5, -3.0, 49.0, 33.0, 9.0, 2.5, vertical_only=True)
        occ.cut([(3, outer)], [(3, inner)])

    parts["ground_sheet.stl"] = ("sheet", ground)
    parts["shield_can.stl"] = ("sheet", shield_can)
    parts["coin_cell.stl"] = ("solid", coin_cell)
    parts["flex_strip.stl"] = ("sheet", flex)
    parts["housing.stl"] = ("solid", housing)
    return parts


def tracker_bodies():
    """Invented pocket tracker, 44 x 44 x 10 mm, delivered as ONE STEP assembly: a metal
    frame ring, the board ground, a coin cell, two screws and the PC housing around them."""
    occ = gmsh.model.occ

    def frame():
        # 40 x 40 mm rounded-square ring, 1 mm wall, 3 mm tall, z = 2..5
        outer = _rounded_box(-20.0, -20.0, 2.0, 40.0, 40.0, 3.0, 3.0, vertical_only=True)
        inner = _rounded_box(-19.0, -19.0, 1.5, 38.0, 38.0, 4.0, 2.0, vertical_only=True)
        return occ.cut([(3, outer)], [(3, inner)])[0][0][1]

    def board_ground():
        # 34 x 34 mm board, 0.8 mm thick, all ground, under the frame
        return occ.addBox(-17.0, -17.0, 1.0, 34.0, 34.0, 0.8)

    def coin_cell():
        # 20 mm coin cell, 3.2 mm tall, on the board
        return occ.addCylinder(0, 0, 2.0, 0, 0, 3.2, 10.0)

    def screw(x):
        # 1.4 mm screws, 3 mm long, beside the cell (the same product twice)
        return lambda: occ.addCylinder(x, -13.0, 2.0, 0, 0, 3.0, 0.7)

    def housing():
        # PC housing, 44 x 44 x 10 mm, 1.2 mm wall, rounded vertical corners
        outer = _rounded_box(-22.0, -22.0, -1.0, 44.0, 44.0, 10.0, 4.0, vertical_only=True)
        inner = _rounded_box(-20.8, -20.8, 0.2, 41.6, 41.6, 7.6, 2.8, vertical_only=True)
        return occ.cut([(3, outer)], [(3, inner)])[0][0][1]

    return [("Frame", frame), ("Board Ground", board_ground), ("Coin Cell", coin_cell),
            ("Screw M1.4", screw(-12.0)), ("Screw M1.4", screw(12.0)), ("Housing", housing)]


CASES = {"wrist": wrist_parts, "tag": tag_parts}
#: Cases whose geometry is one STEP assembly with named bodies: file name and builder.
ASSEMBLIES = {"tracker": ("tracker.step", tracker_bodies)}


# ------------------------------------------------------------------ meshing
def _triangles_from_gmsh():
    """(vertices, faces) of all surface triangles in the current gmsh model, merged nodes."""
    tags, coords, _ = gmsh.model.mesh.getNodes()
    xyz = coords.reshape(-1, 3)
    index = {int(t): i for i, t in enumerate(tags)}
    faces = []
    for dim, ent in gmsh.model.getEntities(2):
        types, _, nodes = gmsh.model.mesh.getElements(dim, ent)
        for etype, enodes in zip(types, nodes):
            if etype != 2:  # 3-node triangle
                continue
            faces.append(np.array([index[int(n)] for n in enodes], dtype=np.int64).reshape(-1, 3))
    faces = np.concatenate(faces)
    used, inv = np.unique(faces, return_inverse=True)
    return xyz[used].astype(np.float64), inv.reshape(-1, 3)


def mesh_part(build, size_max):
    """Run one part's geometry builder in a fresh gmsh model and return its triangles."""
    gmsh.model.add("part")
    build()
    gmsh.model.occ.removeAllDuplicates()
    gmsh.model.occ.synchronize()
    gmsh.option.setNumber("Mesh.MeshSizeMax", size_max)
    gmsh.option.setNumber("Mesh.MeshSizeMin", 0.6)  # keeps small fillets coarse
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 24)  # segments per full turn
    gmsh.option.setNumber("Mesh.Algorithm", 6)
    gmsh.model.mesh.generate(2)
    verts, faces = _triangles_from_gmsh()
    gmsh.model.remove()
    return verts, faces


# ------------------------------------------------------------------ checks/orientation
def _edges(faces):
    """Directed half-edges (3M, 2) and undirected key per half-edge."""
    he = faces[:, [0, 1, 1, 2, 2, 0]].reshape(-1, 2)
    key = np.sort(he, axis=1)
    return he, key


def _components(faces, nv):
    """Label of the edge-connected component of each triangle."""
    parent = np.arange(nv)

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for a, b, c in faces:
        for u, v in ((a, b), (b, c)):
            ru, rv = find(u), find(v)
            if ru != rv:
                parent[ru] = rv
    roots = np.array([find(v) for v in faces[:, 0]])
    return np.unique(roots, return_inverse=True)[1]


def _orient_consistently(faces):
    """Flip triangles so that neighbours across every shared edge run it in opposite directions."""
    faces = faces.copy()
    he, key = _edges(faces)
    tri_of_he = np.repeat(np.arange(len(faces)), 3)
    neighbours = {}
    for h, (u, v) in enumerate(map(tuple, key)):
        neighbours.setdefault((u, v), []).append(h)
    seen = np.zeros(len(faces), bool)
    for start in range(len(faces)):
        if seen[start]:
            continue
        seen[start] = True
        stack = [start]
        while stack:
            t = stack.pop()
            for e in range(3):
                u, v = faces[t, e], faces[t, (e + 1) % 3]
                for h in neighbours[(min(u, v), max(u, v))]:
                    s = tri_of_he[h]
                    if s == t or seen[s]:
                        continue
                    a, b = faces[s, h % 3], faces[s, (h % 3 + 1) % 3]
                    if (a, b) == (u, v):  # same direction: flip the neighbour
                        faces[s] = faces[s, ::-1]
                    seen[s] = True
                    stack.append(s)
    return faces


def _signed_volume(verts, faces):
    v0, v1, v2 = (verts[faces[:, i]] for i in range(3))
    return float(np.einsum("ij,ij->i", v0, np.cross(v1, v2)).sum() / 6.0)


def _inside(point, verts, faces):
    """Parity of crossings of a ray from point along a skew direction (Moller-Trumbore)."""
    d = np.array([0.5773, 0.5812, 0.5735])
    v0, v1, v2 = (verts[faces[:, i]] for i in range(3))
    e1, e2 = v1 - v0, v2 - v0
    p = np.cross(d, e2)
    det = np.einsum("ij,ij->i", e1, p)
    ok = np.abs(det) > 1e-14
    inv = np.where(ok, 1.0 / np.where(ok, det, 1.0), 0.0)
    s = point - v0
    u = np.einsum("ij,ij->i", s, p) * inv
    q = np.cross(s, e1)
    v = (q @ d) * inv
    t = np.einsum("ij,ij->i", e2, q) * inv
    hit = ok & (u >= 0) & (v >= 0) & (u + v <= 1) & (t > 0)
    return bool(hit.sum() % 2)


def orient_outward(verts, faces):
    """Consistent orientation; each closed component outward from the material it bounds.

    A component nested inside an odd number of others bounds a cavity, so its
    normals point into the cavity (negative signed volume); otherwise positive.
    """
    faces = _orient_consistently(faces)
    label = _components(faces, len(verts))
    for c in range(label.max() + 1):
        mine = faces[label == c]
        others = faces[label != c]
        probe = verts[mine[0]].mean(axis=0)
        depth_odd = _inside(probe, verts, others) if len(others) else False
        vol = _signed_volume(verts, mine)
        if (vol < 0) != depth_odd:
            faces[label == c] = mine[:, ::-1]
    return faces


def orient_sheet(verts, faces):
    """Consistent orientation for an open sheet, facing away from its centroid.

    For a folded sheet (an open box, a bent strip) that is "outward"; a flat sheet
    (no preferred side) faces the positive direction of its normal's largest axis.
    """
    faces = _orient_consistently(faces)
    v0, v1, v2 = (verts[faces[:, i]] for i in range(3))
    n2a = np.cross(v1 - v0, v2 - v0)  # normal times twice the area
    centres = (v0 + v1 + v2) / 3.0
    away = float(np.einsum("ij,ij->", n2a, centres - centres.mean(axis=0)))
    size = np.linalg.norm(n2a, axis=1).sum() * np.ptp(verts, axis=0).max()
    if abs(away) > 1e-6 * size:
        flip = away < 0
    else:
        mean = n2a.sum(axis=0)
        flip = mean[np.argmax(np.abs(mean))] < 0
    return faces[:, ::-1].copy() if flip else faces


def check_surface(verts, faces, kind, name):
    """Raise SystemExit with a one-line message if the surface breaks its kind's rules."""
    he, key = _edges(faces)
    _, inv, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
    inv = inv.ravel()
    area = 0.5 * np.linalg.norm(np.cross(verts[faces[:, 1]] - verts[faces[:, 0]],
                                         verts[faces[:, 2]] - verts[faces[:, 0]]), axis=1)
    if np.any(area < 1e-10):
        raise SystemExit(f"{name}: {int((area < 1e-10).sum())} degenerate triangles")
    if np.any(counts > 2):
        raise SystemExit(f"{name}: {int((counts > 2).sum())} edges shared by more than two triangles")
    # consistent orientation: the two half-edges of an interior edge run opposite ways
    fwd = he[:, 0] < he[:, 1]
    n_fwd = np.bincount(inv, weights=fwd, minlength=len(counts))
    if np.any((counts == 2) & (n_fwd != 1)):
        raise SystemExit(f"{name}: inconsistent triangle orientation")
    open_edges = int((counts == 1).sum())
    if kind == "solid":
        if open_edges:
            raise SystemExit(f"{name}: solid is not watertight ({open_edges} open edges)")
        label = _components(faces, len(verts))
        vols = []
        for c in range(label.max() + 1):
            mine, others = faces[label == c], faces[label != c]
            vol = _signed_volume(verts, mine)
            cavity = len(others) > 0 and _inside(verts[mine[0]].mean(axis=0), verts, others)
            if (vol < 0) != cavity or vol == 0:
                raise SystemExit(f"{name}: normals of boundary component {c} do not point out of the material")
            vols.append(vol)
        return f"solid, watertight, {len(vols)} boundary component(s), volume {sum(vols):.1f} mm^3"
    if open_edges == 0:
        raise SystemExit(f"{name}: sheet has no boundary (it is closed)")
    return f"sheet, open ({open_edges} boundary edges), area {area.sum():.1f} mm^2"


# ------------------------------------------------------------------ driver
def read_stl(path):
    mesh = meshio.read(path)
    return mesh.points.astype(np.float64), mesh.cells_dict["triangle"].astype(np.int64)


def build_assembly(case):
    """Write the case's bodies as one STEP file with a product name per body."""
    from ringprint.meshing._cad import write_named_step

    fname, bodies = ASSEMBLIES[case]
    gmsh.initialize(["-noenv"])
    gmsh.option.setNumber("General.Terminal", 0)
    try:
        gmsh.model.add(case)
        tags = {build(): name for name, build in bodies()}
        gmsh.model.occ.synchronize()
        names = [tags[t] for _, t in gmsh.model.getEntities(3)]
        write_named_step(HERE / case / fname, names, assembly=case)
    finally:
        gmsh.finalize()


def check_assembly(case):
    """Every body is read back under its name, as a closed solid."""
    from ringprint.meshing import body_labels, load_parts

    fname, bodies = ASSEMBLIES[case]
    path = HERE / case / fname
    expected = body_labels([name for name, _ in bodies()], "")  # builders are not called here
    surfaces = load_parts(str(path), unit="mm")
    if sorted(s.name for s in surfaces) != sorted(expected):
        raise SystemExit(f"{case}/{fname}: bodies {[s.name for s in surfaces]}, expected {expected}")
    for s in surfaces:
        if s.kind != "solid" or s.volume <= 0:
            raise SystemExit(f"{case}/{fname}: body {s.name!r} is not a closed solid")
        print(f"{case}/{fname}: {s.name}: {s.n_triangles} triangles, volume {s.volume * 1e9:.1f} mm^3")
    size = path.stat().st_size
    if size > MAX_CASE_BYTES:
        raise SystemExit(f"{case}: {fname} takes {size} bytes, more than {MAX_CASE_BYTES}")
    print(f"{case}: {size / 1e3:.0f} kB STEP assembly")


def build_case(case, size_max=2.5):
    if case in ASSEMBLIES:
        return build_assembly(case)
    gmsh.initialize(["-noenv"])
    gmsh.option.setNumber("General.Terminal", 0)
    try:
        for fname, (kind, build) in CASES[case]().items():
            verts, faces = mesh_part(build, size_max)
            faces = orient_outward(verts, faces) if kind == "solid" else orient_sheet(verts, faces)
            check_surface(verts, faces, kind, f"{case}/{fname}")
            out = HERE / case / fname
            out.parent.mkdir(exist_ok=True)
            meshio.write(out, meshio.Mesh(verts, [("triangle", faces)]), file_format="stl", binary=True)
    finally:
        gmsh.finalize()


def check_case(case):
    if case in ASSEMBLIES:
        return check_assembly(case)
    total = 0
    for fname, (kind, _) in CASES[case]().items():  # builders are not called here
        path = HERE / case / fname
        verts, faces = read_stl(path)
        total += path.stat().st_size
        summary = check_surface(verts, faces, kind, f"{case}/{fname}")
        print(f"{case}/{fname}: {len(faces)} triangles, {summary}")
    if total > MAX_CASE_BYTES:
        raise SystemExit(f"{case}: meshes take {total} bytes, more than {MAX_CASE_BYTES}")
    print(f"{case}: {total / 1e3:.0f} kB of meshes")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="only check the committed meshes")
    parser.add_argument("cases", nargs="*", default=sorted({**CASES, **ASSEMBLIES}),
                        help="which cases (default: all)")
    args = parser.parse_args(argv)
    for case in args.cases:
        if case not in CASES and case not in ASSEMBLIES:
            raise SystemExit(f"unknown case {case!r}; choose from {', '.join(sorted({**CASES, **ASSEMBLIES}))}")
        if not args.check:
            build_case(case)
        check_case(case)
    return 0


if __name__ == "__main__":
    sys.exit(main())
