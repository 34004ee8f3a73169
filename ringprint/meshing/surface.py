"""The triangle surface that every reader returns and every later step consumes."""

from dataclasses import dataclass, field, replace

import numpy as np


@dataclass(frozen=True)
class Surface:
    """A triangle surface of one part (or one body of a file).

    Attributes
    ----------
    name : str
        Body name from the file where the format carries one, else the file stem.
    vertices : ndarray, shape (N, 3), float64
        Vertex coordinates. In the file's own numbers until :func:`transform_surface`
        applies the unit; in metres after it.
    faces : ndarray, shape (M, 3), int64
        Vertex indices of each triangle.
    source : str
        File the surface came from (for messages).
    kind : str
        ``"unchecked"`` as read; ``"solid"`` (closed, oriented outward) or ``"sheet"``
        (open, zero thickness, conductors only) after :func:`prepare_surface`.
    volume : float
        Enclosed volume by the divergence theorem (solids; 0 for sheets and unchecked).
    open_edges : int
        Number of edges not shared by exactly two triangles (after checks).
    notes : tuple of str
        What the checks found and repaired, one line each.
    file_unit : str or None
        Unit the file itself fixes for its coordinates (CAD files: ``"mm"``, the CAD
        kernel converts them); None for mesh files, whose unit the caller must give;
        ``"m"`` after :func:`transform_surface`.
    """

    name: str
    vertices: np.ndarray
    faces: np.ndarray
    source: str = ""
    kind: str = "unchecked"
    volume: float = 0.0
    open_edges: int = 0
    notes: tuple = field(default_factory=tuple)
    file_unit: str | None = None

    @property
    def bounds(self):
        """(lower corner, upper corner) of the vertices actually used by faces."""
        used = self.vertices[np.unique(self.faces)] if len(self.faces) else self.vertices
        return used.min(axis=0), used.max(axis=0)

    @property
    def n_triangles(self):
        return int(self.faces.shape[0])

    def with_(self, **changes):
        """A copy with some attributes replaced."""
        return replace(self, **changes)

    def __repr__(self):
        return (f"Surface({self.name!r}, {self.kind}, {self.n_triangles} triangles, "
                f"volume={self.volume:.6g}, open_edges={self.open_edges})")


def signed_volume(vertices, faces):
    """Volume enclosed by a closed triangle surface (positive when oriented outward).

    Divergence theorem: V = (1/3) * integral of x . n dA = sum over triangles of
    v0 . (v1 x v2) / 6, exact for a closed polyhedral surface.
    The sum is taken relative to the centroid of the vertices to limit round-off.

    References
    ----------
    Zhang, C. & Chen, T., "Efficient feature extraction for 2D/3D objects in mesh
    representation", Proc. ICIP 2001 (signed tetrahedron volumes).
    """
    v = np.asarray(vertices, np.float64)
    f = np.asarray(faces, np.int64)
    if len(f) == 0:
        return 0.0
    v = v - v.mean(axis=0)
    a, b, c = v[f[:, 0]], v[f[:, 1]], v[f[:, 2]]
    return float(np.einsum("ij,ij->i", a, np.cross(b, c)).sum() / 6.0)
