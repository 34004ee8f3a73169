"""STEP/IGES bodies tessellated by gmsh's OpenCASCADE kernel (private).

Body names: gmsh labels each imported solid with the path of names in the file's
product structure, ``Shapes/<assembly>/<instance>/<product>``; the last piece (the
product that holds the solid) is the body's name. A body without one (an empty
product name, or the default name the OpenCASCADE writer gives every product,
``Open CASCADE STEP translator <version> <n>``) gets the file stem and its position,
see :func:`ringprint.meshing.read.body_labels`. IGES carries no product structure:
its bodies are always named that way.
"""

import contextlib
import os
import re
import sys

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing.read import body_labels
from ringprint.meshing.surface import Surface

#: Segments per full turn of a curved face (gmsh Mesh.MeshSizeFromCurvature). With
#: N segments the chord error is R (1 - cos(pi/N)) ~ 0.0086 R for N = 24.
SEGMENTS_PER_TURN = 24
#: Triangles no longer than this fraction of a body's bounding-box diagonal when no
#: cell size is given.
DIAGONAL_FRACTION = 1 / 40

_NUMBER_OPTIONS = ("General.Terminal", "General.Verbosity", "Mesh.MeshSizeMax", "Mesh.MeshSizeMin",
                   "Mesh.MeshSizeFromCurvature", "Geometry.OCCImportLabels")
#: The product name OpenCASCADE's STEP writer gives a shape that has none.
_WRITER_DEFAULT = re.compile(r"^Open CASCADE STEP translator [\d.]+ [\d.]+$")


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


@contextlib.contextmanager
def _session():
    """A gmsh model of our own, quiet, millimetres, labels on; options put back after."""
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
        gmsh.option.setNumber("Geometry.OCCImportLabels", 1)
        # "MM" rather than "M": gmsh applies a changed target unit only once per
        # process, while millimetres (the kernel's own unit) read back the same every time
        gmsh.option.setString("Geometry.OCCTargetUnit", "MM")
        gmsh.model.add("ringprint-import")
        yield gmsh
    finally:
        for k, val in saved.items():
            gmsh.option.setNumber(k, val)
        gmsh.option.setString("Geometry.OCCTargetUnit", unit)
        if own:
            gmsh.finalize()
        else:
            gmsh.model.remove()


def _label(entity_name):
    """The body's own name from gmsh's label path ('' when the file gives none)."""
    last = entity_name.split("/")[-1].strip()
    return "" if last == "Shapes" or _WRITER_DEFAULT.match(last) else last


def _bodies(gmsh, path):
    """Import ``path`` into the current model; ``[(name, [surface tags])]`` per body."""
    try:
        with quiet_stdio():
            gmsh.model.occ.importShapes(path)
            gmsh.model.occ.synchronize()
    except Exception as exc:
        detail = " ".join(str(exc).split())[:120]
        raise RingprintError(f"{path}: cannot be read as CAD ({detail}); check it is a complete "
                             "STEP/IGES file and export it again") from None
    volumes = [t for _, t in gmsh.model.getEntities(3)]
    iges = os.path.splitext(path)[1].lower() in (".iges", ".igs")
    if not volumes and iges and gmsh.model.getEntities(2):
        # IGES usually carries trimmed faces only: sew them, then take every
        # connected shell as a body (the surface checks decide closed or open)
        with quiet_stdio():
            gmsh.model.occ.healShapes(sewFaces=True, makeSolids=True)
            gmsh.model.occ.synchronize()
        groups = _shells([t for _, t in gmsh.model.getEntities(2)])
        raw = [""] * len(groups)
    elif not volumes:
        nsurf = len(gmsh.model.getEntities(2))
        raise RingprintError(f"{path}: holds no solid bodies ({nsurf} loose faces); export the "
                             "part as a solid, or as a triangle mesh if it is a sheet conductor")
    else:
        groups = [[abs(t) for _, t in gmsh.model.getBoundary([(3, v)], oriented=False, combined=False)]
                  for v in volumes]
        raw = [_label(gmsh.model.getEntityName(3, v)) for v in volumes]
    stem = os.path.splitext(os.path.basename(path))[0]
    return list(zip(body_labels(raw, stem), groups))


def cad_body_names(path):
    """Names of the bodies of a STEP/IGES file, in file order, without tessellating.

    The names are those :func:`read_cad` gives the surfaces (see the module docstring).
    """
    with _session() as gmsh:
        return [name for name, _ in _bodies(gmsh, path)]


def _body_sizes(gmsh, bodies):
    """Triangle size (mm) per body from its own bounding-box diagonal, keyed by every
    face, curve and point of the body (what gmsh's size callback is asked about)."""
    sizes = {}
    for _, surfs in bodies:
        box = np.array([gmsh.model.getBoundingBox(2, s) for s in surfs])
        size = float(np.linalg.norm(box[:, 3:].max(axis=0) - box[:, :3].min(axis=0))) * DIAGONAL_FRACTION
        faces = [(2, s) for s in surfs]
        curves = gmsh.model.getBoundary(faces, combined=False, oriented=False)
        points = gmsh.model.getBoundary(faces, combined=False, oriented=False, recursive=True)
        for dim, tag in faces + list(curves) + list(points):
            key = (dim, abs(tag))
            sizes[key] = min(size, sizes.get(key, size))
    return sizes


def read_cad(path, cell_size=None):
    """Tessellate each solid of a STEP/IGES file into its own triangle surface
    (millimetres, ``file_unit`` "mm": the file's own unit is converted by the CAD kernel).

    Triangles are at most ``cell_size / 2`` long (default: :data:`DIAGONAL_FRACTION` of
    each body's own bounding-box diagonal) and curved faces get at least
    :data:`SEGMENTS_PER_TURN` segments per turn, so the sagitta stays below
    ``cell_size**2 / (32 R)``. Bodies are named as the module docstring says.

    References
    ----------
    Geuzaine, C. & Remacle, J.-F., "Gmsh: a 3-D finite element mesh generator with
    built-in pre- and post-processing facilities", Int. J. Numer. Meth. Eng.
    79(11):1309-1331, 2009.
    """
    with _session() as gmsh:
        bodies = _bodies(gmsh, path)
        if cell_size:
            size = cell_size / 2 * 1e3  # mm
        else:
            sizes = _body_sizes(gmsh, bodies)
            size = max(sizes.values())
            gmsh.model.mesh.setSizeCallback(lambda dim, tag, x, y, z, lc: min(lc, sizes.get((dim, tag), lc)))
        gmsh.option.setNumber("Mesh.MeshSizeMax", size)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", SEGMENTS_PER_TURN)
        try:
            with quiet_stdio():
                gmsh.model.mesh.generate(2)
        finally:
            if not cell_size:
                gmsh.model.mesh.removeSizeCallback()
        tags, coords, _ = gmsh.model.mesh.getNodes()
        if len(tags) == 0:
            raise RingprintError(f"{path}: no face could be tessellated; export the part as STEP "
                                 "(solids) or as a triangle mesh")
        index = np.full(int(tags.max()) + 1, -1, np.int64)
        index[tags.astype(np.int64)] = np.arange(len(tags))
        pts = coords.reshape(-1, 3)
        out = []
        for name, surfs in bodies:
            faces = []
            for surf in surfs:
                _, nodes = gmsh.model.mesh.getElementsByType(2, surf)
                faces.append(index[np.asarray(nodes, np.int64)].reshape(-1, 3))
            faces = np.concatenate(faces)
            used, local = np.unique(faces, return_inverse=True)  # this body's own vertices only
            out.append(Surface(name=name, vertices=pts[used], faces=local.reshape(-1, 3).astype(np.int64),
                               source=path, file_unit="mm"))
        return out


_PRODUCT = re.compile(r"(=\s*PRODUCT\(\s*)'((?:[^']|'')*)'(\s*,\s*)'((?:[^']|'')*)'")


def write_named_step(path, names, assembly=None):
    """Write the current gmsh model as STEP with the given product name per solid.

    gmsh's writer names every product after itself (``Open CASCADE STEP translator
    ...``); this writes the file, then sets the id and name of the product that holds
    each solid (in the order of ``gmsh.model.getEntities(3)``) in the file text (ISO
    10303-21 clear text). ``assembly`` names the top product when the model holds
    several solids. For building test and demo files; ASCII names only.
    """
    import gmsh

    with quiet_stdio():
        gmsh.write(os.fspath(path))
    with open(path, encoding="ascii") as fh:
        text = fh.read()
    found = [(m, m.group(2)) for m in _PRODUCT.finditer(text)]
    parts = [(m, int(pid.rsplit(".", 1)[1])) for m, pid in found if re.search(r" \d+\.\d+$", pid)]
    if not parts:  # one solid: the only product is the body
        parts = [(m, 1) for m, _ in found[:1]]
        assembly = None
    if len(parts) != len(names):
        raise ValueError(f"{len(names)} names for {len(parts)} solids")
    new = {m.start(): names[k - 1] for m, k in parts}
    if assembly is not None:
        new.update({m.start(): assembly for m, _ in found if m.start() not in new})

    def rename(m):
        name = new.get(m.start())
        if name is None:
            return m.group(0)
        quoted = name.replace("'", "''")
        return f"{m.group(1)}'{quoted}'{m.group(3)}'{quoted}'"

    with open(path, "w", encoding="ascii") as fh:
        fh.write(_PRODUCT.sub(rename, text))
