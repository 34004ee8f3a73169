"""Reading parts: triangle meshes through meshio, CAD B-rep through gmsh."""

import contextlib
import io
import os
import re
import warnings

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing.surface import Surface

#: Extensions read through meshio (triangle/quad surfaces, or tetrahedra whose outer
#: faces are taken).
MESH_EXTENSIONS = (".stl", ".obj", ".ply", ".off", ".vtk", ".vtu", ".msh")
#: Extensions tessellated through gmsh's OpenCASCADE kernel (the file's unit honoured).
CAD_EXTENSIONS = (".step", ".stp", ".iges", ".igs")


def body_labels(names, stem):
    """Unique body names: ``names`` as read ('' where the file gives none), in file order.

    An unnamed body is called ``STEM:K`` (K its 1-based position in the file), or just
    the stem when it is the file's only body. Names given more than once get ``:1``,
    ``:2``, ... in file order (an assembly holding one product several times: screws).
    """
    raw = [n.strip() or (stem if len(names) == 1 else f"{stem}:{k}") for k, n in enumerate(names, 1)]
    counts = {n: raw.count(n) for n in raw}
    out, taken, seen = [], set(n for n in raw if counts[n] == 1), {}
    for n in raw:
        if counts[n] > 1:
            k = seen.get(n, 0) + 1
            while f"{n}:{k}" in taken:
                k += 1
            seen[n] = k
            n = f"{n}:{k}"
        taken.add(n)
        out.append(n)
    return out


def _check_path(path):
    ext = os.path.splitext(path)[1].lower()
    if ext not in MESH_EXTENSIONS + CAD_EXTENSIONS:
        raise RingprintError(f"{path}: unknown file extension {ext or '(none)'!r}; "
                             f"use one of {' '.join(MESH_EXTENSIONS + CAD_EXTENSIONS)}")
    if not os.path.isfile(path):
        raise RingprintError(f"{path}: no such file; check the path in the case file")
    if os.path.getsize(path) == 0:
        raise RingprintError(f"{path}: the file is empty; export the part again")
    return ext


def body_names(path):
    """Names of the bodies of a mesh or CAD file, as :func:`read_surfaces` gives them.

    CAD files are only imported, not tessellated (cheap enough to run while a case file
    is read); mesh files are read whole.

    Raises
    ------
    RingprintError
        As :func:`read_surfaces`.
    """
    path = os.fspath(path)
    if _check_path(path) in CAD_EXTENSIONS:
        from ringprint.meshing._cad import cad_body_names
        return cad_body_names(path)
    return [s.name for s in read_surfaces(path)]


def read_surfaces(path, cell_size=None):
    """Read every body of a mesh or CAD file as triangle surfaces.

    Parameters
    ----------
    path : str or os.PathLike
        File with one of :data:`MESH_EXTENSIONS` or :data:`CAD_EXTENSIONS`.
    cell_size : float or None
        Grid cell size in metres. CAD bodies are tessellated with triangles no larger
        than half a cell and at least 24 segments per full turn of a curved face, so
        the chord error stays far below a cell (see :func:`read_cad`). Ignored for
        mesh files.

    Returns
    -------
    list of Surface
        One per body, named from the file where the format carries names (ASCII STL
        ``solid`` names, Gmsh physical groups, STEP product names), else from the file
        stem (:func:`body_labels`; names are unique within the file). Mesh-file
        coordinates are in the file's own unit (``file_unit`` None: the caller says which); CAD coordinates are in millimetres converted from the
        file's own unit (``file_unit`` "mm"); :func:`transform_surface` makes metres.

    Raises
    ------
    RingprintError
        Missing, empty, truncated or unreadable file, unknown extension, a CAD file
        without solids, a mesh without triangles.
    """
    path = os.fspath(path)
    ext = _check_path(path)
    if ext in CAD_EXTENSIONS:
        from ringprint.meshing._cad import read_cad
        return read_cad(path, cell_size)
    if ext == ".stl":
        return _read_stl(path)
    return _from_meshio(path, _meshio_read(path))


def _meshio_read(path, file_format=None, label=None):
    import meshio

    label = label or path
    chatter = io.StringIO()
    try:
        # meshio prints its complaints and may even call sys.exit on a failed read
        with warnings.catch_warnings(), contextlib.redirect_stdout(chatter), contextlib.redirect_stderr(chatter):
            warnings.simplefilter("ignore")
            return meshio.read(path, file_format=file_format)
    except (Exception, SystemExit) as exc:  # meshio raises many types for bad bytes
        kind = os.path.splitext(path)[1].lstrip(".").upper()
        said = " ".join(chatter.getvalue().split())
        detail = (" ".join(str(exc).split()) if not isinstance(exc, SystemExit) else said)[:120]
        if "POLYDATA" in said:
            raise RingprintError(f"{label}: legacy VTK POLYDATA files are not supported; save the "
                                 "surface as .vtu, .ply or .stl") from None
        raise RingprintError(f"{label}: cannot be read as a {kind} mesh ({type(exc).__name__}: "
                             f"{detail}); check the file is complete and re-export it") from None


def _read_stl(path):
    """STL: check binary sizes before meshio sees the bytes; split ASCII solids."""
    size = os.path.getsize(path)
    with open(path, "rb") as fh:
        head = fh.read(84)
    n = int(np.frombuffer(head[80:84], "<u4")[0]) if len(head) == 84 else -1
    if n >= 0 and 84 + 50 * n == size:
        return _from_meshio(path, _meshio_read(path, "stl"))
    with open(path, "rb") as fh:
        raw = fh.read()
    try:
        text = raw.decode("ascii")
    except UnicodeDecodeError:
        text = None
    if text is None or not text.lstrip().lower().startswith("solid"):
        if n >= 0:
            raise RingprintError(f"{path}: truncated or corrupt binary STL (header says {n} "
                                 f"triangles = {84 + 50 * n} bytes, file has {size}); export it again")
        raise RingprintError(f"{path}: not an STL file (neither binary nor ASCII 'solid ...'); "
                             "export it again as STL")
    blocks = re.findall(r"^\s*solid\b[ \t]*([^\r\n]*)(.*?)^\s*endsolid\b[^\r\n]*",
                        text, flags=re.S | re.M | re.I)
    if not blocks:
        raise RingprintError(f"{path}: ASCII STL without a complete 'solid ... endsolid' block; "
                             "the file is truncated, export it again")
    # meshio's ASCII reader needs the strict 7-lines-per-facet layout and one solid;
    # exporters vary (blank lines, several named solids), so take the vertices here.
    stem = os.path.splitext(os.path.basename(path))[0]
    labels = body_labels([name for name, _ in blocks], stem)
    surfaces = []
    for (name, body), label in zip(blocks, labels):
        words = re.findall(r"\bvertex\s+(\S+)\s+(\S+)\s+(\S+)", body, flags=re.I)
        try:
            pts = np.array(words, dtype=np.float64).reshape(-1, 3)
        except ValueError:
            raise RingprintError(f"{path}: ASCII STL solid {name.strip()!r} has a vertex that is not "
                                 "three numbers; export the file again") from None
        if len(pts) % 3:
            raise RingprintError(f"{path}: ASCII STL solid {name.strip()!r} has {len(pts)} vertices, "
                                 "not a multiple of 3; the file is truncated, export it again")
        surfaces.append(Surface(name=label, vertices=pts,
                                faces=np.arange(len(pts), dtype=np.int64).reshape(-1, 3), source=path))
    return surfaces


def _triangles(cells_type, data):
    """Triangles from a meshio cell block (quads split; tetrahedra -> outer faces)."""
    if cells_type == "triangle":
        return data
    if cells_type == "quad":
        return np.concatenate([data[:, [0, 1, 2]], data[:, [0, 2, 3]]])
    if cells_type == "tetra":
        f = np.concatenate([data[:, [0, 2, 1]], data[:, [0, 1, 3]], data[:, [1, 2, 3]], data[:, [0, 3, 2]]])
        key = np.sort(f, axis=1)
        _, inv, cnt = np.unique(key, axis=0, return_inverse=True, return_counts=True)
        return f[cnt[inv.reshape(-1)] == 1]
    return None


def _from_meshio(path, mesh, default_name=None):
    stem = os.path.splitext(os.path.basename(path))[0]
    pts = np.asarray(mesh.points, np.float64)
    if pts.ndim == 2 and pts.shape[1] == 2:
        pts = np.c_[pts, np.zeros(len(pts))]
    groups = {}  # body key -> list of triangle arrays
    physical = mesh.cell_data.get("gmsh:physical")
    names = {int(v[0]): k for k, v in (mesh.field_data or {}).items() if len(v) >= 1}
    for b, block in enumerate(mesh.cells):
        tri = _triangles(block.type, np.asarray(block.data, np.int64))
        if tri is None or len(tri) == 0:
            continue
        if physical is not None and block.type == "triangle":
            tags = np.asarray(physical[b]).reshape(-1)
            for t in np.unique(tags):
                groups.setdefault(names.get(int(t), f"{stem}:{int(t)}") if t else stem, []).append(tri[tags == t])
        else:
            groups.setdefault(default_name or stem, []).append(tri)
    if not groups:
        raise RingprintError(f"{path}: holds no triangles, quads or tetrahedra; export the part "
                             "as a closed triangle surface")
    return [Surface(name=name, vertices=pts, faces=np.concatenate(tris), source=path)
            for name, tris in groups.items()]
