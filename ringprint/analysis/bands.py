"""Operating bands: presets from open standards, and the judgement of modes against bands.

Presets live in ``data/bands.toml`` (3GPP LTE and NR bands, GNSS signals, Wi-Fi, ISM,
UWB); each names its document, and edges recalled from memory are marked so there.
A paired (FDD) preset ``lte-b7`` expands to ``lte-b7-ul`` and ``lte-b7-dl``; groups
(``gnss``, ``wifi``, ``uwb``) select several presets.

Judgement of a mode (f, Q) against a band [low, high]
-----------------------------------------------------
- ``gap``: distance from f to the nearest band edge, negative inside the band.
  ``distance_percent = 100 gap / f`` (relative to the mode, because a detuning moves
  the mode by a fraction of its own frequency).
- ``inside`` when low <= f <= high.
- ``near`` when outside and ``gap <= f max(margin, 1/Q)``: a detuning of ``margin``
  (hand, production tolerance) would pull the mode onto the band edge, or the edge
  lies within the mode's half-power bandwidth ``f/Q`` (where its Lorentzian response
  is still above 1/5 of the peak, -7 dB).
- ``clear`` otherwise.

The default margin is 3 % (:data:`DEFAULT_MARGIN`). Why (common practice): moulded
plastics and laminates vary by about +-5 to 10 % in eps_r between grades and lots, which
moves a mode whose field lies mostly in them by about half that (2.5-5 %); a hand or
table close to the product pulls resonances down by a few percent. 3 % is the middle
of that range; set ``[analysis] detuning_margin`` for another.

Ranking rule (worst first), see :func:`rank_hazards`
----------------------------------------------------
1. status: inside, then near, then clear;
2. ``overlap`` descending: the fraction of the mode's Lorentzian power spectrum
   (centre f, half-power full width f/Q) that falls inside the band,
   ``[atan((high-f)/g) - atan((low-f)/g)] / pi`` with ``g = f/(2Q)``. Inside a band
   it grows with depth and with sharpness (a sharp mode deep inside absorbs all its
   energy in-band); outside it falls with distance and sharpness;
3. ``distance_percent`` ascending (deeper inside, or closer outside, first);
4. Q descending (the sharper mode first).
"""

from __future__ import annotations

import difflib
import functools
import tomllib
from dataclasses import dataclass
from importlib import resources
from typing import NamedTuple

import numpy as np

from ringprint.errors import RingprintError

__all__ = ["Band", "BandJudgement", "DEFAULT_MARGIN", "INSIDE", "NEAR", "CLEAR",
           "STATUS_NAMES", "preset_names", "preset_bands", "preset_renamed", "judge",
           "rank_hazards"]

#: Default detuning margin as a fraction (3 %; see the module docstring for why).
DEFAULT_MARGIN = 0.03

INSIDE, NEAR, CLEAR = 0, 1, 2
STATUS_NAMES = ("inside", "near", "clear")


@dataclass(frozen=True)
class Band:
    """An operating band [low_hz, high_hz] with a name and the document it comes from."""

    name: str
    low_hz: float
    high_hz: float
    source: str = ""

    def __post_init__(self):
        lo, hi = float(self.low_hz), float(self.high_hz)
        if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi):
            raise RingprintError(f"band {self.name!r}: need 0 < low < high, got "
                                 f"low = {self.low_hz!r} Hz, high = {self.high_hz!r} Hz")
        object.__setattr__(self, "low_hz", lo)
        object.__setattr__(self, "high_hz", hi)


def _bands_of(name: str, table: dict) -> tuple[Band, ...]:
    source = table["source"] + (" (edges from memory)" if table.get("from_memory") else "")

    def mhz(lo, hi):  # edges rounded to the hertz to drop the MHz -> Hz float noise
        return round(lo * 1e6), round(hi * 1e6)

    if "uplink" in table:
        (ul_lo, ul_hi), (dl_lo, dl_hi) = table["uplink"], table["downlink"]
        return (Band(f"{name}-ul", *mhz(ul_lo, ul_hi), source),
                Band(f"{name}-dl", *mhz(dl_lo, dl_hi), source))
    if "range" in table:
        lo, hi = table["range"]
        return (Band(name, *mhz(lo, hi), source),)
    centre, width = table["centre"], table["bandwidth"]
    return (Band(name, *mhz(centre - width / 2, centre + width / 2), source),)


@functools.cache
def _presets() -> dict[str, tuple[Band, ...]]:
    text = resources.files("ringprint.analysis").joinpath("data/bands.toml").read_text("utf-8")
    data = tomllib.loads(text)
    out: dict[str, tuple[Band, ...]] = {}
    for name, table in data["preset"].items():
        bands = _bands_of(name, table)
        out[name] = bands
        if len(bands) > 1:
            for band in bands:
                out[band.name] = (band,)
    for name, table in data["group"].items():
        out[name] = tuple(b for member in table["members"] for b in out[member])
    return out


@functools.cache
def _aliases() -> dict[str, str]:
    """Old preset name -> its name now (``"wifi-5g"`` -> ``"wifi-5ghz"``)."""
    text = resources.files("ringprint.analysis").joinpath("data/bands.toml").read_text("utf-8")
    return {old: name for name, table in tomllib.loads(text)["preset"].items()
            for old in table.get("aliases", [])}


def preset_renamed(name: str) -> str | None:
    """The name a renamed preset has now, or None when ``name`` is not an old name."""
    return _aliases().get(str(name).strip().lower())


def preset_names() -> tuple[str, ...]:
    """Every name a case file may select: presets, their -ul/-dl halves and groups."""
    return tuple(sorted(_presets()))


def preset_bands(name: str) -> tuple[Band, ...]:
    """The bands a preset name selects (a paired band gives its uplink and downlink).

    Raises
    ------
    RingprintError
        For an unknown name, with the closest known names.
    """
    presets = _presets()
    key = str(name).strip().lower()
    key = _aliases().get(key, key)
    if key in presets:
        return presets[key]
    close = difflib.get_close_matches(key, list(presets), n=3)
    hint = f"did you mean {' or '.join(repr(c) for c in close)}?" if close else \
        "see ringprint.analysis.bands.preset_names() for the list"
    raise RingprintError(f"unknown band preset {name!r}; {hint} (or describe it as "
                         "[[band]] name, low, high)")


class BandJudgement(NamedTuple):
    """Every mode against every band; arrays shaped (n_modes, n_bands)."""

    status: np.ndarray            #: INSIDE / NEAR / CLEAR (int8)
    distance_percent: np.ndarray  #: 100 * gap / f, negative inside
    overlap: np.ndarray           #: fraction of the mode's Lorentzian inside the band
    q: np.ndarray                 #: the modes' Q, broadcast to the same shape


def _vector(value, what: str) -> np.ndarray:
    arr = np.atleast_1d(np.asarray(value, dtype=float))
    if arr.ndim != 1:
        raise RingprintError(f"{what} must be a scalar or a 1-D array, got shape {arr.shape}")
    return arr


def judge(frequency_hz, q, low_hz, high_hz, margin: float = DEFAULT_MARGIN) -> BandJudgement:
    """Judge modes against bands: inside, near or clear, with distance and overlap.

    Parameters
    ----------
    frequency_hz, q : array_like, shape (n_modes,)
        Mode frequencies (> 0, Hz) and quality factors (> 0; ``inf`` allowed).
    low_hz, high_hz : array_like, shape (n_bands,)
        Band edges, ``0 < low < high``.
    margin : float
        Detuning margin as a fraction, ``0 <= margin < 1``.

    Returns
    -------
    BandJudgement
        Arrays of shape (n_modes, n_bands); see the module docstring for the rules.
    """
    f, qq = _vector(frequency_hz, "frequency_hz"), _vector(q, "q")
    lo, hi = _vector(low_hz, "low_hz"), _vector(high_hz, "high_hz")
    if f.shape != qq.shape or lo.shape != hi.shape:
        raise RingprintError("frequency_hz and q must have one shape, and so must low_hz and high_hz")
    if not (np.all(np.isfinite(f)) and np.all(f > 0)):
        raise RingprintError("mode frequencies must be finite and > 0 Hz")
    if not np.all(qq > 0):
        raise RingprintError("mode Q values must be > 0")
    if not (np.all(np.isfinite(hi)) and np.all(lo > 0) and np.all(lo < hi)):
        raise RingprintError("every band needs 0 < low < high (Hz)")
    if not 0 <= margin < 1:
        raise RingprintError(f"detuning margin must be a fraction in [0, 1), got {margin!r}")
    f, qq, lo, hi = f[:, None], qq[:, None], lo[None, :], hi[None, :]
    below, above = lo - f, f - hi
    inside = (below <= 0) & (above <= 0)
    gap = np.maximum(below, above)  # > 0 outside; inside: minus the depth to the nearer edge
    reach = f * np.maximum(margin, 1.0 / qq)
    status = np.where(inside, INSIDE, np.where(gap <= reach, NEAR, CLEAR)).astype(np.int8)
    half_width = f / (2.0 * qq)
    with np.errstate(divide="ignore", invalid="ignore"):
        overlap = (np.arctan((hi - f) / half_width) - np.arctan((lo - f) / half_width)) / np.pi
    overlap = np.where(half_width == 0, inside.astype(float), overlap)
    return BandJudgement(status, 100.0 * gap / f, overlap, np.broadcast_to(qq, status.shape))


def rank_hazards(judgement: BandJudgement, include_clear: bool = False) -> np.ndarray:
    """Order (mode, band) pairs worst first.

    Parameters
    ----------
    judgement : BandJudgement
        From :func:`judge`.
    include_clear : bool
        Also list the ``clear`` pairs (at the end).

    Returns
    -------
    ndarray of int, shape (k, 2)
        Rows ``(mode_index, band_index)``, sorted by the ranking rule of the module
        docstring: status, then overlap (descending), then distance, then Q (descending).
    """
    status = judgement.status.ravel()
    order = np.lexsort((-judgement.q.ravel(), judgement.distance_percent.ravel(),
                        -judgement.overlap.ravel(), status))
    if not include_clear:
        order = order[status[order] != CLEAR]
    modes, bands = np.unravel_index(order, judgement.status.shape)
    return np.stack([modes, bands], axis=1).astype(np.intp)
