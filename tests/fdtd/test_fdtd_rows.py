"""Media rows of the fused step: runs of one medium vs. the cell-by-cell read."""

from __future__ import annotations

import numpy as np

from ringprint.fdtd import Grid, Media, Simulation, _kernels, _rows

D = 1e-3


def test_row_tables_list_the_runs():
    m = np.zeros((2, 3, 20), np.uint8)
    m[0, 1, 5:12] = 2          # three runs in 20 cells: too short on average -> cell by cell
    m[1, 2, :] = 1             # one medium
    m2 = np.zeros((2, 2, 20), np.uint8)
    m2[1, 1, 10:] = 4          # two runs of 10 cells
    u, (base, ptr, k0, k1, med) = _rows.row_tables((m, m2, m))
    assert u[0][0, 1] == _rows.GATHER and u[0][1, 2] == 1 and u[0][0, 0] == 0
    assert u[1][1, 1] == _rows.RUNS
    row = base[1] + 1 * 2 + 1
    n0, n1 = ptr[row], ptr[row + 1]
    assert list(k0[n0:n1]) == [0, 10] and list(k1[n0:n1]) == [10, 20] and list(med[n0:n1]) == [0, 4]


def test_runs_give_the_same_fields_as_the_cell_by_cell_read():
    """A row of a few long runs is updated run by run with scalar coefficients; the
    Yee update (Yee 1966) of each cell is the same arithmetic either way, so the
    fields must match the cell-by-cell read bit for bit (graded x, CPML, PMC, loss)."""
    grid = Grid(np.cumsum(np.r_[0, np.linspace(1, 1.5, 20)]) * D, np.arange(10) * D,
                np.arange(40) * D)
    rng = np.random.default_rng(3)
    eps, pec = [], []
    for c in ("Ex", "Ey", "Ez"):
        sh = grid.component_shape(c)
        e = np.ones(sh)
        e[5:14, 2:7, 8:30] = 3.0
        e[7:9, 3:5, 12:20] = 6.0
        e[15, 4, :] = 1 + rng.random(sh[2])  # a row of short runs: read cell by cell
        p = np.zeros(sh, bool)
        p[10:12, 3:6, 20:28] = True
        eps.append(e)
        pec.append(p)
    media = Media(grid, eps_r=tuple(eps), pec=tuple(pec), sigma=0.01)
    bounds = {"x-": "cpml", "x+": "cpml", "y-": "pmc", "y+": "cpml", "z-": "cpml", "z+": "pec"}
    start = {c: rng.standard_normal(grid.component_shape(c))
             for c in ("Ex", "Ey", "Ez", "Hx", "Hy", "Hz")}
    out = []
    for force_gather in (False, True):
        sim = Simulation(grid, media, boundaries=bounds, cpml_cells=4)
        kinds = np.concatenate([u.ravel() for u in sim._urows])
        assert (kinds == _rows.RUNS).any() and (kinds == _rows.GATHER).any()
        if force_gather:
            sim._urows = tuple(np.where(u == _rows.RUNS, np.int32(_rows.GATHER), u)
                               for u in sim._urows)
        for c, v in start.items():
            sim.fields[c][...] = v
        sums = np.array([_kernels.step(1, *sim._sweep_args(), True) for _ in range(30)])
        out.append((sim, sums))
    (a, sa), (b, sb) = out
    for c in start:
        np.testing.assert_array_equal(a.fields[c], b.fields[c], err_msg=c)
    np.testing.assert_allclose(sa, sb, rtol=1e-12)  # only the summation order differs
