"""Graded (non-uniform) grid planning: part-boundary lines and the 1-D node planner.

The grid is a tensor product: each axis is planned on its own from

- **lines**: coordinates that must be nodes -- the planes of the parts' axis-normal
  flat faces (triangles whose normal lies within ``FLAT_COSINE`` of the axis, grouped
  by coordinate, a group counting when its area is at least a quarter of a nominal
  cell face) and every part's bounding-box faces; lines closer than the minimum
  feature are merged (the larger face wins);
- **targets**: intervals with a largest allowed spacing -- the nominal air cell
  ``c0 / (f_max n)`` everywhere, ``c0 / (f_max sqrt(eps_r) n)`` across each dielectric
  part (its own ``eps_r``), and ``size / WALL_CELLS`` or ``size / GAP_CELLS`` across
  each feature (:mod:`ringprint.meshing.features`) at least ``min_feature`` thick.

**Grading rule.** Neighbouring spacings differ by at most ``GRADING`` (1.3) everywhere.
The planner builds the largest spacing function ``H(x) = min_y [t(y) + g |x - y|]``
over the targets ``t`` (the lower envelope of cones of slope ``g = 0.2``), shrunk by
``1 + s`` (``s = 0.05``), and puts the nodes where ``I(x) = integral dx / H`` has
advanced by ``q`` units, ``1 <= q <= 1 + s``. Along ``I`` the logarithm of ``H``
changes by at most ``g`` per unit, so within a run of equal ``q`` two neighbouring
cells differ by at most ``exp(g (1 + s)) = 1.234``, and across a change of ``q`` by at
most about ``exp(g) (1 + 1.13 s) = 1.29``; no cell exceeds ``(1 + s)`` times ``H``
over it, which is the target. Lines fix nodes: a segment between two lines holds a
whole number of cells, so where its ``I`` falls short of that number of units, ``H``
is lowered inside it under a cap that keeps its end values (found by bisection;
the neighbours do not change) or, for a segment too short for that, under a flat
cap, and the envelope is taken again; the slack ``s`` absorbs the small changes this
makes in the neighbours, so the rounds end. A feature bounded by lines then gets
exactly ``size / cell`` cells (more only where a finer neighbour grades through it).
A target not bounded by lines is widened by one target cell on each side, so that
every cell overlapping it obeys it. The planner checks the ratio of its result.

Outside the parts, cells grow towards the nominal air cell across the padding (which
ends on a whole cell, so it is at least the padding asked for); the absorbing layer's
cells repeat the outermost padding cell (uniform, ratio 1).

References
----------
Taflove, A. & Hagness, S. C., Computational Electrodynamics: The FDTD Method, 3rd ed.,
Artech House, 2005, sec. 4.6-4.7 (dispersion and the cells per wavelength) and ch. 7
(absorbing layer); the 1.3 neighbour ratio is common practice for graded Yee meshes.
"""

from __future__ import annotations

import math

import numpy as np

from ringprint.errors import RingprintError

C0 = 299_792_458.0  # speed of light in vacuum, m/s (exact, SI 2019)

#: Largest ratio of neighbouring spacings.
GRADING = 1.3
#: A triangle is axis-normal when |n . e_axis| is at least this (0.57 degrees).
FLAT_COSINE = 0.99995
#: Slope of the envelope (the growth of ln H per cell) and the slack of a cell over
#: one unit of I: cells are 1 to 1 + _SLACK units long, so a small change in a
#: neighbouring segment never forces one more cell. Both keep every ratio below
#: GRADING: exp(_SLOPE (1 + _SLACK)) = 1.234 within a segment and about
#: exp(_SLOPE) (1 + 1.13 _SLACK) = 1.29 across a line (see plan_axis).
_SLOPE = 0.2
_SLACK = 0.05
_WHOLE = 1e-9
_MAX_ROUNDS = 400


def face_lines(surface, axis, min_area):
    """Coordinates and areas of the surface's flat faces normal to ``axis``.

    Triangles whose unit normal has ``|n_axis| >= FLAT_COSINE`` are grouped by their
    mean coordinate along ``axis`` (to 1e-9 of the part's size); groups whose total
    area is below ``min_area`` are ignored. Returns ``(coords, areas)``.
    """
    tri = np.asarray(surface.vertices, np.float64)[np.asarray(surface.faces, np.int64)]
    cross = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    area2 = np.linalg.norm(cross, axis=1)
    ok = area2 > 0
    flat = np.zeros(len(tri), bool)
    flat[ok] = np.abs(cross[ok, axis]) >= FLAT_COSINE * area2[ok]
    if not flat.any():
        return np.empty(0), np.empty(0)
    coord = tri[flat, :, axis].mean(axis=1)
    size = float(np.ptp(tri[:, :, axis])) or 1.0
    key = np.round(coord / (1e-9 * size)).astype(np.int64)
    uniq, inv = np.unique(key, return_inverse=True)
    area = np.bincount(inv, weights=area2[flat] / 2)
    where = np.bincount(inv, weights=coord * area2[flat]) / np.bincount(inv, weights=area2[flat])
    keep = area >= min_area
    return where[keep], area[keep]


def merge_lines(coords, weights, min_gap):
    """Drop lines closer than ``min_gap`` to a line of larger weight (sorted result)."""
    coords = np.asarray(coords, np.float64)
    order = np.argsort(-np.asarray(weights, np.float64), kind="stable")
    kept = []
    for i in order:
        c = coords[i]
        j = np.searchsorted(kept, c)
        if (j < len(kept) and kept[j] - c < min_gap) or (j > 0 and c - kept[j - 1] < min_gap):
            continue
        kept.insert(j, c)
    return np.asarray(kept, np.float64)


def _envelope(p, t0, t1, g):
    """Knots of ``E(x) = min_y t(y) + g |x - y|`` for a piecewise-linear target.

    ``t`` is linear on each piece ``[p[k], p[k+1]]`` from ``t0[k]`` to ``t1[k]`` with
    slope at most ``g`` in size. ``E`` is continuous and linear between the returned
    knots: on piece k it is ``min(t(x), F_k + g (x - p_k), B_k + g (p_{k+1} - x))``, with
    ``F_k`` (``B_k``) the envelope value reaching the piece's left (right) end from the
    pieces beyond it, so the knots are the piece ends and the three pairwise crossings.
    """
    n = len(t0)
    length = np.diff(p)
    fwd = np.empty(n)
    bwd = np.empty(n)
    run = math.inf
    for k in range(n):
        fwd[k] = run
        run = min(t1[k], run + g * length[k])
    run = math.inf
    for k in range(n - 1, -1, -1):
        bwd[k] = run
        run = min(t0[k], run + g * length[k])
    slope = (t1 - t0) / length
    with np.errstate(divide="ignore", invalid="ignore"):
        cand = np.stack([(t0 - fwd) / (g - slope), (bwd + g * length - t0) / (slope + g),
                         (bwd + g * length - fwd) / (2 * g)], axis=1)
    inside = np.isfinite(cand) & (cand > 0) & (cand < length[:, None])
    piece = np.concatenate([np.arange(n), np.nonzero(inside)[0], [n - 1]])
    u = np.concatenate([np.zeros(n), cand[inside], [length[-1]]])
    order = np.lexsort((u, piece))
    piece, u = piece[order], u[order]
    x = p[piece] + u
    with np.errstate(invalid="ignore"):
        h = np.minimum.reduce([t0[piece] + slope[piece] * u, fwd[piece] + g * u,
                               bwd[piece] + g * (length[piece] - u)])
    keep = np.r_[True, np.diff(x) > 0]
    return x[keep], h[keep]


def _cumulative(x, h):
    """``I`` at the knots: the integral of ``1 / H`` for ``H`` linear between knots."""
    dx, h0, h1 = np.diff(x), h[:-1], h[1:]
    rel = (h1 - h0) / h0
    with np.errstate(divide="ignore", invalid="ignore"):
        step = np.where(np.abs(rel) > 1e-9, dx * np.log1p(rel) / (h1 - h0), dx / h0 * (1 - rel / 2))
    return np.concatenate([[0.0], np.cumsum(step)])


def _invert(x, h, cum, values):
    """Positions where ``I`` takes ``values`` (inverse of :func:`_cumulative`)."""
    k = np.clip(np.searchsorted(cum, values, "right") - 1, 0, len(x) - 2)
    m = (h[k + 1] - h[k]) / (x[k + 1] - x[k])
    di = values - cum[k]
    with np.errstate(invalid="ignore", over="ignore"):
        exact = np.expm1(m * di) / m
    step = np.where(np.abs(m * di) > 1e-9, exact, di * (1 + m * di / 2))
    return x[k] + h[k] * step


def _at(x, h, cum, point):
    """``I`` at one point (exact for ``H`` linear between knots)."""
    k = int(np.clip(np.searchsorted(x, point, "right") - 1, 0, len(x) - 2))
    hp = float(np.interp(point, x, h))
    return float(cum[k] + _cumulative(np.array([x[k], point]), np.array([h[k], hp]))[-1])


def _capped(x, h, a, b, cap, keep_ends):
    """Knots of ``min(H, V)`` on ``[a, b]``. With ``keep_ends``, ``V`` falls from ``H(a)``
    at slope ``_SLOPE`` to ``cap``, stays there and rises to ``H(b)``, so the end values
    (and the neighbouring segments) do not change; else ``V = cap``."""
    ha, hb = np.interp([a, b], x, h)
    if not keep_ends:
        ha = hb = cap
    vx = np.array([a, min(b, a + max(ha - cap, 0) / _SLOPE), max(a, b - max(hb - cap, 0) / _SLOPE), b])
    inner = (x > a) & (x < b)
    xs = np.unique(np.concatenate([[a, b], x[inner], vx]))

    def v_at(u):
        return np.maximum(cap, np.maximum(ha - _SLOPE * (u - a), hb - _SLOPE * (b - u)))

    d = np.interp(xs, x, h) - v_at(xs)
    cross = np.nonzero(d[:-1] * d[1:] < 0)[0]
    xc = xs[cross] + (xs[cross + 1] - xs[cross]) * d[cross] / (d[cross] - d[cross + 1])
    xs = np.unique(np.concatenate([xs, xc]))
    return xs, np.minimum(np.interp(xs, x, h), v_at(xs))


def _whole(x, h, a, b, want, keep_ends):
    """The capped knots on ``[a, b]`` holding exactly ``want`` units of I (bisection on
    the cap), or None when no cap reaches it."""
    hi = float(np.max(h[(x >= a) & (x <= b)]))
    lo = 1e-9 * hi
    if _cumulative(*_capped(x, h, a, b, lo, keep_ends))[-1] < want:
        return None
    for _ in range(80):
        cap = (lo + hi) / 2
        lo, hi = (cap, hi) if _cumulative(*_capped(x, h, a, b, cap, keep_ends))[-1] > want else (lo, cap)
    return _capped(x, h, a, b, lo, keep_ends)


def _refine(x, h, lines, q, count):
    """One round of making every segment between lines hold whole cells.

    A segment short of a whole cell (``q < 1``) gets one more: its interior is lowered
    under a cap (found by bisection) that keeps its end values, so its neighbours do
    not change; where no such cap adds a whole cell, under a flat cap, which lowers
    an end too, and the envelope spreads that change into the neighbours.
    """
    parts = []
    for k in np.nonzero(q < 1 - _WHOLE)[0]:
        a, b = lines[k], lines[k + 1]
        got = _whole(x, h, a, b, count[k], True) or _whole(x, h, a, b, count[k], False)
        parts.append(got)
    x2 = np.unique(np.concatenate([x] + [xs for xs, _ in parts]))
    t0, t1 = np.interp(x2[:-1], x, h), np.interp(x2[1:], x, h)
    mid = (x2[:-1] + x2[1:]) / 2
    for xs, hs in parts:  # pieces inside a changed segment take its new values
        inside = (mid > xs[0]) & (mid < xs[-1])
        t0[inside] = np.interp(x2[:-1][inside], xs, hs)
        t1[inside] = np.interp(x2[1:][inside], xs, hs)
    return _envelope(x2, t0, t1, _SLOPE)


def plan_axis(lines, targets, cell, padding, boundary_cells):
    """Node vector of one axis (the grading rule is in the module docstring).

    Parameters
    ----------
    lines : array_like
        Coordinates (m) that must be nodes, at least one; sorted and distinct.
    targets : sequence of (lo, hi, h)
        Largest spacing ``h`` (m) over ``[lo, hi]``; the air cell holds elsewhere. A
        target no wider than 1e-9 of a cell (round-off) is ignored.
    cell : float
        Nominal (largest) spacing, m.
    padding : float
        Air (m) kept beyond the first and last line before the absorbing layer.
    boundary_cells : int
        Cells of the absorbing layer on each end, equal to the outermost padding cell.

    Returns
    -------
    ndarray
        Strictly increasing node coordinates (m), every line among them.
    """
    lines = np.unique(np.asarray(lines, np.float64))
    far = (lines[0] - padding - 12 * cell, lines[-1] + padding + 12 * cell)
    spans = []
    for lo, hi, h in targets:
        h = min(float(h), cell)
        if hi - lo <= 1e-9 * cell:    # no extent beyond round-off: nothing to refine
            continue
        on = [bool(np.min(np.abs(lines - v)) <= 1e-9 * cell) for v in (lo, hi)]
        spans.append((max(far[0], lo - (0 if on[0] else 1.01 * h)),
                      min(far[1], hi + (0 if on[1] else 1.01 * h)), h))
    p = np.unique(np.concatenate([far, lines] + [np.array(s[:2]) for s in spans]))
    t = np.full(len(p) - 1, float(cell))
    for lo, hi, h in spans:
        i0, i1 = np.searchsorted(p, lo), np.searchsorted(p, hi)
        t[i0:i1] = np.minimum(t[i0:i1], h)
    x, h = _envelope(p, t / (1 + _SLACK), t / (1 + _SLACK), _SLOPE)
    for _ in range(_MAX_ROUNDS):
        cum = _cumulative(x, h)
        at_lines = cum[np.searchsorted(x, lines)]
        seg = np.diff(at_lines)
        count = np.maximum(1, np.ceil(seg / (1 + _SLACK) - _WHOLE))
        q = seg / count
        if np.all(q >= 1 - _WHOLE):
            break
        x, h = _refine(x, h, lines, q, count)
    else:  # pragma: no cover - the shrinking always ends; this guards a bug
        raise RuntimeError("graded grid planner did not settle")
    nodes = [lines[:1]]
    for k in range(len(seg)):
        values = at_lines[k] + seg[k] * np.arange(1, int(count[k]) + 1) / count[k]
        nodes.append(np.concatenate([_invert(x, h, cum, values[:-1]), lines[k + 1:k + 2]]))
    core = np.concatenate(nodes)
    unit = 1 + _SLACK  # padding cells: the largest allowed, so far air gets the full cell
    left = math.ceil((at_lines[0] - _at(x, h, cum, lines[0] - padding)) / unit - _WHOLE) if padding > 0 else 0
    right = math.ceil((_at(x, h, cum, lines[-1] + padding) - at_lines[-1]) / unit - _WHOLE) if padding > 0 else 0
    lpad = _invert(x, h, cum, at_lines[0] - unit * np.arange(left, 0, -1.0))
    rpad = _invert(x, h, cum, at_lines[-1] + unit * np.arange(1.0, right + 1))
    axis = np.concatenate([lpad, core, rpad])
    d = np.diff(axis)
    lo_cell = d[0] if d.size else cell
    hi_cell = d[-1] if d.size else cell
    bc = int(boundary_cells)
    axis = np.concatenate([axis[0] - lo_cell * np.arange(bc, 0, -1.0), axis,
                           axis[-1] + hi_cell * np.arange(1.0, bc + 1)])
    d = np.diff(axis)
    if np.any(d <= 0) or (d.size > 1 and np.max(np.maximum(d[1:] / d[:-1], d[:-1] / d[1:])) > GRADING):
        raise RuntimeError("graded grid planner broke its grading rule")  # pragma: no cover
    return axis


def check_min_feature(min_feature, cell):
    """Validate the minimum feature size (m) against the nominal cell."""
    if not (np.isfinite(min_feature) and min_feature > 0):
        raise RingprintError(f"min_feature = {min_feature!r} must be a positive length in metres")
    return float(min(min_feature, cell))


def graded_axes(surfaces, names, eps_r, f_max, cells_per_wavelength, padding, boundary_cells,
                min_feature, lo, hi, mirrors=None):
    """Node vectors of the three axes and the refinements that shaped them.

    Lines: flat faces and bounding boxes of every surface; targets: the dielectric
    wavelength across each dielectric part, and each feature of
    :func:`ringprint.meshing.features.find_features` at least ``min_feature`` thick.
    ``mirrors`` (``{axis index: coordinate}``): mirror planes, each a line weighted
    above every face, and the lines and targets along its axis are mirrored about it
    too, so the half above the plane meets what either half asks (parts whose facets
    are not exact mirror images find slightly different features on the two sides).
    Returns ``(axes, refinements)``, refinements most restrictive first.
    """
    mirrors = mirrors or {}
    from ringprint.meshing.features import Refinement, find_features

    cell = C0 / (f_max * cells_per_wavelength)
    lines = []
    for a in range(3):
        coords, weights = [], []
        if a in mirrors:  # first: kept over box faces closer than min_feature
            coords.append([mirrors[a]])
            weights.append([np.inf])
        for s in surfaces:
            c, w = face_lines(s, a, (cell / 2) ** 2)
            slo, shi = s.bounds
            coords += [c, [slo[a], shi[a]]]
            weights += [w, [np.inf, np.inf]]
        if a in mirrors:
            coords += [2 * mirrors[a] - np.asarray(c, np.float64) for c in coords[1:]]
            weights += weights[1:]
        lines.append(merge_lines(np.concatenate(coords), np.concatenate(weights), min_feature))
    records = []
    for s, name, eps in zip(surfaces, names, eps_r):
        if eps > 1:
            slo, shi = s.bounds
            h = cell / math.sqrt(eps)
            for a in range(3):
                centre = tuple(float(v) for v in (slo + shi) / 2)
                records.append(Refinement((name,), "dielectric", "xyz"[a], float(shi[a] - slo[a]), h,
                                          centre, (float(slo[a]), float(shi[a]))))
    for a in range(3):
        records += find_features(surfaces, names, a, lo, hi, cell, min_feature, lines)
    axes = []
    for a in range(3):
        targets = [(r.span[0], r.span[1], r.cell_m) for r in records if r.axis == "xyz"[a] and r.refined]
        if a in mirrors:
            targets += [(2 * mirrors[a] - h, 2 * mirrors[a] - l, size) for l, h, size in targets]
        axes.append(plan_axis(lines[a], targets, cell, padding, boundary_cells))
    records.sort(key=lambda r: (not r.refined, r.cell_m))
    return axes, tuple(records)
