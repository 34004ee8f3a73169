"""The steppable Yee/FDTD simulation."""

from __future__ import annotations

import sys

import numba
import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd import _kernels as K
from ringprint.fdtd.conformal import ConformalFaces
from ringprint.fdtd.cpml import CpmlSettings, axis_profiles, parse_boundaries
from ringprint.fdtd.grid import AXES, C0, COMPONENTS, MU0, Grid, courant_time_step
from ringprint.fdtd._rows import row_tables
from ringprint.fdtd.layout import Layout
from ringprint.fdtd.media import Media

#: Relative growth of the field energy, after every source has ended, that stops
#: a run (on top of a floor of ENERGY_FLOOR times the peak energy).
ENERGY_GROWTH_TOL = 0.05
ENERGY_FLOOR = 1e-6
#: Cells per wavelength required in the densest medium at f_max (common practice).
MIN_CELLS_PER_WAVELENGTH = 10.0
#: Grids with fewer cells run on one thread (parallel start-up costs more there).
SERIAL_BELOW_CELLS = 100_000
#: Steps between energy samples when ``energy_every`` is not given (the last step
#: of every :meth:`Simulation.run` call is sampled too).
ENERGY_STRIDE = 16


class Simulation:
    """A Yee/FDTD run that can be advanced step by step.

    Parameters
    ----------
    grid : Grid
        The whole computational domain; CPML layers occupy its outer cells.
    media : Media
        Per-edge permittivity, conductivity and PEC.
    boundaries : str or dict
        ``"cpml"``, ``"pec"``, ``"pmc"`` for all faces, or ``{face: kind}`` with
        faces ``"x-", "x+", ..., "z+"`` (missing faces are ``"cpml"``).
    cpml_cells : int
        CPML thickness in cells on every CPML face (default 10).
    courant : float
        Courant safety factor, 0 < S < 1 (default 0.99).
    dtype : numpy dtype
        Field precision, ``np.float32`` (default) or ``np.float64``. Records and
        energies are always accumulated in float64.
    f_max : float, optional
        Highest frequency of interest (Hz); refused when the grid has fewer than
        10 cells per wavelength (common practice) in the densest medium there.
    cpml : CpmlSettings, optional
        Grading of the CPML.
    energy_every : int or None
        Record the field energy (and run the energy guard) on the steps n with
        ``n % energy_every == 0`` (1: one value per step). ``None`` (default): every
        :data:`ENERGY_STRIDE` (16) steps and on the last step of every :meth:`run`
        call, so a caller that runs in chunks sees the energy at the end of each.
        The sum is fused into the sweeps, yet a step that takes it ran 10-20 %
        slower on the bench case (``ringprint bench``), so it is taken sparsely;
        ``energy_record()`` gives the times of the samples. The fields do not
        depend on it; a peak taken over the record is the largest sampled value.

    Notes
    -----
    One step advances H from ``(n-1/2) dt`` to ``(n+1/2) dt`` and E from ``n dt`` to
    ``(n+1) dt``. The total field energy of the region outside the CPML is recorded
    on the sampled steps (``energy_every``; summed inside the update sweeps, so it
    costs no extra pass over memory) in the half-step form ``(eps |E^n|^2 + mu0 H^(n-1/2) . H^(n+1/2)) / 2``, which the
    Yee scheme conserves exactly in a lossless closed cavity (Taflove & Hagness).

    The run stops with a RingprintError when a field becomes non-finite, or when
    that energy, after every source has ended, exceeds ``(1 + 0.05)`` times its
    smallest value since then plus ``1e-6`` of its peak.

    References
    ----------
    Yee, K. S., IEEE Trans. Antennas Propag. 14(3):302-307, 1966.
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005.
    Roden, J. A. & Gedney, S. D., Microw. Opt. Technol. Lett. 27(5):334-339, 2000.
    """

    def __init__(self, grid: Grid, media: Media, boundaries="cpml", cpml_cells: int = 10,
                 courant: float = 0.99, dtype=np.float32, f_max: float | None = None,
                 cpml: CpmlSettings | None = None, energy_every: int | None = None):
        if not isinstance(grid, Grid) or not isinstance(media, Media):
            raise RingprintError("Simulation needs a Grid and a Media built on it")
        if media.grid.shape != grid.shape:
            raise RingprintError(f"media built for a grid of {media.grid.shape} nodes, not {grid.shape}")
        self.dtype = np.dtype(dtype)
        if self.dtype not in (np.float32, np.float64):
            raise RingprintError(f"dtype {dtype!r} unsupported; use np.float32 or np.float64")
        self.grid, self.media = grid, media
        self.boundaries = parse_boundaries(boundaries)
        self.cpml_cells = int(cpml_cells)
        self.cpml_settings = cpml or CpmlSettings()
        self.courant = float(courant)
        self.f_max = None if f_max is None else float(f_max)
        self.energy_every = None if energy_every is None else int(energy_every)
        if self.energy_every is not None and self.energy_every < 1:
            raise RingprintError(f"energy_every = {energy_every!r} must be an integer >= 1 (or None)")
        self.layout = Layout(grid, self.boundaries, self.cpml_cells)
        self.dt = courant_time_step(grid, courant, media.eps_r_min) * media.step_factor
        if f_max is not None:
            self._check_resolution(float(f_max))
        self.step_index = 0
        self.fields = {c: np.zeros(grid.component_shape(c), self.dtype) for c in COMPONENTS}
        self._build_coefficients()
        self.sources, self.pickups = [], {}
        self.dfts = []
        self._src = []   # (source, component, flat idx, coef)
        self._pick = {}  # component -> [flat idx, weight, column]
        self._rec = np.zeros((0, 0))
        self._energy = np.zeros(0)  # per step, NaN where not sampled
        self._guard_min = np.inf
        self._guard_peak = 0.0

    # ------------------------------------------------------------------ set-up
    def _check_resolution(self, f_max):
        """Cells per wavelength where it is worst: on a graded grid each E-edge's own
        spacings (its edge and dual lengths) against the wavelength in its medium."""
        root = np.sqrt(np.where(np.isfinite(self.media.eps_r_table), self.media.eps_r_table, 1.0))
        worst, eps, d = 0.0, 1.0, 0.0
        for a, idx in enumerate(self.media.index):
            local = root[idx]
            for b in range(3):
                steps = self.grid.spacing[b] if b == a else self.grid.dual_spacing[b]
                others = tuple(o for o in range(3) if o != b)
                line = local.max(axis=others) * steps
                k = int(np.argmax(line))
                if line[k] > worst:
                    worst, d, eps = float(line[k]), float(steps[k]), float(local.max(axis=others)[k]) ** 2
        lam = C0 / (f_max * np.sqrt(eps))
        # 1e-12: round-off of the spacings must not refuse a grid planned at exactly the limit
        if not (np.isfinite(f_max) and f_max > 0) or lam / d < MIN_CELLS_PER_WAVELENGTH * (1 - 1e-12):
            ok = C0 / (MIN_CELLS_PER_WAVELENGTH * d * np.sqrt(eps))
            raise RingprintError(
                f"f_max = {f_max:.6g} Hz is too high for this grid: {lam / d:.3g} cells per wavelength "
                f"in the densest medium (eps_r {eps:g}, cell {d:.3g} m), need >= "
                f"{MIN_CELLS_PER_WAVELENGTH:g}; lower f_max below {ok:.4g} Hz or refine the grid")

    def _build_coefficients(self):
        g, lay, ft = self.grid, self.layout, self.dtype
        ca, cb = self.media.coefficients(self.dt)
        self._ca, self._cb = ca.astype(ft), cb.astype(ft)
        self._epst = self.media.permittivity_table()
        # per (i, j) row: its media index when uniform along k, else its kind (runs of
        # one medium, or cell by cell), and the runs (lets the sweep hoist the
        # coefficients out of each run)
        self._urows, self._runs = row_tables(self.media.index)
        self._ch = ft.type(self.dt / MU0)
        self._chtab = np.array([self.dt / MU0], ft)
        self._signs = np.array([1.0, -1.0], ft)
        self._inv_e, self._inv_h, self._prof = [], [], []
        for a in range(3):
            n_lo, n_hi = lay.cpml[a]
            p = axis_profiles(g.nodes[a], g.centres[a], n_lo, n_hi, self.dt, self.cpml_settings)
            self._prof.append({k: v.astype(ft) for k, v in p.items()})
            self._inv_e.append((1.0 / (g.dual_spacing[a] * p["kappa_e"])).astype(ft))
            self._inv_h.append((1.0 / (g.spacing[a] * p["kappa_h"])).astype(ft))
        self._wn = [w.astype(ft) for w in lay.energy_weights()[0]]
        self._wc = [w.astype(ft) for w in lay.energy_weights()[1]]
        self._boxes = [(c, lo, hi, tuple(x.astype(ft) for x in w)) for c, lo, hi, w in lay.pmc_boxes()]
        self._build_cpml()
        self._build_conformal()

    def _build_conformal(self):
        """The cut faces of conformal metal as kernel arrays (empty without)."""
        cf = self.media.conformal or ConformalFaces.empty(self.grid.shape[0])
        if cf.ptr.size != self.grid.shape[0] + 1:
            raise RingprintError("media: conformal faces were built for another grid")
        if cf.size:
            lay = self.layout
            for name, v, axis in (("i", np.repeat(np.arange(cf.ptr.size - 1), np.diff(cf.ptr)), 0),
                                  ("j", cf.j, 1), ("k", cf.k, 2)):
                if v.min() < lay.lo[axis] or v.max() > lay.hi[axis]:
                    raise RingprintError(
                        "conformal metal reaches into the CPML layer along "
                        f"{AXES[axis]}; keep conductors inside the padding (enlarge it)")
        self._conformal = (cf.ptr, cf.comp, cf.j, cf.k, cf.inv_area.astype(self.dtype),
                           np.ascontiguousarray(cf.lengths, self.dtype))
        self._conformal_e = (cf.edge_comp, cf.edge_index, cf.edge_length)

    def _build_cpml(self):
        """CPML coefficients, psi arrays (only inside the layers) and wall rows."""
        g, ft, lay, f = self.grid, self.dtype, self.layout, self.fields
        self._pb_e = tuple(p["b_e"] for p in self._prof)
        self._pa_e = tuple((p["a_e"] / g.dual_spacing[a]).astype(ft) for a, p in enumerate(self._prof))
        self._pb_h = tuple(p["b_h"] for p in self._prof)
        self._pa_h = tuple((p["a_h"] / g.spacing[a]).astype(ft) for a, p in enumerate(self._prof))
        self._r_e, self._r_h = lay.cpml_ranges("e"), lay.cpml_ranges("h")
        self._walls = []
        psi = {"e": [], "h": []}
        for kind in ("e", "h"):
            for comp, axis, gcomp, sign, _side, span in lay.cpml_terms(kind):
                shape = list(g.component_shape(comp))
                shape[axis] = span[1] - span[0]
                p = np.zeros(shape, ft)
                psi[kind].append(p)
                if kind == "e":
                    m = self.media.index[AXES.index(comp[1])]
                    for lo, hi in lay.wall_rows(comp, axis, span):
                        self._walls.append((axis, f[comp], f[gcomp], m, self._cb, True, p,
                                            self._pb_e[axis], self._pa_e[axis], span[0], 0,
                                            ft.type(sign), lo, hi))
        self._psi_e, self._psi_h = tuple(psi["e"]), tuple(psi["h"])

    @property
    def psi_arrays(self) -> list:
        """The CPML auxiliary arrays (they exist only inside the layers)."""
        return list(self._psi_e) + list(self._psi_h)

    def add_source(self, source) -> None:
        """Add a :class:`LoopSource` or :class:`DipoleSource` (before or between runs)."""
        what = f"{type(source).__name__} at {_describe(source)}"
        self.layout.check_point(getattr(source, "center", None) or source.position, what)
        entries = []
        for comp, idx, orient, _length in source.edges(self.grid):
            self.layout.check_indices(comp, idx, what, on_wall_ok=False)
            a = AXES.index(comp[1])
            m = self.media.index[a][idx]
            if np.any(m == 0):
                raise RingprintError(
                    f"{what}: its {comp} edge lies inside a PEC conductor, where it cannot drive "
                    "any field; move the source into a dielectric or air")
            area = np.ones(len(idx[0]))
            for b in range(3):
                if b != a:
                    area = area * self.grid.dual_spacing[b][idx[b]]
            coef = -self._cb[m].astype(np.float64) * orient / area
            flat = np.ravel_multi_index(idx, self.grid.component_shape(comp)).astype(np.int64)
            entries.append((source, comp, flat, coef.astype(self.dtype)))
        self.sources.append(source)
        self._src.extend(entries)

    def add_pickup(self, pickup, name: str) -> None:
        """Record ``pickup`` under ``name`` from the next step on."""
        if name in self.pickups or name in ("time", "time_h", "energy", "energy_time"):
            raise RingprintError(f"pickup name {name!r} is already used; choose another name")
        what = f"{type(pickup).__name__} {name!r} at {_describe(pickup)}"
        self.layout.check_point(getattr(pickup, "center", None) or pickup.position, what)
        stencil = pickup.stencil(self.grid)
        for comp, flat, _w in stencil:
            idx = np.unravel_index(flat, self.grid.component_shape(comp))
            self.layout.check_indices(comp, idx, what, on_wall_ok=True)
        col = len(self.pickups)
        self.pickups[name] = pickup
        for comp, flat, w in stencil:
            e = self._pick.setdefault(comp, [np.zeros(0, np.int64), np.zeros(0), np.zeros(0, np.int64)])
            e[0] = np.concatenate([e[0], flat])
            e[1] = np.concatenate([e[1], w])
            e[2] = np.concatenate([e[2], np.full(flat.size, col, np.int64)])
        rec = np.zeros((self._rec.shape[0], col + 1))
        rec[:, :col] = self._rec
        rec[:, col] = np.nan  # steps before the pickup existed
        self._rec = rec

    def add_dft(self, dft) -> None:
        """Accumulate a :class:`~ringprint.fdtd.NodeDft` from the next step on."""
        dft.attach(self)
        self.dfts.append(dft)

    # --------------------------------------------------------------- running
    @property
    def time(self) -> float:
        """Time of the current E field, ``step_index * dt`` (s)."""
        return self.step_index * self.dt

    @property
    def source_end_time(self) -> float:
        """Time after which every source's envelope is below 1e-8 of its peak (s)."""
        return max((s.waveform.t_end for s in self.sources), default=0.0)

    def get_field(self, component: str) -> np.ndarray:
        """A copy of one field component (E at ``time``, H at ``time - dt/2``)."""
        if component not in COMPONENTS:
            raise RingprintError(f"field component {component!r} unknown; use one of {', '.join(COMPONENTS)}")
        return self.fields[component].copy()

    def run(self, n_steps: int, progress: bool | None = None) -> None:
        """Advance ``n_steps`` steps; may be called repeatedly.

        Parameters
        ----------
        n_steps : int
        progress : bool or None
            Show a progress bar (steps/s, ETA). ``None``: only on a terminal.
        """
        n_steps = int(n_steps)
        if n_steps < 0:
            raise RingprintError(f"n_steps = {n_steps} must be >= 0")
        start = self.step_index
        self._grow(start + n_steps)
        f = self.fields
        ex, ey, ez, hx, hy, hz = (f[c] for c in COMPONENTS)
        mx, my, mz = self.media.index
        ie = self._inv_e
        sweep = self._sweep_args()
        t_src = (start + np.arange(n_steps) + 0.5) * self.dt
        src_vals = [s.waveform(t_src) for s, *_ in self._src]
        t_end = self.source_end_time
        flats = {c: f[c].reshape(-1) for c in COMPONENTS}
        bar = _progress_bar(n_steps, progress)
        threads = numba.get_num_threads()
        if self.grid.cells < SERIAL_BELOW_CELLS:
            numba.set_num_threads(1)  # thread start-up would cost more than the sweep
        nchunk = numba.get_num_threads()  # one run of planes per thread (see K.step)
        try:
            every = self.energy_every or ENERGY_STRIDE
            last = n_steps - 1 if self.energy_every is None else -1
            for n in range(n_steps):
                en = (start + n) % every == 0 or n == last
                cut = K.conformal_e_energy(sweep[0], self._epst, sweep[8], self._conformal_e,
                                           sweep[19], sweep[20]) if en and self._conformal_e[0].size \
                    else 0.0
                wh, we = K.step(nchunk, *sweep, en)
                we += cut
                for comp, lo, hi, w in self._boxes:
                    we += K.update_e_box(comp, lo, hi, ex, ey, ez, hx, hy, hz, mx, my, mz, self._ca,
                                         self._cb, self._epst, ie[0], ie[1], ie[2], w[0], w[1], w[2])
                for args in self._walls:
                    K.cpml_rows(*args)
                for (_s, comp, flat, coef), vals in zip(self._src, src_vals):
                    K.add_at(flats[comp], flat, coef, vals[n])
                row = self._rec[start + n]
                for comp, (idx, w, col) in self._pick.items():
                    K.gather(flats[comp], idx, w, col, row)
                self.step_index = start + n + 1
                for d in self.dfts:
                    d.sample(self)
                if en:
                    energy = 0.5 * (we + MU0 * wh)
                    self._energy[start + n] = energy
                    self._guard(energy, (start + n) * self.dt, t_end)
                if bar is not None and (n % 16 == 15 or n == n_steps - 1):
                    bar.update(16 if n % 16 == 15 else (n % 16) + 1)
        finally:
            numba.set_num_threads(threads)
            if bar is not None:
                bar.close()
        for c in COMPONENTS:
            if not K.all_finite(f[c]):
                self._fail(f"field {c} became non-finite")

    def _sweep_args(self) -> tuple:
        """Arguments of ``_kernels.step`` between ``nchunk`` and ``en``."""
        f = self.fields
        return (tuple(f[c] for c in COMPONENTS), self._ch, tuple(self._inv_h), self._chtab,
                self._pb_h, self._pa_h, self._r_h, self._psi_h, tuple(self.media.index),
                self._urows, self._runs, self._ca, self._cb, self._epst, tuple(self._inv_e), self._pb_e,
                self._pa_e, self._r_e, self._psi_e, tuple(self._wn), tuple(self._wc), self._signs,
                self._conformal)

    def _guard(self, energy, t, t_end):
        if not np.isfinite(energy):
            self._fail("the field energy became non-finite")
        self._guard_peak = max(self._guard_peak, energy)
        if t <= t_end:
            return
        if energy > (1.0 + ENERGY_GROWTH_TOL) * self._guard_min + ENERGY_FLOOR * self._guard_peak:
            self._fail(f"the field energy grew from {self._guard_min:.3e} J to {energy:.3e} J "
                       "after every source had ended")
        self._guard_min = min(self._guard_min, energy)

    def _fail(self, what):
        raise RingprintError(
            f"unstable run at step {self.step_index} (t = {self.time:.4g} s): {what}; check the Courant "
            f"factor ({self.courant:g}), the material values (eps_r > 0, sigma >= 0), sources inside "
            "conductors, and the CPML settings")

    def _grow(self, n_total):
        if self._rec.shape[0] < n_total:
            rec = np.zeros((n_total, self._rec.shape[1]))
            rec[:self._rec.shape[0]] = self._rec
            self._rec = rec
            energy = np.full(n_total, np.nan)
            energy[:self._energy.size] = self._energy
            self._energy = energy

    def records(self) -> dict:
        """Everything recorded so far, as float64 arrays of one value per step.

        Keys: each pickup name; ``"time"`` (``n dt``, n = 1..step_index: E pickups and
        loop EMFs), ``"time_h"`` (``(n - 1/2) dt``: H pickups); ``"energy"`` (J) with
        ``"energy_time"`` (``n dt`` of the sampled steps: n = 0, k, 2k, ... < step_index with
        k = energy_every; by default k = 16 plus the last step of every :meth:`run` call).
        """
        n = self.step_index
        out = {name: self._rec[:n, col].copy() for col, name in enumerate(self.pickups)}
        out["time"] = np.arange(1, n + 1) * self.dt
        out["time_h"] = out["time"] - 0.5 * self.dt
        out["energy_time"], out["energy"] = self.energy_record()
        return out

    def energy_record(self) -> tuple[np.ndarray, np.ndarray]:
        """``(energy_time, energy)`` as in :meth:`records`, without copying the pickups."""
        sampled = np.flatnonzero(~np.isnan(self._energy[:self.step_index]))
        return sampled * self.dt, self._energy[sampled]

    # ------------------------------------------------------------ checkpoints
    def save_checkpoint(self, path) -> None:
        """Write the full state (fields, CPML psi, records, step) to an HDF5 file."""
        from ringprint.fdtd.checkpoint import save
        save(self, path)

    @classmethod
    def load_checkpoint(cls, path) -> "Simulation":
        """Rebuild a simulation from :meth:`save_checkpoint` output, ready to run on."""
        from ringprint.fdtd.checkpoint import load
        return load(cls, path)


def _describe(obj) -> str:
    pos = getattr(obj, "center", None) or getattr(obj, "position", None)
    return "(" + ", ".join(f"{v:.6g}" for v in pos) + ") m" if pos is not None else repr(obj)


def _progress_bar(total, progress):
    show = sys.stderr.isatty() if progress is None else bool(progress)
    if not show or total == 0:
        return None
    from tqdm import tqdm
    return tqdm(total=total, unit="step", dynamic_ncols=True, leave=False)
