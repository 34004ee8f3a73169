"""Locally conformal perfect conductors (Dey & Mittra 1997): the cut H faces.

A Yee H face that a conductor cuts is updated from Faraday's law on the part of the
face outside the metal: with ``a`` the free fraction of its area and ``l_e`` the free
fraction of each of its four E edges,

    mu0 a A dH/dt = - sum_e (+-) l_e L_e E_e,

instead of the full contour and area of the staircase. E edges are updated as usual;
an edge wholly inside the metal is PEC (its E stays zero). This restores a
second-order error for curved and oblique metal surfaces where the staircase is first
order.

**Stability rule.** A face with a small free area but a long free edge makes the
update stiff: the leapfrog scheme is stable while ``dt^2 lambda_max <= 4``, with
``lambda_max`` the largest eigenvalue of the discrete curl-curl operator. Writing it
in symmetric form, the coupling of face f and edge e is

    B_fe = sqrt( l*_f l_e L_e / (mu0 eps0 a_f A_f A*_e) )

(``l*_f`` the dual edge through the face, ``A*_e`` the dual face of the edge). The
Gershgorin bound ``lambda_max <= max_f G_f``, ``G_f = sum_e B_fe sum_f' B_f'e``, bounds
the operator by the row sums of the cut faces (an uncut face of a cubic grid has
``G = 16 / (c0^2 d^2)``, a third above the exact ``12 / (c0^2 d^2)`` of the Courant
limit). ringprint

- takes the factor ``s = min(1, 2 / (c0 dt_c sqrt(max_f G_f)))`` on the plain Courant
  step ``dt_c`` of the grid's finest cells, and
- where a face would force ``s`` below ``s_min = MIN_STEP_FACTOR`` (default 0.7), it
  enlarges that face's area (divides its update by a larger area: the face responds
  a little too weakly, on a sliver of metal surface) until it no longer does, in a
  few rounds (``ENLARGE_ROUNDS``). Dey & Mittra (1997) likewise give up exactness on
  the smallest cut cells to keep the step near the Courant limit.

So ``s_min <= s <= 0.87`` wherever metal cuts a cubic grid. Measured on a closed
cylindrical cavity (tests/validation/test_conformal_cavity.py): 20,000 steps of random
fields at ``s`` keep the scheme's conserved energy to 1e-9 (the leapfrog form
``sum l eps A* L E^2 + a mu0 A l* H^(n-1/2) H^(n+1/2)``, whose weights carry the free
fractions), while the plain Courant step blows up. Closing the stiff faces as metal
instead of enlarging them cost 2-4 % in the TM010 frequency at 6-10 cells per radius;
enlarging costs 0.1-0.2 % at ``s_min = 0.8`` and nearly nothing at 0.7.

References
----------
Dey, S. & Mittra, R., IEEE Microw. Guided Wave Lett. 7(9):273-275, 1997 (the scheme).
Benkler, S., Chavannes, N. & Kuster, N., IEEE Trans. Antennas Propag. 54(6):1843-1849,
2006 (a stability criterion for conformal PEC FDTD derived from the cut cells'
geometry; from memory).
Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 4
(leapfrog stability from the operator's spectral radius).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringprint.errors import RingprintError

#: Smallest time-step factor the conformal faces may force (faces needing less are enlarged).
MIN_STEP_FACTOR = 0.7
#: An E edge whose free length is below this fraction of the largest free area among
#: its four faces is PEC. Such an edge grazes the metal surface (its E must vanish
#: there); left free it rings as a spurious local mode near sqrt(l/a) of the grid's top
#: frequency (l its free length, a its faces' free area), which can fall inside the
#: band (measured in a spherical cavity: poles 1-7 % off). An edge crossing a wall
#: keeps l close to a and stays free, however little of it is outside: its normal E
#: is real (making it PEC detuned a cylindrical cavity with offset end caps by -2.8 %).
MIN_FREE_LENGTH = 0.25
#: Rounds of area enlargement (each raises a face's area by its excess row sum).
ENLARGE_ROUNDS = 12
#: Fractions within this of 1 count as uncut.
_TOL = 1e-6


@dataclass
class ConformalFaces:
    """The cut H faces as a sparse list sorted by the plane index i.

    ``ptr[i]:ptr[i+1]`` are the entries on plane i; per entry ``comp`` (0, 1, 2 for
    Hx, Hy, Hz), ``j``, ``k``, ``inv_area`` (1/a; 0 for a face with no free area,
    whose H is zero) and ``lengths[n] = (l0, l1, l2, l3)``, the free fractions of its
    edges in the order of :data:`_FACE_EDGES`. ``edge_comp``, ``edge_index`` (n, 3) and ``edge_length`` list the
    partly free E edges (for the conserved energy). ``step_factor`` multiplies the grid's
    Courant step.
    """

    ptr: np.ndarray
    comp: np.ndarray
    j: np.ndarray
    k: np.ndarray
    inv_area: np.ndarray
    lengths: np.ndarray
    edge_comp: np.ndarray
    edge_index: np.ndarray
    edge_length: np.ndarray
    step_factor: float
    enlarged: int

    @property
    def size(self) -> int:
        return int(self.comp.size)

    def arrays(self) -> dict:
        return {"ptr": self.ptr, "comp": self.comp, "j": self.j, "k": self.k,
                "inv_area": self.inv_area, "lengths": self.lengths, "edge_comp": self.edge_comp,
                "edge_index": self.edge_index, "edge_length": self.edge_length}

    @classmethod
    def empty(cls, nx: int) -> "ConformalFaces":
        z = np.zeros(0, np.int32)
        return cls(np.zeros(nx + 1, np.int64), z, z, z, np.zeros(0), np.zeros((0, 4)), z,
                   np.zeros((0, 3), np.int32), np.zeros(0), 1.0, 0)


#: The four E edges of an H_h face (i, j, k) in the order (p0, p1, q0, q1) the kernel
#: uses, as (E component, index offset): Hx: Ez(j), Ez(j+1), Ey(k), Ey(k+1);
#: Hy: Ez(i), Ez(i+1), Ex(k), Ex(k+1); Hz: Ey(i), Ey(i+1), Ex(j), Ex(j+1).
_FACE_EDGES = (
    ((2, (0, 0, 0)), (2, (0, 1, 0)), (1, (0, 0, 0)), (1, (0, 0, 1))),
    ((2, (0, 0, 0)), (2, (1, 0, 0)), (0, (0, 0, 0)), (0, (0, 0, 1))),
    ((1, (0, 0, 0)), (1, (1, 0, 0)), (0, (0, 0, 0)), (0, (0, 1, 0))),
)


def _edges(h: int, idx):
    """The four E edges of the H_h faces ``idx = (i, j, k)`` as (component, index
    arrays), in the order of :data:`_FACE_EDGES`."""
    return [(c, tuple(v + o for v, o in zip(idx, off))) for c, off in _FACE_EDGES[h]]


def _faces_of_edge(c: int, idx):
    """The (up to) four H faces containing the E_c edges ``idx``: H_d at the same
    index and one below along the third axis, for both d != c."""
    out = []
    for d in range(3):
        if d == c:
            continue
        e = 3 - c - d
        out.append((d, idx))
        below = list(idx)
        below[e] = below[e] - 1
        out.append((d, tuple(below)))
    return out


class _Geometry:
    """Lengths and areas of faces and edges on a rectilinear grid."""

    def __init__(self, grid, free_length, free_area):
        self.d = grid.spacing
        self.dd = grid.dual_spacing
        self.shape_h = [grid.component_shape(c) for c in ("Hx", "Hy", "Hz")]
        self.shape_e = [grid.component_shape(c) for c in ("Ex", "Ey", "Ez")]
        self.free_length = free_length
        self.free_area = free_area

    def lookup(self, arr, shape, idx, fill):
        ok = np.ones(idx[0].shape, bool)
        for a in range(3):
            ok &= (idx[a] >= 0) & (idx[a] < shape[a])
        out = np.full(idx[0].shape, fill, np.float64)
        safe = tuple(np.where(ok, idx[a], 0) for a in range(3))
        out[ok] = np.asarray(arr[safe], np.float64)[ok]
        return out, ok

    def coupling(self, d, fidx, c, eidx, area, length):
        """``B_fe^2 mu0 eps0`` for faces H_d at ``fidx`` and edges E_c at ``eidx``."""
        a1, a2 = (d + 1) % 3, (d + 2) % 3
        dual = self.dd[d][np.clip(fidx[d], 0, self.dd[d].size - 1)]
        face = self.d[a1][np.clip(fidx[a1], 0, self.d[a1].size - 1)] \
            * self.d[a2][np.clip(fidx[a2], 0, self.d[a2].size - 1)]
        b1, b2 = (c + 1) % 3, (c + 2) % 3
        edge = self.d[c][np.clip(eidx[c], 0, self.d[c].size - 1)]
        edual = self.dd[b1][np.clip(eidx[b1], 0, self.dd[b1].size - 1)] \
            * self.dd[b2][np.clip(eidx[b2], 0, self.dd[b2].size - 1)]
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(area > 0, dual * length * edge / (np.maximum(area, 1e-300) * face * edual),
                            0.0)

    def row_sums(self, h, fidx):
        """Gershgorin row sums ``mu0 eps0 G_f`` (1/m^2) of the faces H_h at ``fidx``."""
        total = np.zeros(fidx[0].shape)
        a_self = self.lookup(self.free_area[h], self.shape_h[h], fidx, 1.0)[0]
        for c, eidx in _edges(h, fidx):
            lam = self.lookup(self.free_length[c], self.shape_e[c], eidx, 0.0)[0]
            b_self = np.sqrt(self.coupling(h, fidx, c, eidx, a_self, lam))
            col = np.zeros(fidx[0].shape)
            for d, gidx in _faces_of_edge(c, eidx):
                a, ok = self.lookup(self.free_area[d], self.shape_h[d], gidx, 1.0)
                col += np.where(ok, np.sqrt(self.coupling(d, gidx, c, eidx, a, lam)), 0.0)
            total += b_self * col
        return total


def conformal_faces(grid, free_length, free_area, min_step_factor: float = MIN_STEP_FACTOR):
    """The cut faces of a grid (the stiffest with enlarged areas) and the step factor.

    Parameters
    ----------
    grid : Grid
    free_length : tuple of 3 ndarray
        Free (outside-metal) fraction of every E edge, shaped like Ex, Ey, Ez; 0 on
        PEC edges, 1 away from metal.
    free_area : tuple of 3 ndarray
        Free fraction of every H face, shaped like Hx, Hy, Hz.
    min_step_factor : float
        ``s_min`` of the stability rule (module docstring), in (0, 1].

    Returns
    -------
    ConformalFaces
    """
    s_min = float(min_step_factor)
    if not 0.0 < s_min <= 1.0:
        raise RingprintError(f"conformal min_step_factor = {min_step_factor!r} must be in (0, 1]")
    geo = _Geometry(grid, free_length, free_area)
    nx = grid.shape[0]
    picks = []
    for h in range(3):
        a = np.asarray(free_area[h])
        # a face needs its own update when its area is partly free, an edge is partly
        # free, or its area is closed while an edge is free (then its H is zero). Faces
        # whose edges are only wholly free or wholly PEC on a whole free area are what
        # the plain update already does, and faces wholly inside metal never change.
        cut = (a > _TOL) & (a < 1.0 - _TOL)
        for c, sl in _edge_views(h, a.shape):
            lam = np.asarray(free_length[c])[sl]
            cut |= (lam > _TOL) & ((lam < 1.0 - _TOL) | (a <= _TOL))
        idx = np.nonzero(cut)
        lam = np.stack([geo.lookup(free_length[c], geo.shape_e[c], e, 0.0)[0]
                        for c, e in _edges(h, idx)], axis=-1) if idx[0].size else np.zeros((0, 4))
        picks.append((h, idx, lam))
    # the plain Courant step of the grid's finest cells, dt_c = 1/(c0 sqrt(sum 1/d^2)):
    # a cut row sum G needs dt <= 2/(c0 sqrt(G)), i.e. the factor 1/sqrt(G (c0 dt_c)^2 / 4)
    scale = 0.25 / float(np.sum(1.0 / grid.min_spacing() ** 2))
    cap = 1.0 / s_min ** 2
    areas = [np.array(v, np.float32) for v in free_area]
    geo.free_area = areas
    enlarged = [np.zeros(idx[0].size, bool) for _h, idx, _l in picks]
    for _round in range(ENLARGE_ROUNDS):
        changed = False
        for n, (h, idx, _l) in enumerate(picks):
            if idx[0].size == 0:
                continue
            r = geo.row_sums(h, idx) * scale
            over = r > cap * (1.0 + 1e-9)
            if over.any():
                sel = tuple(v[over] for v in idx)
                areas[h][sel] = np.minimum(1.0, areas[h][sel] * (1.05 * r[over] / cap))
                enlarged[n] |= over
                changed = True
        if not changed:
            break
    worst = max((float((geo.row_sums(h, idx) * scale).max()) for h, idx, _l in picks
                 if idx[0].size), default=0.0)
    factor = float(min(1.0, 1.0 / np.sqrt(max(worst, 1e-300))))
    comp, jj, kk, ii, inv, lens = [], [], [], [], [], []
    for h, idx, lam in picks:
        a = areas[h][idx].astype(np.float64)
        ii.append(idx[0])
        jj.append(idx[1])
        kk.append(idx[2])
        comp.append(np.full(a.size, h, np.int32))
        inv.append(np.where(a > 0, 1.0 / np.maximum(a, 1e-300), 0.0))
        lens.append(lam)
    i_all = np.concatenate(ii).astype(np.int64)
    order = np.argsort(i_all, kind="stable")
    ptr = np.zeros(nx + 1, np.int64)
    np.add.at(ptr, i_all + 1, 1)
    np.cumsum(ptr, out=ptr)
    ec, ei, el = [], [], []
    for c, v in enumerate(free_length):
        v = np.asarray(v)
        idx = np.nonzero((v > _TOL) & (v < 1.0 - _TOL))
        ec.append(np.full(idx[0].size, c, np.int32))
        ei.append(np.stack(idx, axis=-1).astype(np.int32))
        el.append(v[idx].astype(np.float64))
    return ConformalFaces(ptr, np.concatenate(comp)[order], np.concatenate(jj).astype(np.int32)[order],
                          np.concatenate(kk).astype(np.int32)[order], np.concatenate(inv)[order],
                          np.concatenate(lens)[order], np.concatenate(ec), np.concatenate(ei),
                          np.concatenate(el), factor, int(sum(e.sum() for e in enlarged)))


def short_edges(grid, free_length, free_area, ratio: float = MIN_FREE_LENGTH):
    """Per E component, the mask of partly free edges whose free length is below
    ``ratio`` times the largest free area of their faces (:data:`MIN_FREE_LENGTH`)."""
    geo = _Geometry(grid, free_length, free_area)
    out = []
    for c in range(3):
        lam = np.asarray(free_length[c])
        mask = np.zeros(lam.shape, bool)
        idx = np.nonzero((lam > _TOL) & (lam < 1.0 - _TOL))
        if idx[0].size:
            best = np.zeros(idx[0].size)
            for d, fidx in _faces_of_edge(c, idx):
                a, ok = geo.lookup(free_area[d], geo.shape_h[d], fidx, 0.0)
                best = np.maximum(best, np.where(ok, a, 0.0))
            short = lam[idx] < ratio * best
            mask[tuple(v[short] for v in idx)] = True
        out.append(mask)
    return out


def _edge_views(h, shape):
    """Slices of the E arrays giving, for every face of an H_h array shaped ``shape``,
    each of its four edges (:data:`_FACE_EDGES`)."""
    return [(c, tuple(slice(o, o + n) for o, n in zip(off, shape))) for c, off in _FACE_EDGES[h]]
