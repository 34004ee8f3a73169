"""Voxelization speed: a ~1-million-triangle closed surface onto a 300^3 grid.

Target (issue 3): under 30 s on 2 cores, for n = 1 and n = 3 sub-rays per edge
(n = 3 casts 9 rays per edge line). Run:

    python benchmarks/bench_voxelize.py [--triangles 1000000] [--cells 300] [--json]

Numba compilation is excluded (a small warm-up call first); the surface check
(weld, orientation, volume) is timed separately.
"""

import argparse
import json
import math
import os
import time

import numba
import numpy as np

from ringprint.meshing import prepare_surface, voxelize
from ringprint.meshing.primitives import sphere, torus


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--triangles", type=int, default=1_000_000)
    ap.add_argument("--cells", type=int, default=300)
    ap.add_argument("--shape", choices=["sphere", "torus"], default="sphere",
                    help="sphere fills the grid's cube; torus a flat box (~300 x 300 x 85)")
    ap.add_argument("--json", action="store_true")
    args = ap.parse_args()

    n_minor = max(8, int(math.sqrt(args.triangles / 4)))
    n_major = max(8, args.triangles // (2 * n_minor))
    if args.shape == "torus":
        raw = torus(0.04, 0.015, n_major=n_major, n_minor=n_minor)  # 110 mm across
    else:
        raw = sphere(0.05, n=int(math.sqrt(args.triangles)))  # n^2 triangles, 100 mm across
    warm = prepare_surface(torus(0.04, 0.015, n_major=16, n_minor=8))
    t0 = time.perf_counter()
    surf = prepare_surface(raw)
    t_check = time.perf_counter() - t0

    lo, hi = surf.bounds
    h = float(np.max(hi - lo)) / (args.cells - 4)
    centre = (lo + hi) / 2
    axes = [centre[d] + h * (np.arange(args.cells) - (args.cells - 1) / 2) for d in range(3)]
    result = {"shape": args.shape, "triangles": surf.n_triangles, "grid_nodes": [a.size for a in axes], "cores": numba.get_num_threads(),
              "cpu_count": os.cpu_count(), "check_s": round(t_check, 2)}
    for n in (1, 3):
        voxelize(warm, *axes, subrays=n)  # compile / load the cached kernels
        t0 = time.perf_counter()
        fill = voxelize(surf, *axes, subrays=n)
        dt = time.perf_counter() - t0
        vol = fill.volume(*axes)
        result[f"voxelize_n{n}_s"] = round(dt, 2)
        result[f"volume_error_n{n}"] = max(abs(v / surf.volume - 1) for v in vol.values())
        result[f"fractions_n{n}_GiB"] = round(sum(b.data.nbytes for b in fill.fractions.values()) / 2**30, 2)
        del fill
    if args.json:
        print(json.dumps(result))
    else:
        for k, v in result.items():
            print(f"{k:>22}: {v}")


if __name__ == "__main__":
    main()
