"""Timing of harmonic_inversion (filter diagonalization) on synthetic ring-downs.

Records of 1e4, 1e5 and 1e6 samples, heavily oversampled as FDTD pickups are, with
10 or 50 modes in the window, one and three signals. Reports wall time per call and
the worst relative frequency / Q error against the exact parameters.

    python benchmarks/bench_inversion.py [--json]
"""

from __future__ import annotations

import argparse
import json
import time

import numpy as np

from ringprint.analysis import harmonic_inversion


def ringdown(n, dt, n_modes, n_signals, rng):
    """Real records of ``n_modes`` damped modes between 2 and 3 GHz (+ float32 noise)."""
    f = np.sort(rng.uniform(2.0e9, 3.0e9, n_modes))
    q = rng.uniform(50, 5000, n_modes)
    d = rng.uniform(0.05, 1, (n_signals, n_modes)) * np.exp(2j * np.pi * rng.random((n_signals, n_modes)))
    t = np.arange(n) * dt
    x = np.zeros((n_signals, n))
    for k in range(n_modes):
        e = np.exp(-1j * (2 * np.pi * f[k] - 1j * np.pi * f[k] / q[k]) * t)
        x += 2 * (d[:, k:k + 1] * e).real
    return x.astype(np.float32).astype(float), f, q


def run(n, n_modes, n_signals, rng, repeat=2):
    dt = 2e-12                                  # 250 GHz sampling: Courant-limited FDTD-like
    x, f, q = ringdown(n, dt, n_modes, n_signals, rng)
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        found = harmonic_inversion(x if n_signals > 1 else x[0], dt, 1.9e9, 3.1e9)
        best = min(best, time.perf_counter() - t0)
    ff = np.array([r.frequency_hz for r in found])
    err_f = err_q = np.nan
    if ff.size:
        idx = np.abs(ff[None, :] - f[:, None]).argmin(axis=1)
        err_f = float(np.max(np.abs(ff[idx] / f - 1)))
        err_q = float(np.max(np.abs(np.array([found[i].q for i in idx]) / q - 1)))
    return dict(samples=n, modes=n_modes, signals=n_signals, found=len(found),
                seconds=round(best, 3), max_rel_freq_error=err_f, max_rel_q_error=err_q)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", action="store_true", help="print one JSON list")
    args = parser.parse_args()
    rng = np.random.default_rng(1)
    harmonic_inversion(np.cos(np.arange(4000.0)), 1.0, 0.1, 0.2)   # warm up LAPACK
    rows = [run(n, m, s, rng) for n, m, s in
            [(10_000, 10, 1), (100_000, 10, 1), (100_000, 50, 1), (1_000_000, 50, 1),
             (1_000_000, 50, 3)]]
    if args.json:
        print(json.dumps(rows))
        return
    print(f"{'samples':>9} {'modes':>5} {'sig':>3} {'found':>5} {'s/call':>7} "
          f"{'max df/f':>9} {'max dQ/Q':>9}")
    for r in rows:
        print(f"{r['samples']:>9} {r['modes']:>5} {r['signals']:>3} {r['found']:>5} "
              f"{r['seconds']:>7.3f} {r['max_rel_freq_error']:>9.1e} {r['max_rel_q_error']:>9.1e}")


if __name__ == "__main__":
    main()
