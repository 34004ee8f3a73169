"""Units of the case file and the data files (private helper).

Lengths: the case file names one unit for every length in it and in its meshes.
Frequencies: a number is in hertz; a string carries its unit (``"2.4 GHz"``,
``"600MHz"``, ``"433.92e6 Hz"``). Unit names are matched without regard to case
(``"ghz"`` is GHz, ``"mhz"`` is MHz), except the one spelling that means something
else in SI: ``"mHz"`` (millihertz) is refused with a "did you mean MHz?" hint rather
than silently read as megahertz. A bare number below :data:`MIN_BARE_HZ` (1 MHz) is
refused too: it is almost always a frequency written in MHz or GHz without its unit
(``f_min = 700``), and no part that fits in a product rings that low.
"""

from __future__ import annotations

import math
import re

__all__ = ["LENGTH_UNITS", "FREQUENCY_UNITS", "parse_frequency", "format_frequency",
           "to_user_length"]

#: metres per unit (1 in = 25.4 mm exactly, 1 mil = 0.001 in; NIST SP 811).
LENGTH_UNITS: dict[str, float] = {
    "m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "in": 0.0254, "mil": 2.54e-5,
}

#: hertz per unit.
FREQUENCY_UNITS: dict[str, float] = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}

#: Smallest frequency a bare number (no unit) may give, in Hz: below it the number is
#: taken for a forgotten unit. At 1 MHz the free-space wavelength is 300 m.
MIN_BARE_HZ = 1e6

_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z]*)\s*$")


def parse_frequency(value) -> float:
    """Return a frequency in Hz from a number (Hz) or a string with a unit.

    Raises
    ------
    ValueError
        With a short reason (the caller adds file, line and key).
    TypeError
        If ``value`` is neither a number nor a string.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise TypeError("expected a number in Hz or a string such as \"2.4 GHz\"")
    if isinstance(value, str):
        match = _QUANTITY.match(value)
        if not match:
            raise ValueError(f"cannot read {value!r} as a frequency; write e.g. \"2.4 GHz\"")
        number, unit = float(match.group(1)), (match.group(2) or "hz").lower()
        if match.group(2)[:1] == "m" and unit == "mhz" and match.group(2) != "mhz":
            raise ValueError(f"{value!r} reads as millihertz (SI 'mHz'); did you mean "
                             f"\"{match.group(1)} MHz\" (megahertz, capital M)?")
        if unit not in FREQUENCY_UNITS:
            raise ValueError(f"unknown frequency unit {match.group(2)!r}; use Hz, kHz, MHz or GHz")
        hz = number * FREQUENCY_UNITS[unit]
    else:
        hz = float(value)
        if math.isfinite(hz) and 0 < hz < MIN_BARE_HZ:
            raise ValueError(f"a bare number is in hertz, and {value!r} Hz is far below any "
                             f"resonance of a product's parts; write the unit, e.g. "
                             f"\"{value:g} MHz\" or \"{value:g} GHz\"")
    if not math.isfinite(hz):
        raise ValueError("frequency must be finite")
    return hz


def format_frequency(hz: float) -> str:
    """Write ``hz`` as a short string with a unit that reads back exactly.

    The largest of GHz/MHz/kHz in which the value is at least 1 and round-trips
    through :func:`parse_frequency` bit for bit is used; otherwise ``"... Hz"`` (a string
    too: a bare number below 1 MHz would not read back).
    """
    for unit, name in ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")):
        scaled = hz / unit
        if abs(scaled) >= 1.0:
            text = f"{scaled!r} {name}"
            if parse_frequency(text) == hz:
                return text
    return f"{float(hz)!r} Hz"


def to_user_length(metres: float, factor: float) -> float:
    """Convert metres back to the user's unit, rounded to 12 significant digits.

    The rounding removes the last-bit noise of ``value * factor / factor`` so that the
    resolved case shows the numbers the user wrote.
    """
    return float(f"{metres / factor:.12g}")
