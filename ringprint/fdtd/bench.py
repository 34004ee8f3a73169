"""Solver throughput against the memory bandwidth measured in the same process.

A Yee step reads and writes the six field components: at least 6 x 4 x 2 = 48
bytes per cell in float32, so a bandwidth B bytes/s bounds the throughput by
``B / 48`` cell-steps/s (the roofline). The bandwidth is measured with a parallel
triad ``a = b + s c`` over float32 arrays far larger than the caches, counting
3 x 4 bytes per element (write-allocate traffic not counted).
"""

from __future__ import annotations

import time

import numpy as np
from numba import njit, prange

from ringprint.fdtd.grid import Grid
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


def run_benchmark(n: int = 160, steps: int = 100, cpml_cells: int = 10) -> dict:
    """Time ``steps`` full steps on an n^3 grid; returns the figures as a dict.

    Keys: ``cells, steps, seconds, mcells_per_s, bandwidth_gb_s,
    roofline_mcells_per_s, ratio`` (ratio = throughput / roofline).
    """
    sim = benchmark_simulation(n, cpml_cells)
    sim.run(2, progress=False)  # compile (or load the cache) before timing
    t = time.perf_counter()
    sim.run(steps, progress=False)
    seconds = time.perf_counter() - t
    cells = n ** 3
    mcells = cells * steps / seconds / 1e6
    bw = measure_bandwidth()
    roof = bw / BYTES_PER_CELL_STEP / 1e6
    return {"cells": cells, "steps": steps, "seconds": seconds, "mcells_per_s": mcells,
            "bandwidth_gb_s": bw / 1e9, "roofline_mcells_per_s": roof, "ratio": mcells / roof}
