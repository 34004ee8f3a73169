"""Pictures of |S11| (dB) against frequency: the probe's simulated trace in the run
report, and the measured trace over the simulated one in the bench comparison.

Drawn like the spectrum picture (:mod:`ringprint.analysis.plots`): a bare Agg
figure, bands shaded with their own hatch, traces told apart by line style as well
as grey level, numbered markers at the modes.
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ringprint.analysis.plots import frequency_unit, shade_bands

#: The |S11| axis spans at least this many dB (a weakly coupled probe dips by hundredths).
MIN_RANGE_DB = 0.02


@dataclass(frozen=True)
class Trace:
    """One |S11| curve: label, frequencies (Hz), dB values, line style and grey level."""

    label: str
    f_hz: np.ndarray
    db: np.ndarray
    style: str = "-"
    grey: str = "black"


@dataclass(frozen=True)
class Marks:
    """Numbered markers for one trace: ``(label, frequency_hz)`` pairs, marker shape, and
    whether they sit along the top of the picture (else just below the trace)."""

    trace: int
    points: Sequence[tuple[str, float]]
    marker: str = "v"
    top: bool = False


def render_s11_png(traces: Sequence[Trace], marks: Sequence[Marks] = (),
                   bands: Sequence[Mapping] = (), title: str = "", dpi: int = 110) -> bytes:
    """Draw |S11| traces with band shading and numbered marks; return PNG bytes.

    The frequency axis spans all traces; bands outside it are not drawn.
    """
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    lo = min(float(t.f_hz[0]) for t in traces)
    hi = max(float(t.f_hz[-1]) for t in traces)
    scale, unit = frequency_unit(hi)
    fig = Figure(figsize=(9.0, 4.8), dpi=dpi, layout="constrained")
    ax = fig.add_subplot()
    shown = [b for b in bands if float(b["high_hz"]) >= lo and float(b["low_hz"]) <= hi]
    handles = shade_bands(ax, shown, scale)
    low_db, high_db = np.inf, -np.inf
    for k, t in enumerate(traces):
        db = np.asarray(t.db, float)
        ax.plot(np.asarray(t.f_hz) / scale, db, color=t.grey, linestyle=t.style, linewidth=1.2,
                zorder=2 + k)
        handles.insert(k, Line2D([], [], color=t.grey, linestyle=t.style, linewidth=1.2,
                                 label=t.label))
        low_db, high_db = min(low_db, float(np.min(db))), max(high_db, float(np.max(db)))
    high_db = max(high_db, 0.0)
    low_db = min(low_db, high_db - MIN_RANGE_DB)
    span = high_db - low_db
    for m in marks:
        t = traces[m.trace]
        for label, f in m.points:
            if not float(t.f_hz[0]) <= f <= float(t.f_hz[-1]):
                continue
            y = high_db + 0.04 * span if m.top else float(np.interp(f, t.f_hz, t.db)) - 0.06 * span
            ax.plot([f / scale], [y], marker=m.marker, markersize=7, markerfacecolor="white",
                    markeredgecolor=t.grey, linestyle="none", zorder=6)
            if m.top:
                ax.axvline(f / scale, color=t.grey, linestyle=":", linewidth=0.7, zorder=1)
            ax.annotate(str(label), (f / scale, y), xytext=(0, 7 if m.top else -9),
                        textcoords="offset points", ha="center", va="bottom" if m.top else "top",
                        fontsize=8)
    ax.set_xlim(lo / scale, hi / scale)
    ax.set_ylim(low_db - 0.15 * span, high_db + 0.15 * span)
    ax.set_xlabel(f"frequency ({unit})")
    ax.set_ylabel("|S11| (dB)")
    if title:
        ax.set_title(title)
    ax.grid(True, color="0.85", linewidth=0.6)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
              frameon=False)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
    return buf.getvalue()
