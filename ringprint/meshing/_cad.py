"""STEP/IGES bodies tessellated by gmsh's OpenCASCADE kernel (private)."""

import contextlib
import os
import sys

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing.surface import Surface

#: Segments per full turn of a curved face (gmsh Mesh.MeshSizeFromCurvature). With
#: N segments the chord error is R (1 - cos(pi/N)) ~ 0.0086 R for N = 24.
SEGMENTS_PER_TURN = 24


_NUMBER_OPTIONS = ("General.Terminal", "General.Verbosity", "Mesh.MeshSizeMax", "Mesh.MeshSizeMin",
                   "Mesh.MeshSizeFromCurvature")


@contextlib.contextmanager
def quiet_stdio():
    """Silence file descriptors 1 and 2 (the CAD kernel prints to them directly,
    bypassing gmsh's General.Terminal switch)."""
    for stream in (sys.stdout, sys.stderr):
        with contextlib.suppress(Exception):
            stream.flush()
    saved = []
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        for fd in (1, 2):
            saved.append((fd, os.dup(fd)))
            os.dup2(null, fd)
        os.close(null)
    except OSError:  # no real descriptors (embedded interpreter): nothing to silence
        pass
    try:
        yield
    finally:
        for fd, copy in saved:
            os.dup2(copy, fd)
            os.close(copy)


def _shells(surfs):
    """Group faces into connected shells (faces sharing a boundary curve)."""
    import gmsh

    parent = {s: s for s in surfs}

    def root(s):
        while parent[s] != s:
            parent[s] = parent[parent[s]]
            s = parent[s]
        return s

    owner = {}
    for s in surfs:
        for _, c in gmsh.model.getBoundary([(2, s)], oriented=False, combined=False):
            c = abs(c)
            if c in owner:
                parent[root(s)] = root(owner[c])
            else:
                owner[c] = s
    groups = {}
    for s in surfs:
        groups.setdefault(root(s), []).append(s)
    return list(groups.values())


def read_cad(path, cell_size=None):
    """Tessellate each solid of a STEP/IGES file into a triangle surface (millimetres,
    ``file_unit`` "mm": the file's own unit is converted by the CAD kernel).

    Triangles are at most ``cell_size / 2`` long (default: 1/40 of the model's
    bounding-box diagonal) and curved faces get at least :data:`SEGMENTS_PER_TURN`
    segments per turn, so the sagitta stays below ``cell_size**2 / (32 R)``.

    References
    ----------
    Geuzaine, C. & Remacle, J.-F., "Gmsh: a 3-D finite element mesh generator with
    built-in pre- and post-processing facilities", Int. J. Numer. Meth. Eng.
    79(11):1309-1331, 2009.
    """
    import gmsh

    own = not gmsh.isInitialized()
    if own:
        gmsh.initialize(readConfigFiles=False, interruptible=False)
    # gmsh options outlive finalize() within a process: put back what we change
    saved = {k: gmsh.option.getNumber(k) for k in _NUMBER_OPTIONS}
    unit = gmsh.option.getString("Geometry.OCCTargetUnit")
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.Verbosity", 0)
        # "MM" rather than "M": gmsh applies a changed target unit only once per
        # process, while millimetres (the kernel's own unit) read back the same every time
        gmsh.option.setString("Geometry.OCCTargetUnit", "MM")
        gmsh.model.add("ringprint-import")
        try:
            with quiet_stdio():
                gmsh.model.occ.importShapes(path)
                gmsh.model.occ.synchronize()
        except Exception as exc:
            detail = " ".join(str(exc).split())[:120]
            raise RingprintError(f"{path}: cannot be read as CAD ({detail}); check it is a complete "
                                 "STEP/IGES file and export it again") from None
        volumes = gmsh.model.getEntities(3)
        healed = False
        iges = os.path.splitext(path)[1].lower() in (".iges", ".igs")
        if not volumes and iges and gmsh.model.getEntities(2):
            # IGES usually carries trimmed faces only: sew them, then take every
            # connected shell as a body (the surface checks decide closed or open)
            with quiet_stdio():
                gmsh.model.occ.healShapes(sewFaces=True, makeSolids=True)
                gmsh.model.occ.synchronize()
            volumes = gmsh.model.getEntities(3)
            healed = True
        if not volumes and not healed:
            nsurf = len(gmsh.model.getEntities(2))
            raise RingprintError(f"{path}: holds no solid bodies ({nsurf} loose faces); export the "
                                 "part as a solid, or as a triangle mesh if it is a sheet conductor")
        lo = np.array(gmsh.model.getBoundingBox(-1, -1)[:3])
        hi = np.array(gmsh.model.getBoundingBox(-1, -1)[3:])
        size = cell_size / 2 * 1e3 if cell_size else float(np.linalg.norm(hi - lo)) / 40  # mm
        gmsh.option.setNumber("Mesh.MeshSizeMax", size)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", SEGMENTS_PER_TURN)
        with quiet_stdio():
            gmsh.model.mesh.generate(2)
        tags, coords, _ = gmsh.model.mesh.getNodes()
        if len(tags) == 0:
            raise RingprintError(f"{path}: no face could be tessellated; export the part as STEP "
                                 "(solids) or as a triangle mesh")
        index = np.full(int(tags.max()) + 1, -1, np.int64)
        index[tags.astype(np.int64)] = np.arange(len(tags))
        pts = coords.reshape(-1, 3)
        stem = os.path.splitext(os.path.basename(path))[0]
        out = []
        bodies = []  # (name, surface tags)
        if healed:  # sewn faces: one body per connected shell, whatever solids were made
            groups = _shells([t for _, t in gmsh.model.getEntities(2)])
            bodies = [(stem if len(groups) == 1 else f"{stem}:{g}", grp) for g, grp in enumerate(groups)]
        for k, (_, vol) in enumerate([] if healed else volumes):
            surfs = [abs(t) for _, t in gmsh.model.getBoundary([(3, vol)], oriented=False, combined=False)]
            name = gmsh.model.getEntityName(3, vol) or (stem if len(volumes) == 1 else f"{stem}:{k}")
            bodies.append((name.split("/")[-1] or name, surfs))
        for name, surfs in bodies:
            faces = []
            for surf in surfs:
                _, nodes = gmsh.model.mesh.getElementsByType(2, surf)
                faces.append(index[np.asarray(nodes, np.int64)].reshape(-1, 3))
            out.append(Surface(name=name, vertices=pts, faces=np.concatenate(faces), source=path, file_unit="mm"))
        return out
    finally:
        for k, val in saved.items():
            gmsh.option.setNumber(k, val)
        gmsh.option.setString("Geometry.OCCTargetUnit", unit)
        if own:
            gmsh.finalize()
        else:
            gmsh.model.remove()
