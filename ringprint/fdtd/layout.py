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
    def cpml_slabs(self):
        """``(kind, comp, axis, coupled comp, sign, lo, hi)`` of every CPML correction.

        For ``dF/dt ~ sign * dG/d(axis)`` in the curl: E terms ``(c, a=c+1) -> +H_{c+2}``,
        ``(c, a=c+2) -> -H_{c+1}``; H terms carry the opposite signs.
        """
        n_nodes = self.shape
        out = []
        for a in range(3):
            for side, n in zip((-1, 1), self.cpml[a]):
                if n == 0:
                    continue
                for c in range(3):
                    if c == a:
                        continue
                    b = 3 - a - c
                    plus = a == (c + 1) % 3
                    g_axis = (c + 2) % 3 if plus else (c + 1) % 3
                    # E correction: nodes along a, cells along c, active nodes along b
                    lo, hi = [0, 0, 0], [0, 0, 0]
                    lo[a], hi[a] = (1, n) if side < 0 else (n_nodes[a] - n, n_nodes[a] - 1)
                    lo[c], hi[c] = 0, n_nodes[c] - 1
                    lo[b], hi[b] = self.act_lo[b], self.act_hi[b]
                    if hi[a] > lo[a]:
                        out.append(("e", "E" + AXES[c], a, "H" + AXES[g_axis], 1 if plus else -1,
                                    tuple(lo), tuple(hi)))
                    # H correction: cells along a, nodes along c, cells along b
                    lo, hi = [0, 0, 0], [0, 0, 0]
                    lo[a], hi[a] = (0, n) if side < 0 else (n_nodes[a] - 1 - n, n_nodes[a] - 1)
                    lo[c], hi[c] = 0, n_nodes[c]
                    lo[b], hi[b] = 0, n_nodes[b] - 1
                    out.append(("h", "H" + AXES[c], a, "E" + AXES[g_axis], -1 if plus else 1,
                                tuple(lo), tuple(hi)))
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
