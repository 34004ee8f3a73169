"""The Yee grid: node coordinates per axis, spacings, component positions.

Array conventions are those of DEVELOPERS.md: E on cell edges, H on cell faces,
``Ex`` shaped ``(Nx-1, Ny, Nz)`` and so on.
"""

from __future__ import annotations

import numpy as np

from ringprint.errors import RingprintError

#: Speed of light in vacuum (m/s), exact by SI definition.
C0 = 299_792_458.0
#: Vacuum permeability (H/m), CODATA 2018.
MU0 = 1.25663706212e-6
#: Vacuum permittivity (F/m) from ``1 / (mu0 c0^2)``.
EPS0 = 1.0 / (MU0 * C0 * C0)

E_COMPONENTS = ("Ex", "Ey", "Ez")
H_COMPONENTS = ("Hx", "Hy", "Hz")
COMPONENTS = E_COMPONENTS + H_COMPONENTS
AXES = "xyz"


class Grid:
    """A rectilinear Yee grid given by strictly increasing node coordinates.

    Parameters
    ----------
    x, y, z : array_like
        Node coordinates in metres, each strictly increasing with at least two
        nodes (one cell).

    Attributes
    ----------
    nodes : tuple of ndarray
        ``(x, y, z)`` as float64.
    centres : tuple of ndarray
        Cell-centre coordinates per axis (length N-1).
    spacing : tuple of ndarray
        Primal spacings ``d[i] = x[i+1] - x[i]`` (length N-1).
    dual_spacing : tuple of ndarray
        Dual spacings at the nodes (length N): distance between neighbouring cell
        centres; at the two end nodes half of the end cell.

    Raises
    ------
    RingprintError
        For a non-finite, non-positive or non-monotonic spacing.

    References
    ----------
    Yee, K. S., IEEE Trans. Antennas Propag. 14(3):302-307, 1966 (the staggered grid).
    """

    def __init__(self, x, y, z):
        nodes = []
        for name, v in zip(AXES, (x, y, z)):
            a = np.asarray(v, dtype=np.float64)
            if a.ndim != 1 or a.size < 2:
                raise RingprintError(
                    f"grid axis {name}: need a 1-D vector of at least 2 node coordinates, "
                    f"got shape {a.shape}; pass node positions in metres")
            if not np.all(np.isfinite(a)):
                raise RingprintError(f"grid axis {name}: non-finite node coordinate; pass finite values")
            d = np.diff(a)
            bad = np.flatnonzero(d <= 0)
            if bad.size:
                i = int(bad[0])
                raise RingprintError(
                    f"grid axis {name}: spacing {d[i]:.6g} m between nodes {i} and {i + 1} is not "
                    "positive; node coordinates must be strictly increasing")
            a = np.ascontiguousarray(a)
            a.setflags(write=False)
            nodes.append(a)
        self.nodes = tuple(nodes)
        self.centres = tuple(0.5 * (a[:-1] + a[1:]) for a in nodes)
        self.spacing = tuple(np.diff(a) for a in nodes)
        duals = []
        for d in self.spacing:
            dd = np.empty(d.size + 1)
            dd[0] = 0.5 * d[0]
            dd[-1] = 0.5 * d[-1]
            dd[1:-1] = 0.5 * (d[:-1] + d[1:])
            duals.append(dd)
        self.dual_spacing = tuple(duals)

    @classmethod
    def uniform(cls, cells, spacing, origin=(0.0, 0.0, 0.0)) -> "Grid":
        """A uniform grid of ``cells = (nx, ny, nz)`` cells of size ``spacing`` (m)."""
        cells = np.broadcast_to(np.asarray(cells), (3,))
        d = np.broadcast_to(np.asarray(spacing, dtype=float), (3,))
        if np.any(d <= 0) or not np.all(np.isfinite(d)):
            raise RingprintError(f"grid spacing {tuple(d)} must be positive and finite")
        if np.any(cells < 1):
            raise RingprintError(f"grid cells {tuple(cells)} must be >= 1 on every axis")
        return cls(*(origin[a] + d[a] * np.arange(int(cells[a]) + 1) for a in range(3)))

    @property
    def x(self):
        return self.nodes[0]

    @property
    def y(self):
        return self.nodes[1]

    @property
    def z(self):
        return self.nodes[2]

    @property
    def shape(self) -> tuple[int, int, int]:
        """Number of nodes per axis ``(Nx, Ny, Nz)``."""
        return tuple(a.size for a in self.nodes)

    @property
    def cells(self) -> int:
        """Number of cells ``(Nx-1)(Ny-1)(Nz-1)``."""
        nx, ny, nz = self.shape
        return (nx - 1) * (ny - 1) * (nz - 1)

    def component_shape(self, comp: str) -> tuple[int, int, int]:
        """Array shape of a field component (DEVELOPERS.md table)."""
        n = list(self.shape)
        axis = _axis_of(comp)
        if comp[0] == "E":
            n[axis] -= 1
        else:
            n = [v - 1 for v in n]
            n[axis] += 1
        return tuple(n)

    def component_coords(self, comp: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Coordinates of a component's samples along each axis."""
        axis = _axis_of(comp)
        out = []
        for a in range(3):
            on_centre = (a == axis) if comp[0] == "E" else (a != axis)
            out.append(self.centres[a] if on_centre else self.nodes[a])
        return tuple(out)

    def min_spacing(self) -> np.ndarray:
        """Smallest primal spacing per axis (m)."""
        return np.array([d.min() for d in self.spacing])

    def max_spacing(self) -> float:
        """Largest primal spacing over all axes (m)."""
        return float(max(d.max() for d in self.spacing))


def _axis_of(comp: str) -> int:
    if comp not in COMPONENTS:
        raise RingprintError(f"field component {comp!r} unknown; use one of {', '.join(COMPONENTS)}")
    return AXES.index(comp[1])


def courant_time_step(grid: Grid, courant: float = 0.99, eps_r_min: float = 1.0) -> float:
    """Time step from the Courant stability limit of the actual grid.

    ``dt = S / (c sqrt(sum_i 1/d_min_i^2))`` with ``c = c0 / sqrt(min(eps_r_min, 1))``
    (a medium with ``eps_r < 1`` propagates faster than light in vacuum and would
    otherwise break the limit).

    Parameters
    ----------
    grid : Grid
    courant : float
        Safety factor S, strictly between 0 and 1 (default 0.99).
    eps_r_min : float
        Smallest relative permittivity present (default 1).

    References
    ----------
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 4
    (stability limit of the Yee scheme).
    """
    s = float(courant)
    if not (0.0 < s < 1.0) or not np.isfinite(s):
        raise RingprintError(
            f"courant factor {courant!r} must be > 0 and < 1 (1 is the stability limit "
            "itself); use e.g. 0.99")
    c = C0 / np.sqrt(min(float(eps_r_min), 1.0))
    dmin = grid.min_spacing()
    return float(s / (c * np.sqrt(np.sum(1.0 / dmin ** 2))))
