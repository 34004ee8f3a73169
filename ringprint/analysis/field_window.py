"""How long the field pass runs: until the separated mode fields stop changing.

Rule (the report cites it; on with ``[analysis] stop_when_converged``):

- The mode frequencies are known from the first pass, so the separation of
  :mod:`ringprint.analysis.separation` is exact for any window; the window only has
  to be long enough for the system to be well conditioned and for what the model
  leaves out (modes the inversion did not report, round-off) to weigh little.
- The pass restarts from the solver state saved at the first step of the ring-down
  (:mod:`ringprint.analysis.ringdown`, ``start_snapshot``), so no step before the
  ring-down is repeated, and samples exactly the steps the full pass would.
- The fields are separated at the window lengths of the first pass's checks,
  5 periods of f_min times ``1.5^k`` after the start
  (:func:`ringprint.analysis.convergence.check_lengths`),
  on an evenly strided subset of at most :data:`CHECK_POINTS` lattice nodes. The pass
  stops once the separation's condition number is below
  :data:`ringprint.analysis.mode_fields.MIXING_CONDITION` and every mode's field
  correlates with the previous window's to at least ``1 - FIELD_TOL`` (1e-6) in the
  energy inner product (:func:`field_correlation`); at the latest at the first pass's
  length. The promise this serves: correlation >= 0.999 with the full-length field
  per mode and energy shares within 1 % (``tests/analysis/test_field_window.py`` and
  ``benchmarks/bench_convergence.py`` check it).
"""

from __future__ import annotations

import math
import time

import numpy as np

from ringprint.analysis.convergence import check_lengths, first_check
from ringprint.analysis.ringdown import CHUNK_STEPS
from ringprint.analysis.separation import separate
from ringprint.fdtd import EPS0, MU0

#: Smallest change between two windows (1 - correlation) still called converged.
FIELD_TOL = 1e-6
#: Lattice nodes the window checks separate (an evenly strided subset).
CHECK_POINTS = 50_000


def field_correlation(e1, h1, e2, h2, eps_r, volumes) -> float:
    """``|<F1, F2>| / (|F1| |F2|)`` in the stored-energy inner product.

    ``<F1, F2> = sum (eps0 eps_r conj(E1) . E2 + mu0 conj(H1) . H2) dV`` over the nodes;
    1 means the two fields are the same up to a complex factor. ``e``, ``h`` are
    (3, nx, ny, nz) phasors, ``eps_r`` (nx, ny, nz), ``volumes`` an array like it or one
    number.

    References
    ----------
    Harrington, R. F., Time-Harmonic Electromagnetic Fields, 1961 (stored energy).
    """
    vol = np.asarray(volumes, float)
    w_e, w_h = EPS0 * eps_r * vol, MU0 * vol * np.ones_like(eps_r, dtype=float)

    def dot(a, b, w):
        return complex(np.sum(w * np.sum(np.conj(a.astype(complex)) * b, axis=0)))

    cross = dot(e1, e2, w_e) + dot(h1, h2, w_h)
    n1 = dot(e1, e1, w_e).real + dot(h1, h1, w_h).real
    n2 = dot(e2, e2, w_e).real + dot(h2, h2, w_h).real
    if not (n1 > 0 and n2 > 0):
        return 0.0
    return abs(cross) / math.sqrt(n1 * n2)


def _subset_stride(counts) -> int:
    return max(1, int(math.ceil((np.prod(counts) / CHECK_POINTS) ** (1.0 / 3.0))))


def _separate_subset(dft, omega, s: int):
    """Mode phasors on every ``s``-th lattice node, from the sums so far."""
    acc = dft.acc[::s, ::s, ::s]
    sums = np.moveaxis(acc, (3, 4), (0, 1))
    e, cond = separate(sums[:, :3], dft.times_e, omega)
    h, _ = separate(sums[:, 3:], dft.times_h, omega)
    return e, h, cond


def run_window(sim, dft, start: int, ceiling: int, omega, eps_r, volumes, condition: float,
               converge: bool = True, f_min: float = 0.0, progress=None):
    """Step ``sim`` (with ``dft`` attached) until the mode fields converge or ``ceiling``.

    Parameters
    ----------
    sim : fdtd.Simulation
        At step ``start`` or earlier (then it runs up to the start first).
    dft : fdtd.NodeDft
        Summing from ``start`` on.
    start, ceiling : int
        First ring-down step and the last step the pass may reach.
    omega : (K,) complex
        The modes' complex angular frequencies.
    eps_r, volumes :
        Of the lattice (for the energy inner product).
    condition : float
        Largest condition number of the separation accepted as converged.
    converge : bool
        False: run to ``ceiling`` (the full-length pass).
    f_min : float
        Lowest frequency of the case (Hz): the first window holds 5 periods of it.
    progress : callable or None
        ``progress(step, ceiling)``.

    Returns
    -------
    dict
        ``steps`` (last step reached), ``stop_reason``, ``checks`` (one line each),
        ``wall_time_s``, ``start_step`` (where the pass began).
    """
    t0 = time.perf_counter()
    began = sim.step_index
    first = first_check(f_min, sim.dt) if f_min > 0 else CHUNK_STEPS
    schedule = [start + n for n in check_lengths(first, ceiling - start)] if converge else []
    s = _subset_stride(dft.counts)
    prev, lines, reason = None, [], "full length"
    e_sub, vol_sub = eps_r[::s, ::s, ::s], volumes
    if np.ndim(volumes):
        vol_sub = volumes[::s, ::s, ::s]
    while sim.step_index < ceiling:
        due = [n for n in schedule if n > sim.step_index]
        end = min(ceiling, sim.step_index + CHUNK_STEPS, due[0] if due else ceiling)
        sim.run(end - sim.step_index, progress=False)
        if progress is not None:
            progress(sim.step_index, ceiling)
        if sim.step_index not in schedule or not dft.times_e.size:
            continue
        tc = time.perf_counter()
        e, h, cond = _separate_subset(dft, omega, s)
        corr = (None if prev is None else
                [field_correlation(prev[0][k], prev[1][k], e[k], h[k], e_sub, vol_sub)
                 for k in range(e.shape[0])])
        worst = None if corr is None else 1.0 - min(corr)
        lines.append(f"field window {sim.step_index - start} steps: condition {cond:.3g}, "
                     + ("first window" if worst is None else f"largest change 1 - correlation {worst:.2g}")
                     + f", {time.perf_counter() - tc:.2f} s")
        prev = (e, h)
        if worst is not None and cond < condition and worst <= FIELD_TOL:
            reason = f"converged: fields of {e.shape[0]} modes stable over two windows"
            break
    return {"steps": int(sim.step_index), "stop_reason": reason, "checks": lines,
            "wall_time_s": time.perf_counter() - t0, "start_step": int(began)}
