"""Numbers as people read them in ringprint's tables and reports.

Frequencies in Hz/kHz/MHz/GHz with as many digits as their error supports, Q with
three significant digits, a value with its uncertainty to the digits the uncertainty
supports (``"977.2 ± 6.5 MHz"``, ``"43 ± 3"``: :func:`round_with_uncertainty`), relative errors in ppm or %, sizes in KiB/MiB/GiB and
durations in s/min/h. Every function takes SI values and returns a short string;
``None`` or NaN becomes ``"-"``.
"""

from __future__ import annotations

import math

__all__ = ["format_frequency", "format_q", "format_error", "format_percent",
           "format_sci", "format_number", "format_si", "format_bytes", "format_duration", "significant",
           "round_with_uncertainty", "format_frequency_pm", "format_frequency_as_pm", "format_q_pm",
           "format_like"]

MISSING = "-"


def _missing(x) -> bool:
    return x is None or (isinstance(x, float) and math.isnan(x))


def significant(x: float, digits: int) -> str:
    """``x`` rounded to ``digits`` significant digits, written without an exponent."""
    x = float(x)
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    exponent = math.floor(math.log10(abs(x)))
    rounded = round(x, digits - 1 - exponent)
    exponent = math.floor(math.log10(abs(rounded))) if rounded else exponent
    decimals = max(digits - 1 - exponent, 0)
    return f"{rounded:.{decimals}f}"


def format_frequency(hz, rel_error=None, digits: int | None = None, trim: bool = False) -> str:
    """A frequency with a unit, e.g. ``"1.575420 GHz"`` or ``"845.2 MHz"``.

    Parameters
    ----------
    hz : float
        Frequency in Hz.
    rel_error : float, optional
        Relative error of ``hz``; the number of significant digits is chosen so the
        last digit is about the size of the error (4 to 9 digits). Without it,
        ``digits`` (default 5) are shown.
    digits : int, optional
        Significant digits, overriding ``rel_error``.
    trim : bool
        Drop trailing zeros (``"700 MHz"`` instead of ``"700.00 MHz"``).
    """
    if _missing(hz):
        return MISSING
    hz = float(hz)
    if digits is None:
        if rel_error is not None and not _missing(rel_error) and rel_error > 0:
            digits = min(max(math.ceil(-math.log10(float(rel_error))) + 1, 4), 9)
        else:
            digits = 5
    for scale, unit in ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz"), (1.0, "Hz")):
        if abs(hz) >= scale or scale == 1.0:
            text = significant(hz / scale, digits)
            if trim and "." in text:
                text = text.rstrip("0").rstrip(".")
            return f"{text} {unit}"
    raise AssertionError("unreachable")  # pragma: no cover


def round_with_uncertainty(x: float, u: float) -> tuple[str, str, int]:
    """``x`` and its uncertainty ``u > 0`` as text, to the digits ``u`` supports.

    ``u`` keeps one significant digit, two when that digit would be 1 (common
    practice), and is rounded *up* so the printed uncertainty is never smaller than
    ``u``; ``x`` is rounded to the same decimal place, so the printed ``x`` lies within
    half a unit of that place, less than ``u``, of ``x``. Returns
    ``(x_text, u_text, decimals)``; ``decimals`` is negative when the place lies left of
    the decimal point (``round_with_uncertainty(12345, 300) == ("12300", "300", -2)``).
    """
    x, u = float(x), float(u)
    if not (math.isfinite(x) and math.isfinite(u) and u > 0):
        raise ValueError(f"need a finite value and a positive uncertainty, got {x!r} +- {u!r}")
    place = math.floor(math.log10(u))
    if u / 10.0 ** place < 2.0:
        place -= 1
    steps = math.ceil(u / 10.0 ** place * (1 - 1e-12))        # u rounded up, in units of the place
    if steps == 20:                                              # 0.196 -> 0.2, not 0.20
        place, steps = place + 1, 2
    decimals = -place
    if decimals > 0:
        return f"{round(x, decimals):.{decimals}f}", f"{steps * 10.0 ** place:.{decimals}f}", decimals
    scale = 10 ** place
    return str(int(round(x / scale)) * scale), str(steps * scale), decimals


def _frequency_unit(hz: float) -> tuple[float, str]:
    for scale, unit in ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")):
        if abs(hz) >= scale:
            return scale, unit
    return 1.0, "Hz"


def format_frequency_pm(hz, u_hz=None, rel_error=None) -> str:
    """A frequency with its uncertainty, ``"2.410 ± 0.012 GHz"``.

    Without a usable uncertainty (None, NaN, not positive) the frequency is written by
    :func:`format_frequency` with ``rel_error`` alone.
    """
    if _missing(hz):
        return MISSING
    if _missing(u_hz) or not float(u_hz) > 0:
        return format_frequency(hz, rel_error)
    scale, unit = _frequency_unit(float(hz))
    value, unc, _ = round_with_uncertainty(float(hz) / scale, float(u_hz) / scale)
    return f"{value} \u00b1 {unc} {unit}"


def format_frequency_as_pm(hz, u_hz=None, rel_error=None) -> str:
    """The frequency alone, rounded exactly as :func:`format_frequency_pm` rounds it
    (``"2.410 GHz"`` for ``2.410 ± 0.012 GHz``): for plots and sentences where the
    uncertainty is said elsewhere, so one mode reads the same everywhere."""
    text = format_frequency_pm(hz, u_hz, rel_error)
    if " \u00b1 " not in text:
        return text
    value, rest = text.split(" \u00b1 ", 1)
    return f"{value} {rest.split(' ', 1)[1]}"


def format_q_pm(q, u_q=None) -> str:
    """Q with its uncertainty, ``"43 ± 3"``; :func:`format_q` without one."""
    if _missing(q):
        return MISSING
    if _missing(u_q) or not float(u_q) > 0 or math.isinf(float(q)):
        return format_q(q)
    value, unc, _ = round_with_uncertainty(float(q), float(u_q))
    return f"{value} \u00b1 {unc}"


def format_like(x, rel_u) -> str:
    """``x`` alone, to the digits a relative uncertainty ``rel_u`` supports (a ratio such
    as Q / Q_Chu, which carries the relative uncertainty of Q); three significant
    digits without one."""
    if _missing(x):
        return MISSING
    if _missing(rel_u) or not float(rel_u) > 0 or float(x) == 0:
        return format_q(x)
    return round_with_uncertainty(float(x), abs(float(x)) * float(rel_u))[0]


def format_q(q) -> str:
    """Q with three significant digits: ``"0.866"``, ``"43.2"``, ``"1230"``, ``"4.57e6"``."""
    if _missing(q):
        return MISSING
    q = float(q)
    if math.isinf(q):
        return "inf"
    if abs(q) >= 1e6:
        return format_sci(q, 3)
    return significant(q, 3)


def format_error(rel) -> str:
    """A relative error in ppm below 1e-3 (``"0.34 ppm"``), else in % (``"1.2 %"``)."""
    if _missing(rel):
        return MISSING
    rel = abs(float(rel))
    if rel < 1e-3:
        return f"{significant(rel * 1e6, 2)} ppm"
    return f"{significant(rel * 100.0, 2)} %"


def format_percent(value) -> str:
    """A value already in percent, two significant digits (``"3.2 %"``, ``"0 %"``)."""
    if _missing(value):
        return MISSING
    return f"{significant(float(value), 2)} %"


def format_sci(x, digits: int = 3) -> str:
    """Scientific notation with a short exponent: ``"1.23e7"``, ``"-4.50e-3"``."""
    if _missing(x):
        return MISSING
    x = float(x)
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    mantissa, exponent = f"{x:.{digits - 1}e}".split("e")
    exponent = int(exponent)
    return mantissa if exponent == 0 else f"{mantissa}e{exponent}"


def format_number(x, digits: int = 3) -> str:
    """A plain number with ``digits`` significant digits between 1e-3 and 1e5, else
    scientific (:func:`format_sci`): ``"0.800"``, ``"1230"``, ``"4.62e8"``."""
    if _missing(x):
        return MISSING
    x = float(x)
    if x == 0 or 1e-3 <= abs(x) < 1e5:
        return significant(x, digits)
    return format_sci(x, digits)


_PREFIXES = ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "\u00b5"),
             (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def format_si(x, unit: str, digits: int = 3) -> str:
    """A value with an SI prefix: ``format_si(9.6e-13, "s") == "0.960 ps"``-style output."""
    if _missing(x):
        return MISSING
    x = float(x)
    if x == 0:
        return f"0 {unit}"
    for scale, prefix in _PREFIXES:
        if abs(x) >= scale:
            return f"{significant(x / scale, digits)} {prefix}{unit}"
    return f"{format_sci(x, digits)} {unit}"


def format_bytes(n) -> str:
    """A memory size in binary units: ``"512 B"``, ``"3.4 MiB"``, ``"1.25 GiB"``."""
    if _missing(n):
        return MISSING
    n = float(n)
    for scale, unit in ((2.0**40, "TiB"), (2.0**30, "GiB"), (2.0**20, "MiB"), (2.0**10, "KiB")):
        if n >= scale:
            return f"{significant(n / scale, 3)} {unit}"
    return f"{int(n)} B"


def format_duration(seconds) -> str:
    """A wall time: ``"12.3 s"``, ``"4 min 05 s"``, ``"1 h 02 min"``."""
    if _missing(seconds):
        return MISSING
    s = float(seconds)
    if s < 60:
        return f"{significant(s, 3)} s" if s > 0 else "0 s"
    if s < 3600:
        minutes, rest = divmod(int(round(s)), 60)
        return f"{minutes} min {rest:02d} s"
    hours, rest = divmod(int(round(s / 60.0)), 60)
    return f"{hours} h {rest:02d} min"
