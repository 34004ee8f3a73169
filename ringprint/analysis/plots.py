"""The spectrum picture of a run: probe spectrum, band shading, one marker per mode.

Input (see :mod:`ringprint.analysis.report` for the whole data model): a
``spectrum`` mapping in one of two forms --

- ``{"frequency_hz": 1-D array, "magnitude_db": 1-D array}``: a spectrum already
  computed, frequencies strictly increasing in Hz, magnitudes in dB (any reference);
- ``{"record": array, "dt_s": float, "start_index": int (optional, default 0)}``:
  the probe time record(s), shape ``(n_samples,)`` or ``(n_pickups, n_samples)``,
  sampled every ``dt_s`` seconds; ``start_index`` is the first sample after the
  source has died away. :func:`spectrum_from_record` turns it into the first form.

Pictures are drawn on a bare :class:`matplotlib.figure.Figure` rendered by the Agg
canvas: no display and no global pyplot state are needed. Colours come from the
cividis map (readable in grey and by colour-blind readers) and every band also has
its own hatch, so nothing depends on telling hues apart.
"""

from __future__ import annotations

import io
import os
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np
import scipy.fft
import scipy.signal

from ringprint.analysis.outputs import atomic_write_bytes
from ringprint.analysis.results import frequency_text, q_text
from ringprint.errors import RingprintError

__all__ = ["spectrum_from_record", "check_spectrum", "render_spectrum_png",
           "write_spectrum_png", "frequency_unit", "shade_bands"]

#: Spectra are shown down to this many dB below their peak.
DYNAMIC_RANGE_DB = 100.0

_HATCHES = ("//", "\\\\", "xx", "..", "||", "--", "++", "oo")
_STATUS_STYLE = {  # marker face colour by the worst band status of a mode (grey levels)
    "inside": ("black", "inside a band"),
    "near": ("0.55", "near a band"),
    "clear": ("white", "clear of bands"),
}


def frequency_unit(hz: float) -> tuple[float, str]:
    """The scale and unit name (Hz, kHz, MHz, GHz) that suit a frequency ``hz``."""
    for scale, name in ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")):
        if abs(hz) >= scale:
            return scale, name
    return 1.0, "Hz"


def spectrum_from_record(record, dt_s: float, start_index: int = 0, pad_factor: int = 4,
                         window: str = "hann") -> tuple[np.ndarray, np.ndarray]:
    """Magnitude spectrum (dB re peak) of the post-source part of a probe record.

    The samples from ``start_index`` on are multiplied by a window, zero-padded to
    at least ``pad_factor`` times their length (a fast FFT size) and transformed
    with a real FFT. Several pickups (rows) are combined by summing their power
    spectra, so that a mode one pickup misses still shows. The result is
    ``20 log10(|X| / max|X|)``, floored at ``-DYNAMIC_RANGE_DB - 20`` dB.

    Parameters
    ----------
    record : array_like, shape (n_samples,) or (n_pickups, n_samples)
        Probe time record(s), real.
    dt_s : float
        Sample interval in seconds.
    start_index : int
        First sample to use (after the source has died away).
    pad_factor : int
        Zero-padding factor (>= 1); padding interpolates the spectrum, it adds no
        resolution.
    window : str
        Any window name :func:`scipy.signal.get_window` knows.

    Returns
    -------
    frequency_hz, magnitude_db : ndarray
        Frequencies from 0 to the Nyquist frequency, and the magnitude in dB.

    Raises
    ------
    RingprintError
        If the record is not real and finite, is too short, or ``dt_s`` is not a
        positive number.

    References
    ----------
    Harris, F. J., "On the use of windows for harmonic analysis with the discrete
    Fourier transform", Proc. IEEE 66(1):51-83, 1978.
    """
    data = np.asarray(record)
    if data.ndim == 1:
        data = data[None, :]
    if data.ndim != 2 or not np.isrealobj(data) or not np.issubdtype(data.dtype, np.number):
        raise RingprintError(
            f"spectrum record has shape {np.shape(record)} and type {data.dtype}; "
            "give real samples shaped (n_samples,) or (n_pickups, n_samples)")
    if not (np.isscalar(dt_s) and np.isfinite(dt_s) and dt_s > 0):
        raise RingprintError(f"spectrum dt_s = {dt_s!r}; give the sample interval in seconds (> 0)")
    if not (isinstance(start_index, (int, np.integer)) and 0 <= start_index):
        raise RingprintError(f"spectrum start_index = {start_index!r}; give a sample index >= 0")
    if not (isinstance(pad_factor, (int, np.integer)) and pad_factor >= 1):
        raise RingprintError(f"spectrum pad_factor = {pad_factor!r}; give an integer >= 1")
    tail = np.asarray(data[:, start_index:], dtype=np.float64)
    n = tail.shape[1]
    if n < 8:
        raise RingprintError(
            f"spectrum record has {n} samples after start_index {start_index}; "
            "give at least 8 samples after the source has died away")
    if not np.all(np.isfinite(tail)):
        raise RingprintError("spectrum record contains NaN or inf; the run diverged "
                             "or the record was not filled, check the solver log")
    tail = tail - tail.mean(axis=1, keepdims=True)
    n_fft = scipy.fft.next_fast_len(pad_factor * n, real=True)
    taper = scipy.signal.get_window(window, n, fftbins=False)
    power = np.sum(np.abs(scipy.fft.rfft(tail * taper, n=n_fft, axis=1)) ** 2, axis=0)
    freq = scipy.fft.rfftfreq(n_fft, d=dt_s)
    peak = power.max()
    floor_db = -DYNAMIC_RANGE_DB - 20.0
    if peak <= 0:
        return freq, np.full(freq.shape, floor_db)
    with np.errstate(divide="ignore"):
        mag_db = 10.0 * np.log10(power / peak)
    return freq, np.maximum(mag_db, floor_db)


def check_spectrum(spectrum: Mapping) -> tuple[np.ndarray, np.ndarray]:
    """Validate a ``spectrum`` mapping (either form) and return (frequency_hz, dB).

    Raises
    ------
    RingprintError
        Naming the key that is missing or wrong and the fix.
    """
    if not isinstance(spectrum, Mapping):
        raise RingprintError(
            f"spectrum is a {type(spectrum).__name__}; give a dict with 'frequency_hz' and "
            "'magnitude_db', or with 'record' and 'dt_s'")
    if "record" in spectrum:
        if "dt_s" not in spectrum:
            raise RingprintError("spectrum has 'record' but no 'dt_s'; add the sample interval in s")
        return spectrum_from_record(spectrum["record"], spectrum["dt_s"],
                                    spectrum.get("start_index", 0))
    for key in ("frequency_hz", "magnitude_db"):
        if key not in spectrum:
            raise RingprintError(
                f"spectrum has no '{key}'; give 'frequency_hz' and 'magnitude_db' arrays, "
                "or 'record' and 'dt_s'")
    try:
        freq = np.asarray(spectrum["frequency_hz"], dtype=np.float64)
        mag = np.asarray(spectrum["magnitude_db"], dtype=np.float64)
    except (TypeError, ValueError):
        raise RingprintError("spectrum 'frequency_hz'/'magnitude_db' are not numeric arrays; "
                             "give real 1-D arrays") from None
    if freq.ndim != 1 or mag.shape != freq.shape or freq.size < 2:
        raise RingprintError(
            f"spectrum frequency_hz has shape {freq.shape} and magnitude_db {mag.shape}; "
            "give two 1-D arrays of the same length (>= 2)")
    if not (np.all(np.isfinite(freq)) and np.all(np.diff(freq) > 0)):
        raise RingprintError("spectrum frequency_hz is not finite and strictly increasing; "
                             "sort it and drop repeated or NaN entries")
    if np.any(np.isnan(mag)) or np.any(mag == np.inf):
        raise RingprintError("spectrum magnitude_db contains NaN or +inf; give finite dB values "
                             "(-inf for exact zeros is accepted)")
    return freq, mag


def _band_limits(bands: Sequence[Mapping]) -> list[tuple[str, float, float]]:
    return [(str(b["name"]), float(b["low_hz"]), float(b["high_hz"])) for b in bands]


def _default_limits(freq: np.ndarray, modes, bands) -> tuple[float, float]:
    """The modes and bands with 20 % room on each side, within the spectrum's span;
    the whole span when there is neither."""
    marks = [float(m["frequency_hz"]) for m in modes]
    marks += [float(b[k]) for b in bands for k in ("low_hz", "high_hz")]
    if not marks:
        return float(freq[0]), float(freq[-1])
    lo, hi = max(0.8 * min(marks), float(freq[0])), min(1.2 * max(marks), float(freq[-1]))
    return (lo, hi) if hi > lo else (float(freq[0]), float(freq[-1]))


def _worst_status(mode: Mapping) -> str:
    statuses = {entry.get("status") for entry in mode.get("bands", [])}
    for status in ("inside", "near"):
        if status in statuses:
            return status
    return "clear"


def shade_bands(ax, bands: Sequence[Mapping], scale: float) -> list:
    """Shade each band on ``ax`` (frequencies divided by ``scale``), its own hatch and
    cividis tone; returns the legend handles."""
    import matplotlib
    from matplotlib.patches import Patch

    cmap = matplotlib.colormaps["cividis"]
    handles = []
    for k, (name, b_lo, b_hi) in enumerate(_band_limits(bands)):
        colour = cmap(0.25 + 0.5 * (k % 4) / 3.0)
        hatch = _HATCHES[k % len(_HATCHES)]
        ax.axvspan(b_lo / scale, b_hi / scale, facecolor=colour, alpha=0.22,
                   edgecolor="0.3", hatch=hatch, linewidth=0.6, zorder=0)
        handles.append(Patch(facecolor=colour, alpha=0.4, edgecolor="0.3", hatch=hatch,
                             label=f"band {name}"))
    return handles


def render_spectrum_png(freq_hz, mag_db, modes: Sequence[Mapping] = (),
                        bands: Sequence[Mapping] = (), limits_hz: tuple[float, float] | None = None,
                        title: str = "", dpi: int = 110,
                        db_reference: str = "its peak at any frequency") -> bytes:
    """Draw the spectrum with band shading and mode markers; return PNG bytes.

    Parameters
    ----------
    freq_hz, mag_db : ndarray
        The spectrum (see :func:`check_spectrum`).
    modes : sequence of dict
        Modes with at least ``"index"`` and ``"frequency_hz"``; the optional
        ``"bands"`` entries choose the marker fill (black inside a band, grey near
        one, white clear of all).
    bands : sequence of dict
        Bands ``{"name", "low_hz", "high_hz", ...}``, drawn as hatched shading.
    limits_hz : (float, float), optional
        Frequency axis limits; default: the modes and bands with 20 % room on each
        side (within the span of ``freq_hz``), or that whole span if there are none.
    title : str
        Plot title.
    dpi : int
        Resolution of the PNG (the figure is 9 x 4.8 inches).
    db_reference : str
        What 0 dB is, for the axis label (default: the peak of the whole spectrum, as
        :func:`spectrum_from_record` scales it; it may lie outside the limits shown).

    Returns
    -------
    bytes
        A PNG image.
    """
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    freq = np.asarray(freq_hz, dtype=np.float64)
    mag = np.asarray(mag_db, dtype=np.float64)
    if limits_hz is None:
        lo, hi = _default_limits(freq, modes, bands)
    else:
        lo, hi = map(float, limits_hz)
    if not hi > lo:
        raise RingprintError(f"spectrum limits {lo!r}..{hi!r} Hz are empty; give low < high")
    scale, unit = frequency_unit(hi)
    shown = (freq >= lo) & (freq <= hi)
    finite = shown & np.isfinite(mag)
    top = float(mag[finite].max()) if finite.any() else 0.0
    bottom = max(float(mag[finite].min()) if finite.any() else top - 1.0, top - DYNAMIC_RANGE_DB)
    span = max(top - bottom, 1.0)
    y_lo, y_hi = bottom - 0.05 * span, top + 0.42 * span   # room for the mode labels

    fig = Figure(figsize=(9.0, 4.8), dpi=dpi, layout="constrained")
    ax = fig.add_subplot()
    band_list = _band_limits(bands)
    handles = shade_bands(ax, bands, scale)
    _name_bands(ax, band_list, lo, hi, scale)
    ax.plot(freq[shown] / scale, np.clip(mag[shown], y_lo, None), color="black",
            linewidth=1.1, zorder=2)
    handles.insert(0, Line2D([], [], color="black", linewidth=1.1, label="probe spectrum"))

    used_status = set()
    last_x, level = None, 0
    for mode in sorted(modes, key=lambda m: float(m["frequency_hz"])):
        f = float(mode["frequency_hz"])
        if not lo <= f <= hi:
            continue
        status = _worst_status(mode)
        used_status.add(status)
        face = _STATUS_STYLE[status][0]
        y = float(np.interp(f, freq, np.nan_to_num(mag, neginf=y_lo)))
        y_mark = min(max(y, y_lo), top) + 0.06 * span
        ax.axvline(f / scale, color="0.35", linestyle=":", linewidth=0.8, zorder=1)
        ax.plot([f / scale], [y_mark], marker="v", markersize=8, markerfacecolor=face,
                markeredgecolor="black", linestyle="none", zorder=3)
        # f and Q at the marker, written as every table writes them; neighbours alternate
        # between two heights so that close modes stay readable
        close = last_x is not None and (f - last_x) / (hi - lo) < 0.12
        level = (1 - level) if close else 0
        last_x = f
        ax.annotate(f"{mode['index']}: {frequency_text(mode, False)}\nQ {q_text(mode, False)}",
                    (f / scale, y_mark), xytext=(0, 7 + 20 * level), textcoords="offset points",
                    ha="center", va="bottom", fontsize=7, linespacing=1.0)
    for status in ("inside", "near", "clear"):
        if status in used_status:
            face, label = _STATUS_STYLE[status]
            handles.append(Line2D([], [], marker="v", markersize=8, markerfacecolor=face,
                                  markeredgecolor="black", linestyle="none",
                                  label=f"mode, {label}"))

    ax.set_xlim(lo / scale, hi / scale)
    ax.set_ylim(y_lo, y_hi)
    ax.set_xlabel(f"frequency ({unit})")
    ax.set_ylabel(f"probe spectrum (dB re {db_reference})")
    if title:
        ax.set_title(title)
    ax.grid(True, color="0.85", linewidth=0.6)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0),
              fontsize=8, frameon=False)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
    return buf.getvalue()


def _name_bands(ax, bands, lo: float, hi: float, scale: float) -> None:
    """Each band's name, upright at the top of its shading; a name that would touch the
    previous one moves right until it is clear."""
    last = None
    for name, b_lo, b_hi in sorted(bands, key=lambda b: b[1]):
        centre = (max(b_lo, lo) + min(b_hi, hi)) / 2
        if not lo <= centre <= hi:
            continue
        x = (centre - lo) / (hi - lo)
        if last is not None and x - last < 0.022:
            x = last + 0.022
        last = x
        ax.text(x, 0.99, name, transform=ax.transAxes, rotation=90, ha="center", va="top",
                fontsize=7, color="0.15", zorder=4,
                bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.7, "pad": 1.0})


def write_spectrum_png(path: str | os.PathLike, spectrum: Mapping,
                       modes: Sequence[Mapping] = (), bands: Sequence[Mapping] = (),
                       limits_hz: tuple[float, float] | None = None, title: str = "") -> Path:
    """Validate ``spectrum``, render it (:func:`render_spectrum_png`) and write the PNG
    atomically to ``path`` (a file, or a directory to hold ``spectrum.png``)."""
    target = Path(path)
    if target.is_dir():
        target = target / "spectrum.png"
    freq, mag = check_spectrum(spectrum)
    png = render_spectrum_png(freq, mag, modes, bands, limits_hz, title)
    return atomic_write_bytes(target, png)
