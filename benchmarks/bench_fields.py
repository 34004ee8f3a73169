"""Cost of the mode-field DFT: steps per second with and without a NodeDft.

Usage: python benchmarks/bench_fields.py [--size N] [--modes K] [--every M] [--steps S]

A cubic PEC-walled grid of N^3 cells is stepped S times plain, then again with a
running DFT at K frequencies on every node, sampled every M steps (the field pass
samples about three times per period at f_max: every 5 steps at 10 cells per
wavelength in air, more in dense dielectrics). Prints both rates and their ratio.
"""

import argparse
import time

import numpy as np

from ringprint import fdtd


def rate(n, steps, dft=None):
    grid = fdtd.Grid.uniform((n, n, n), 1e-3)
    sim = fdtd.Simulation(grid, fdtd.Media(grid), boundaries="pec")
    sim.add_source(fdtd.DipoleSource(position=(n / 2e3, n / 2e3, n / 2e3), component="Ez",
                                     waveform=fdtd.GaussianPulse(5e9, 20e9)))
    if dft is not None:
        sim.add_dft(dft)
    sim.run(10)  # compile and warm up
    t0 = time.perf_counter()
    sim.run(steps)
    return grid.cells * steps / (time.perf_counter() - t0)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", type=int, default=100)
    ap.add_argument("--modes", type=int, default=10)
    ap.add_argument("--every", type=int, default=5)
    ap.add_argument("--steps", type=int, default=200)
    a = ap.parse_args()
    plain = rate(a.size, a.steps)
    dft = fdtd.NodeDft(np.linspace(5e9, 20e9, a.modes), every=a.every)
    with_dft = rate(a.size, a.steps, dft)
    print(f"{a.size}^3 cells, {a.modes} modes, a sample every {a.every} steps: "
          f"plain {plain / 1e6:.0f} Mcells/s, with DFT {with_dft / 1e6:.0f} Mcells/s, "
          f"ratio {with_dft / plain:.2f}; DFT sums {dft.acc.nbytes / 2**20:.0f} MiB")


if __name__ == "__main__":
    main()
