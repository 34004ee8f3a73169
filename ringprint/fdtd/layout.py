"""Index bookkeeping of a domain: CPML slabs, PMC walls, interior region, checks."""

from __future__ import annotations

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd.grid import AXES, Grid


class Layout:
    """Which index ranges are CPML, walls and interior, per axis.

    Node index ranges use the grid's node numbering (0..N-1), cell ranges 0..N-2.
    The *interior* is the node box ``[lo[a], hi[a]]`` outside every CPML layer.
    Tangential E on a PEC wall is never updated (stays zero); on a PMC wall it is
    updated with the tangential H outside taken as zero (image theory).
    """

    def __init__(self, grid: Grid, boundaries: dict, cpml_cells: int):
        if cpml_cells < 1 and "cpml" in boundaries.values():
            raise RingprintError(f"cpml_cells = {cpml_cells} must be >= 1 when a face is 'cpml'")
        self.grid, self.kinds = grid, boundaries
        self.shape = grid.shape
        self.cpml, self.lo, self.hi, self.act_lo, self.act_hi = [], [], [], [], []
        for a, name in enumerate(AXES):
            k_lo, k_hi = boundaries[name + "-"], boundaries[name + "+"]
            n_lo = cpml_cells if k_lo == "cpml" else 0
            n_hi = cpml_cells if k_hi == "cpml" else 0
            cells = self.shape[a] - 1
            if n_lo + n_hi >= cells:
                raise RingprintError(
                    f"grid axis {name} has {cells} cells, too few for CPML layers of {n_lo} + {n_hi} "
                    "cells; add cells along that axis or lower cpml_cells")
            self.cpml.append((n_lo, n_hi))
            self.lo.append(n_lo)
            self.hi.append(self.shape[a] - 1 - n_hi)
            self.act_lo.append(0 if k_lo == "pmc" else 1)
            self.act_hi.append(self.shape[a] if k_hi == "pmc" else self.shape[a] - 1)

    # --------------------------------------------------------------- energy
    def energy_weights(self):
        """Per-axis weights (node, cell) restricting energy sums to the interior."""
        wn, wc = [], []
        for a in range(3):
            d = self.grid.spacing[a]
            lo, hi = self.lo[a], self.hi[a]
            c = np.zeros(d.size)
            c[lo:hi] = d[lo:hi]
            n = np.zeros(d.size + 1)
            n[:-1] += 0.5 * c
            n[1:] += 0.5 * c
            wn.append(n)
            wc.append(c)
        return wn, wc

    # ----------------------------------------------------------------- CPML
    def cpml_ranges(self, kind: str) -> np.ndarray:
        """``(3, 4)`` array of ``(lo0, lo1, hi0, hi1)`` per axis: the node (``kind="e"``)
        or cell (``"h"``) index ranges of the low and high CPML layers (empty when
        the face is not CPML). E nodes on the outer wall are excluded."""
        out = np.zeros((3, 4), np.int64)
        for a in range(3):
            n_lo, n_hi = self.cpml[a]
            last = self.shape[a] - 1  # index of the last node = number of cells
            if kind == "e":
                out[a] = (1, max(n_lo, 1), last - n_hi + (n_hi > 0), last)
            else:
                out[a] = (0, n_lo, last - n_hi, last)
        return out

    def cpml_terms(self, kind: str):
        """The 12 CPML terms ``(comp, axis, coupled comp, sign, side, (p0, p1))`` in the
        order of the sweep kernels' psi tuple.

        A term ``dF/dt ~ sign * dG/d(axis)`` of the curl: E terms ``(c, a=c+1) -> +H_{c+2}``,
        ``(c, a=c+2) -> -H_{c+1}``; H terms carry the opposite signs.
        """
        r = self.cpml_ranges(kind)
        out = []
        for c in range(3):
            for a in sorted(((c + 1) % 3, (c + 2) % 3)):
                plus = a == (c + 1) % 3
                g_axis = (c + 2) % 3 if plus else (c + 1) % 3
                sign = (1 if plus else -1) * (1 if kind == "e" else -1)
                other = "H" if kind == "e" else "E"
                for side in (0, 1):
                    out.append((kind.upper() + AXES[c], a, other + AXES[g_axis], sign, side,
                                (int(r[a][2 * side]), int(r[a][2 * side + 1]))))
        return out

    def wall_rows(self, comp: str, axis: int, span):
        """Regions ``(lo, hi)`` of an E CPML term on PMC walls (not visited by the
        main sweep): the layer span along ``axis``, all cells along the component,
        the wall nodes along the third axis."""
        c = AXES.index(comp[1])
        b = 3 - c - axis
        out = []
        walls = ([0] if self.act_lo[b] == 0 else []) + \
            ([self.shape[b] - 1] if self.act_hi[b] == self.shape[b] else [])
        for w in walls:
            lo, hi = [0, 0, 0], [0, 0, 0]
            lo[axis], hi[axis] = span
            lo[c], hi[c] = 0, self.shape[c] - 1
            lo[b], hi[b] = w, w + 1
            if span[1] > span[0]:
                out.append((np.array(lo, np.int64), np.array(hi, np.int64)))
        return out

    # ----------------------------------------------------------------- PMC
    def pmc_boxes(self):
        """``(component index, lo, hi, (wx, wy, wz))`` of the E edges on PMC walls.

        Each edge appears once: a wall of axis a leaves the lines it shares with
        an earlier axis' PMC wall to that wall.
        """
        wn, wc = self.energy_weights()
        out = []
        for a, name in enumerate(AXES):
            for side in "-+":
                if self.kinds[name + side] != "pmc":
                    continue
                p = 0 if side == "-" else self.shape[a] - 1
                for c in range(3):
                    if c == a:
                        continue
                    b = 3 - a - c
                    lo, hi = [0, 0, 0], [0, 0, 0]
                    lo[a], hi[a] = p, p + 1
                    lo[c], hi[c] = 0, self.shape[c] - 1
                    if b < a:
                        lo[b], hi[b] = 1, self.shape[b] - 1
                    else:
                        lo[b], hi[b] = self.act_lo[b], self.act_hi[b]
                    w = tuple(wc[x] if x == c else wn[x] for x in range(3))
                    out.append((c, np.array(lo, np.int64), np.array(hi, np.int64), w))
        return out

    # --------------------------------------------------------------- checks
    def check_point(self, pos, what: str) -> None:
        """Refuse a point outside the grid or inside a CPML layer."""
        for a, name in enumerate(AXES):
            v = self.grid.nodes[a]
            p = float(pos[a])
            if not (v[0] <= p <= v[-1]):
                raise RingprintError(
                    f"{what}: {name} = {p:.6g} m lies outside the grid ({v[0]:.6g} .. {v[-1]:.6g} m); "
                    "move it into the domain or enlarge the grid")
            for side, n in zip("-+", self.cpml[a]):
                inner = v[n] if side == "-" else v[-1 - n]
                if n and ((side == "-" and p < inner) or (side == "+" and p > inner)):
                    raise RingprintError(
                        f"{what}: {name} = {p:.6g} m lies inside the CPML layer on face {name}{side} "
                        f"(the outer {n} cells, beyond {inner:.6g} m); move it inward, enlarge the "
                        "grid or lower cpml_cells")

    def check_indices(self, comp: str, idx, what: str, on_wall_ok: bool) -> None:
        """Refuse component samples in a CPML layer (or on a wall when not allowed)."""
        own = AXES.index(comp[1])
        centred = [(a == own) == (comp[0] == "E") for a in range(3)]
        for a, name in enumerate(AXES):
            i = np.asarray(idx[a])
            lo, hi = self.lo[a], self.hi[a]
            bad = (i < lo) | (i >= hi) if centred[a] else (i < lo) | (i > hi)
            if np.any(bad):
                raise RingprintError(
                    f"{what}: its {comp} samples reach into the CPML layer along {name}; move it "
                    "inward, enlarge the grid or lower cpml_cells")
            if not on_wall_ok and not centred[a] and np.any((i == 0) | (i == self.shape[a] - 1)):
                raise RingprintError(f"{what}: its {comp} edges lie on the {name} boundary wall; "
                                     "move it at least one cell inward")
