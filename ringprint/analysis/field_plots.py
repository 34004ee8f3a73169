"""Flat pictures of one mode for report.html: field slices and the touch map.

Both are drawn on a bare Agg :class:`matplotlib.figure.Figure` (no display, no pyplot
state) and returned as PNG bytes small enough to embed (about 100-200 kB).

- :func:`field_picture_png` -- three orthogonal slices through the point where the
  chosen quantity peaks (energy density by default), outlines of every part (each
  its own line style as well as its own colour, so the picture reads in grey), the
  probe loop's outline, axes in mm. Every node is drawn at its own coordinates, so
  a graded lattice is not distorted.
- :func:`touch_map_png` -- the predicted frequency shift at each touch point of the
  outer surface, seen along the three axes; the worst spots numbered.

:func:`field_quantity` gives the scalar that both pictures and the 3-D view
(:mod:`ringprint.analysis.field_views`) show: ``"e"`` -> |E| (V/m), ``"h"`` ->
|H| (A/m), ``"energy"`` -> time-averaged stored energy density (J/m^3). |E| of a
phasor is ``sqrt(|Ex|^2 + |Ey|^2 + |Ez|^2)``, the peak of the field over a cycle for
a linearly polarised field. Each mode is normalized to 1 J stored energy
(:mod:`ringprint.analysis.fieldset`), so the values compare across modes.
"""

from __future__ import annotations

import io

import numpy as np

from ringprint.analysis.fieldset import FieldSet, ModeField, TouchMap
from ringprint.analysis.textformat import format_frequency, format_q
from ringprint.errors import RingprintError

__all__ = ["QUANTITIES", "field_quantity", "resolve_mode", "peak_node", "probe_corners",
           "flat_axis", "region_of_interest",
           "mode_title", "spot_points", "field_picture_png", "touch_map_png",
           "PART_COLOURS"]

#: quantity key -> (label with unit, for 1 J stored energy)
QUANTITIES = {
    "e": "|E| (V/m), 1 J stored",
    "h": "|H| (A/m), 1 J stored",
    "energy": "energy density (J/m³), 1 J stored",
}
#: Muted, distinct part colours that stay apart for colour-blind readers (Tol, P.,
#: "Colour schemes", SRON technical note SRON/EPS/TN/09-002, 2021, "muted" set;
#: hex values from memory).
PART_COLOURS = ("#CC6677", "#332288", "#DDCC77", "#117733", "#88CCEE",
                "#882255", "#44AA99", "#999933", "#AA4499")
#: Line styles paired with the colours, so outlines differ in a grey print too.
_PART_STYLES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1, 1, 1)), (0, (1, 3)), (0, (8, 2)))
_AXES = "xyz"
_DPI = 100
#: Range of the field picture's logarithmic colour scale (dB below the peak).
DYNAMIC_RANGE_DB = 30.0


def resolve_mode(fs: FieldSet, mode) -> ModeField:
    """``mode`` as a :class:`ModeField`: pass one, or its 1-based index."""
    if isinstance(mode, ModeField):
        return mode
    if isinstance(mode, (int, np.integer)) and not isinstance(mode, bool):
        return fs.mode(int(mode))
    raise RingprintError(f"mode {mode!r} is neither a mode number nor a ModeField; "
                         "give the mode's index from modes.json (1, 2, ...)")


def field_quantity(fs: FieldSet, mode, quantity: str = "e") -> tuple[np.ndarray, str]:
    """The scalar field shown for ``quantity`` and its label.

    Parameters
    ----------
    fs : FieldSet
    mode : ModeField or int
        The mode, or its 1-based index.
    quantity : {"e", "h", "energy"}

    Returns
    -------
    values : ndarray of float64, shape ``fs.shape``
    label : str
        E.g. ``"|E| (V/m), 1 J stored"``.
    """
    if quantity not in QUANTITIES:
        raise RingprintError(f"quantity {quantity!r} is not known; use one of "
                             f"{', '.join(QUANTITIES)}")
    m = resolve_mode(fs, mode)
    if quantity == "energy":
        values = fs.energy_density(m)
    else:
        phasor = m.e if quantity == "e" else m.h
        values = np.sqrt(np.sum(np.abs(phasor) ** 2, axis=0))
    values = np.asarray(values, np.float64)
    if values.shape != fs.shape or not np.all(np.isfinite(values)):
        raise RingprintError(f"mode {m.index}: the {quantity} field is not a finite array of "
                             f"shape {fs.shape}; the fields file is damaged, run the case again")
    return values, QUANTITIES[quantity]


def peak_node(values: np.ndarray) -> tuple[int, int, int]:
    """Lattice index ``(i, j, k)`` of the largest value; among nodes within 1e-6 of
    it (a field that is flat along one axis), the one nearest the lattice centre."""
    top = float(values.max())
    ties = np.argwhere(values >= top - 1e-6 * abs(top))
    centre = (np.array(values.shape) - 1) / 2.0
    best = ties[int(np.argmin(np.sum((ties - centre) ** 2, axis=1)))]
    return tuple(int(v) for v in best)


def probe_corners(probe) -> np.ndarray | None:
    """Corners (4, 3) in metres of the square probe loop described by ``fs.probe``
    (centre, axis normal to its plane, side length), in order around the loop; None
    when there is no probe."""
    if not probe:
        return None
    try:
        centre = np.asarray(probe["center_m"], float).reshape(3)
        axis = _AXES.index(str(probe["normal"]))
        half = 0.5 * float(probe["size_m"])
    except (KeyError, ValueError, TypeError):
        raise RingprintError(f"probe {probe!r} is not understood; give center_m [x, y, z], "
                             "normal 'x'|'y'|'z' and size_m") from None
    u, v = [a for a in range(3) if a != axis]
    corners = np.repeat(centre[None, :], 4, axis=0)
    for row, (su, sv) in enumerate(((-1, -1), (1, -1), (1, 1), (-1, 1))):
        corners[row, u] += su * half
        corners[row, v] += sv * half
    return corners


def mode_title(mode: ModeField) -> str:
    """``"mode 4, 2.410 GHz, Q 37.2"``."""
    return f"mode {mode.index}, {format_frequency(mode.frequency_hz, digits=4)}, Q {format_q(mode.q)}"


def spot_points(spots) -> np.ndarray:
    """Positions (k, 3) in metres of touch spots given as modes.json's ``touch.worst``
    entries (:func:`ringprint.analysis.touch.worst_spots`: dicts with ``"point_m"``)."""
    try:
        points = np.array([[float(v) for v in spot["point_m"]] for spot in spots], float)
    except (TypeError, KeyError, ValueError):
        raise RingprintError("worst touch spots are not understood; give the list made by "
                             "touch.worst_spots (dicts with point_m, shift_percent, q_after)") from None
    points = points.reshape(-1, 3) if points.size else np.zeros((0, 3))
    if not np.all(np.isfinite(points)):
        raise RingprintError("a worst touch spot has a NaN position; run the case again")
    return points


def _png(fig) -> bytes:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=_DPI)
    return buf.getvalue()


def _colour_bar(fig, mappable, axs, label: str) -> None:
    bar = fig.colorbar(mappable, ax=list(axs), fraction=0.03, pad=0.01)
    bar.set_label(label, fontsize=8)
    if hasattr(bar.formatter, "set_powerlimits"):  # linear scales; a log scale labels itself
        bar.formatter.set_powerlimits((-2, 3))
    bar.ax.tick_params(labelsize=7)


def flat_axis(fs: FieldSet) -> int:
    """Axis (0, 1, 2 for x, y, z) of the lattice's shortest side -- the flat direction
    of most devices; z wins ties, then y."""
    lengths = [a[-1] - a[0] for a in (fs.x, fs.y, fs.z)]
    return min((2, 1, 0), key=lambda a: lengths[a])


def region_of_interest(fs: FieldSet, keep=()) -> tuple[slice, slice, slice]:
    """Index ranges of the lattice around the parts: their bounding box grown by 15 %
    of its size (at least 2 nodes) on each side, and holding every node in ``keep``
    (e.g. the field's peak); the whole lattice when there are no parts."""
    solid = fs.solid()
    if not solid.any():
        return (slice(None),) * 3
    nodes = np.argwhere(solid)
    lo, hi = nodes.min(axis=0), nodes.max(axis=0)
    for node in keep:
        lo, hi = np.minimum(lo, node), np.maximum(hi, node)
    grow = np.maximum(2, np.ceil(0.15 * (hi - lo)).astype(int))
    lo = np.maximum(lo - grow, 0)
    hi = np.minimum(hi + grow, np.array(fs.shape) - 1)
    return tuple(slice(int(a), int(b) + 1) for a, b in zip(lo, hi))


def _slice_image(ax, horizontal, vertical, values, uniform: bool, **style):
    """Node values (rows along ``vertical``) drawn at their coordinates: an image with
    bilinear smoothing on a uniform lattice, a Gouraud-shaded mesh on the node
    coordinates of a graded one (an image would spread its nodes evenly)."""
    if uniform:
        ext = [horizontal[0], horizontal[-1], vertical[0], vertical[-1]]
        return ax.imshow(values, origin="lower", extent=ext, interpolation="bilinear",
                         aspect="equal", **style)
    mesh = ax.pcolormesh(horizontal, vertical, values, shading="gouraud", **style)
    ax.set_aspect("equal")
    return mesh


def _three_panels(fig, first: int):
    """One large panel (looking along axis ``first``) on the left, two on the right;
    returns [(axes, view axis)] in that order."""
    mosaic = fig.subplot_mosaic([["a", "b"], ["a", "c"]], width_ratios=[1.0, 1.15])
    order = [first] + [a for a in (2, 1, 0) if a != first]
    return [(mosaic[key], axis) for key, axis in zip("abc", order)]


def _plane(view: int) -> tuple[int, int]:
    """(horizontal, vertical) axes of the picture looking along ``view``."""
    return {0: (1, 2), 1: (0, 2), 2: (0, 1)}[view]


def _label_axes(ax, h: int, v: int, title: str) -> None:
    # the panel's name inside it: titles above short, wide panels collide with the
    # axis label of the panel above
    ax.text(0.01, 0.98, title, transform=ax.transAxes, ha="left", va="top", fontsize=8,
            bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "none", "alpha": 0.85})
    ax.set_xlabel(f"{_AXES[h]} (mm)", fontsize=8)
    ax.set_ylabel(f"{_AXES[v]} (mm)", fontsize=8)
    ax.tick_params(labelsize=7)


def _part_handles(fs: FieldSet):
    from matplotlib.lines import Line2D

    out = []
    for n, name in enumerate(fs.parts):
        colour, style = PART_COLOURS[n % len(PART_COLOURS)], _PART_STYLES[n % len(_PART_STYLES)]
        out.append((name, colour, style, Line2D([], [], color=colour, linestyle=style, lw=1.6)))
    return out


def field_picture_png(fs: FieldSet, mode, quantity: str = "energy", title: str | None = None) -> bytes:
    """Three orthogonal slices of one mode's field through its peak, as PNG bytes.

    The large panel looks along the lattice's shortest side (:func:`flat_axis`);
    every panel shows the region around the parts (:func:`region_of_interest`).

    Parameters
    ----------
    fs : FieldSet
    mode : ModeField or int
        The mode, or its 1-based index.
    quantity : {"energy", "e", "h"}
        What to show (:func:`field_quantity`); energy density by default.
    title : str, optional
        The title (default :func:`mode_title`).

    Returns
    -------
    bytes
        A PNG image (1000 x 460 pixels).

    References
    ----------
    Crameri, F., Shephard, G. E. & Heron, P. J., "The misuse of colour in science
    communication", Nat. Commun. 11:5444, 2020 (perceptually uniform colour maps
    that read in grey, as cividis does); Nunez, J. R., Anderton, C. R. & Renslow,
    R. S., "Optimizing colormaps with consideration for color vision deficiency",
    PLoS ONE 13(7):e0199239, 2018 (cividis).
    """
    from matplotlib import patheffects
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    m = resolve_mode(fs, mode)
    values, label = field_quantity(fs, m, quantity)
    label += f" (log scale, {DYNAMIC_RANGE_DB:g} dB shown)"
    peak = peak_node(values)
    top = float(values.max()) or 1.0
    # logarithmic colours over DYNAMIC_RANGE_DB: the field at a conductor's edge peaks so
    # sharply that a linear scale shows little else
    floor = top * 10.0 ** (-DYNAMIC_RANGE_DB / (10.0 if quantity == "energy" else 20.0))
    roi = region_of_interest(fs, keep=[peak])
    axes = [1e3 * a[r] for a, r in zip((fs.x, fs.y, fs.z), roi)]      # mm
    local = [p - (r.start or 0) for p, r in zip(peak, roi)]
    values = values[roi]
    masks = [mask[roi] for mask in fs.parts.values()]
    corners = probe_corners(fs.probe)
    handles = _part_handles(fs)
    halo = [patheffects.withStroke(linewidth=3.2, foreground="white")]
    fig = Figure(figsize=(10.0, 4.6), layout="constrained")
    panels = _three_panels(fig, flat_axis(fs))
    image = None
    for ax, normal in panels:
        h, v = _plane(normal)
        cut = tuple(local[a] if a == normal else slice(None) for a in range(3))
        image = _slice_image(ax, axes[h], axes[v], np.maximum(values[cut].T, floor), fs.uniform,
                             cmap="cividis", norm=LogNorm(vmin=floor, vmax=top))
        for (_, colour, style, _), mask in zip(handles, masks):
            cut_mask = mask[cut].astype(float)
            if 0 < cut_mask.sum() < cut_mask.size and min(cut_mask.shape) > 1:
                lines = ax.contour(axes[h], axes[v], cut_mask.T, levels=[0.5], colors=[colour],
                                   linestyles=[style], linewidths=1.6)
                lines.set_path_effects(halo)
        ax.plot(axes[h][local[h]], axes[v][local[v]], marker="+", color="white", ms=10, mew=2)
        if corners is not None:
            loop = 1e3 * np.vstack([corners, corners[:1]])
            ax.plot(loop[:, h], loop[:, v], color="white", lw=2.6)
            ax.plot(loop[:, h], loop[:, v], color="black", lw=1.2)
        _label_axes(ax, h, v, f"{_AXES[normal]} = {axes[normal][local[normal]]:.3g} mm")
    _colour_bar(fig, image, [ax for ax, _ in panels], label)
    legend = [hd for *_, hd in handles]
    names = [name for name, *_ in handles]
    legend.append(Line2D([], [], color="white", marker="+", lw=0, mew=2, markeredgecolor="black"))
    names.append("peak")
    if corners is not None:
        legend.append(Line2D([], [], color="black", lw=1.2))
        names.append("probe loop (projected)")
    fig.legend(legend, names, loc="outside lower center", ncol=min(len(names), 6), fontsize=8,
               frameon=False)
    fig.suptitle(title or mode_title(m), fontsize=11)
    return _png(fig)


def _check_touch(tmap: TouchMap) -> tuple[np.ndarray, np.ndarray]:
    points = np.asarray(tmap.points, float)
    shift = np.asarray(tmap.shift_percent, float)
    if points.ndim != 2 or points.shape[1] != 3 or shift.shape != (points.shape[0],):
        raise RingprintError(f"touch map has points {points.shape} and shift_percent {shift.shape}; "
                             "give (m, 3) points and (m,) shifts")
    if points.shape[0] == 0:
        raise RingprintError("touch map has no points; there is nothing to draw")
    if not (np.all(np.isfinite(points)) and np.all(np.isfinite(shift))):
        raise RingprintError("touch map holds NaN or inf; the fields file is damaged, run the case again")
    return points, shift


def touch_map_png(fs: FieldSet, tmap: TouchMap, worst_spots=None, mode=None, mode_text=None) -> bytes:
    """The touch map seen along the three axes, as PNG bytes.

    The large panel looks along the lattice's shortest side (:func:`flat_axis`). Each
    touch point is coloured by its predicted shift (%), larger |shift| drawn on top;
    the parts' outline is grey, and the worst spots carry their rank numbers.

    Parameters
    ----------
    fs : FieldSet
        Gives the part outlines and the title.
    tmap : TouchMap
    worst_spots : list of dict, optional
        The worst spots, worst first, as :func:`ringprint.analysis.touch.worst_spots`
        gives them (modes.json ``touch.worst``); default: that function's five.
    mode : ModeField or int, optional
        The mode, for the title (``mode_text``, when given, is the title's mode part).

    Returns
    -------
    bytes
        A PNG image (1000 x 460 pixels).

    References
    ----------
    Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill, 1961
    (cavity perturbation, the basis of the shifts shown); Nunez, J. R. et al., PLoS
    ONE 13(7):e0199239, 2018 (cividis).
    """
    from matplotlib.colors import Normalize
    from matplotlib.figure import Figure

    points, shift = _check_touch(tmap)
    if worst_spots is None:
        from ringprint.analysis.touch import worst_spots as find_worst

        worst_spots = find_worst(tmap)
    spots = spot_points(worst_spots)
    lo, hi = float(shift.min()), float(shift.max())
    if hi - lo < 1e-12:
        lo, hi = lo - 0.5, hi + 0.5
    norm = Normalize(vmin=lo, vmax=hi)
    order = np.argsort(np.abs(shift), kind="stable")  # the worst drawn last, on top
    solid = fs.solid()
    axes = (1e3 * fs.x, 1e3 * fs.y, 1e3 * fs.z)
    span_lo, span_hi = 1e3 * points.min(axis=0), 1e3 * points.max(axis=0)
    pad = 0.08 * (span_hi - span_lo).max() + 1.0
    fig = Figure(figsize=(10.0, 4.6), layout="constrained")
    panels = _three_panels(fig, flat_axis(fs))
    sc = None
    for ax, view in panels:
        h, v = _plane(view)
        shadow = solid.any(axis=view).astype(float)
        if 0 < shadow.sum() < shadow.size and min(shadow.shape) > 1:
            ax.contour(axes[h], axes[v], shadow.T, levels=[0.5], colors=["0.6"], linewidths=1.0)
        sc = ax.scatter(1e3 * points[order, h], 1e3 * points[order, v], c=shift[order],
                        cmap="cividis", norm=norm, s=14, edgecolors="none")
        for rank, spot in enumerate(spots, start=1):
            px, py = 1e3 * spot[h], 1e3 * spot[v]
            ax.plot(px, py, marker="o", ms=9, mfc="none", mec="black", mew=1.2)
            ax.annotate(str(rank), (px, py), xytext=(5, 5), textcoords="offset points", fontsize=8,
                        fontweight="bold", color="black",
                        bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.8})
        ax.set_xlim(span_lo[h] - pad, span_hi[h] + pad)
        ax.set_ylim(span_lo[v] - pad, span_hi[v] + pad)
        ax.set_aspect("equal", adjustable="box")
        _label_axes(ax, h, v, f"seen along {_AXES[view]}")
    _colour_bar(fig, sc, [ax for ax, _ in panels], "frequency shift (%)")
    title = "touch map: predicted shift when a fingertip touches"
    if mode is not None:
        title = f"{mode_text or mode_title(resolve_mode(fs, mode))} - {title}"
    fig.suptitle(title, fontsize=11)
    return _png(fig)
