"""Solver throughput against the memory bandwidth measured in the same process.

A Yee step reads and writes the six field components: at least 6 x 4 x 2 = 48
bytes per cell in float32, so a bandwidth B bytes/s bounds the throughput by
``B / 48`` cell-steps/s (the roofline). The bandwidth is measured with a parallel
triad ``a = b + s c`` over float32 arrays far larger than the caches, counting
3 x 4 bytes per element (write-allocate traffic not counted).

Beside the roofline, the full step is compared with the bare two-sweep Yee kernel
(:mod:`ringprint.fdtd._bare_kernels`: vacuum coefficients, no CPML, no energy
sums) on a grid of the same size, timed in the same process and interleaved with
the full runs (full, bare, full, bare, ...; best of several rounds), so that a
machine shared with other work slows both alike. Two full cases are timed: the
bench case with its ``cpml_cells`` layer, and the same case padded with a layer
thick enough to hold about ``padded_share`` of the cells (what a real case with a
quarter-wavelength of air around a small part looks like).
"""

from __future__ import annotations

import time

import numpy as np
from numba import njit, prange

from ringprint.fdtd import _bare_kernels
from ringprint.fdtd.grid import COMPONENTS, EPS0, MU0, Grid
from ringprint.fdtd.media import Media
from ringprint.fdtd.pickups import FieldPickup, LoopEmfPickup
from ringprint.fdtd.simulation import Simulation
from ringprint.fdtd.sources import GaussianPulse, LoopSource

BYTES_PER_CELL_STEP = 48.0


@njit(parallel=True, cache=True)
def _triad(a, b, c, s):
    for i in prange(a.size):
        a[i] = b[i] + s * c[i]


def measure_bandwidth(n_elements: int = 1 << 25, repeats: int = 5) -> float:
    """Best-of-``repeats`` triad bandwidth in bytes/s (3 float32 arrays of
    ``n_elements``, default 128 MiB each)."""
    a = np.zeros(n_elements, np.float32)
    b = np.ones(n_elements, np.float32)
    c = np.full(n_elements, 2.0, np.float32)
    _triad(a, b, c, np.float32(0.5))
    best = np.inf
    for _ in range(repeats):
        t = time.perf_counter()
        _triad(a, b, c, np.float32(0.5))
        best = min(best, time.perf_counter() - t)
    return 3 * 4 * n_elements / best


def benchmark_simulation(n: int, cpml_cells: int = 10) -> Simulation:
    """An n^3-cell domain with CPML on all faces (PEC walls if ``cpml_cells`` is 0),
    a dielectric block, a PEC block, a loop source and a few pickups (1 mm cells)."""
    d = 1e-3
    grid = Grid.uniform((n, n, n), d)
    shapes = [grid.component_shape(c) for c in ("Ex", "Ey", "Ez")]
    q = n // 4
    eps, pec = [], []
    for sh in shapes:
        e = np.ones(sh)
        e[q:2 * q, q:2 * q, q:3 * q] = 4.0
        p = np.zeros(sh, bool)
        p[2 * q + 2:3 * q, q:3 * q, 2 * q:3 * q - 2] = True
        eps.append(e)
        pec.append(p)
    sim = Simulation(grid, Media(grid, eps_r=tuple(eps), pec=tuple(pec)),
                     boundaries="cpml" if cpml_cells else "pec", cpml_cells=cpml_cells)
    c = n * d / 2
    loop = LoopSource(center=(c - 3 * d, c, c), normal="z", size_cells=2,
                      waveform=GaussianPulse(1e9, 20e9))
    sim.add_source(loop)
    sim.add_pickup(LoopEmfPickup.of(loop), "emf")
    sim.add_pickup(FieldPickup("Ez", (c + 4 * d, c - 4 * d, c)), "ez")
    sim.add_pickup(FieldPickup("Hx", (c - 4 * d, c + 3 * d, c + 2 * d), "trilinear"), "hx")
    return sim


def cpml_share(n: int, cpml_cells: int) -> float:
    """Fraction of the n^3 cells that lie in a layer of ``cpml_cells`` on every face."""
    return 1.0 - ((n - 2 * cpml_cells) / n) ** 3


def cells_for_share(n: int, share: float) -> int:
    """The layer thickness (cells) whose :func:`cpml_share` is closest to ``share``,
    leaving the parts of :func:`benchmark_simulation` (from n/4 on) outside it."""
    best = min(range(1, n // 4), key=lambda c: abs(cpml_share(n, c) - share))
    return int(best)


class _Bare:
    """The bare two-sweep kernel on zeroed float32 arrays shaped like ``sim``'s."""

    def __init__(self, sim: Simulation):
        g = sim.grid
        self.f = [np.zeros_like(sim.fields[c]) for c in COMPONENTS]
        self.ch, self.ce = sim.dtype.type(sim.dt / MU0), sim.dtype.type(sim.dt / EPS0)
        self.ih = tuple((1.0 / g.spacing[a]).astype(sim.dtype) for a in range(3))
        self.ie = tuple((1.0 / g.dual_spacing[a]).astype(sim.dtype) for a in range(3))

    def run(self, steps: int) -> None:
        _bare_kernels.bare_steps(steps, *self.f, self.ch, self.ce, self.ih, self.ie)


def _timed(fn, steps) -> float:
    t = time.perf_counter()
    fn(steps)
    return time.perf_counter() - t


def run_benchmark(n: int = 160, steps: int = 100, cpml_cells: int = 10, rounds: int = 3,
                  padded_share: float = 0.4) -> dict:
    """Time ``steps`` full steps on an n^3 grid against the bare kernel and the roofline.

    Keys: ``cells, steps, seconds, mcells_per_s, bandwidth_gb_s,
    roofline_mcells_per_s, ratio`` (ratio = throughput / roofline) of the bench
    case; ``bare_mcells_per_s`` and ``full_over_bare`` (full rate / bare rate);
    ``cpml_cells, cpml_share`` of the bench case; ``padded``: the same figures
    (``cpml_cells, cpml_share, seconds, mcells_per_s, ratio, full_over_bare``) of the
    case whose layer holds about ``padded_share`` of the cells; ``rounds``. Each
    time is the best of ``rounds`` interleaved runs (full, bare, padded full, bare).
    """
    cases = [benchmark_simulation(n, cpml_cells)]
    pad = cells_for_share(n, padded_share)
    cases.append(benchmark_simulation(n, pad))
    bare = _Bare(cases[0])
    bare.run(2)  # compile (or load the cache) before timing
    for sim in cases:
        sim.run(2, progress=False)
    best = [np.inf, np.inf]
    best_bare = np.inf
    for _ in range(max(1, int(rounds))):
        for c, sim in enumerate(cases):
            best[c] = min(best[c], _timed(lambda s: sim.run(s, progress=False), steps))
            best_bare = min(best_bare, _timed(bare.run, steps))
    cells = n ** 3
    bw = measure_bandwidth()
    roof = bw / BYTES_PER_CELL_STEP / 1e6
    bare_rate = cells * steps / best_bare / 1e6
    rates = [cells * steps / t / 1e6 for t in best]
    out = {"cells": cells, "steps": steps, "seconds": best[0], "mcells_per_s": rates[0],
           "bandwidth_gb_s": bw / 1e9, "roofline_mcells_per_s": roof, "ratio": rates[0] / roof,
           "bare_mcells_per_s": bare_rate, "full_over_bare": rates[0] / bare_rate,
           "cpml_cells": cpml_cells, "cpml_share": cpml_share(n, cpml_cells), "rounds": int(rounds)}
    out["padded"] = {"cpml_cells": pad, "cpml_share": cpml_share(n, pad), "seconds": best[1],
                     "mcells_per_s": rates[1], "ratio": rates[1] / roof,
                     "full_over_bare": rates[1] / bare_rate}
    return out
