"""Touchstone files in and out: measured reflections for the bench comparison, the
simulated probe S11 for the network analyzer's own software.

Reading (rules the error messages cite):

- The file text is checked line by line before scikit-rf parses it, so every problem
  is one line naming the file and the line number: a missing option line (the
  format's silent default, GHz / MA / 50 ohm, would misread a file written in other
  units, so ringprint asks for the line), an option line with an unknown word,
  a value that is not a number, a truncated row, frequencies that do not increase,
  more rows than ``[Number of Frequencies]`` says or fewer.
- Any option-line variant is read: units Hz, kHz, MHz, GHz; formats RI, MA, DB;
  parameters S, Y, Z (Y and Z are converted to S by scikit-rf); reference resistance
  ``R n`` (default 50 ohm). Version 2.0 keyword files are read too.
- 1-port and 2-port files. A 2-port file gives the reflection of the port the caller
  names (``port=1`` for S11, ``port=2`` for S22); without one it is refused, as is a
  ``.s1p`` file whose rows hold 2-port data. Rows of a 2-port file after the
  frequency falls back are its noise parameters (version 1 layout) and are skipped.

Writing: :func:`write_s1p` writes one reflection as a version 1.0 file in RI format
through scikit-rf, atomically.

References
----------
Touchstone File Format Specification, version 2.0, IBIS Open Forum, 2009 (version 1.1
layout included).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ringprint.analysis.outputs import atomic_write_text
from ringprint.errors import RingprintError

UNITS = {"HZ": 1.0, "KHZ": 1e3, "MHZ": 1e6, "GHZ": 1e9}
FORMATS = ("RI", "MA", "DB")
PARAMETERS = ("S", "Y", "Z")
MAX_PORTS = 2


def s_db(s) -> np.ndarray:
    """``20 log10 |S|`` (dB); exact zeros give -6000 dB rather than -inf."""
    return 20.0 * np.log10(np.maximum(np.abs(s), 1e-300))


@dataclass(frozen=True)
class Reflection:
    """One port's reflection coefficient against frequency.

    Attributes
    ----------
    f_hz : numpy.ndarray
        Frequencies (Hz), strictly increasing.
    s : numpy.ndarray
        Complex reflection coefficient at each frequency (the ``exp(+j w t)``
        convention of network analyzers).
    z0 : float
        Reference resistance (ohm).
    source : str
        The file it came from.
    """

    f_hz: np.ndarray
    s: np.ndarray
    z0: float
    source: str

    @property
    def db(self) -> np.ndarray:
        """``20 log10 |S|`` (dB)."""
        return s_db(self.s)


@dataclass(frozen=True)
class FileFacts:
    """What the text check found: ports, option-line words, number of frequencies."""

    ports: int
    unit: str
    parameter: str
    form: str
    r_ref: float
    points: int


def _ports_from_name(path: Path) -> int | None:
    suffix = path.suffix.lower()
    if len(suffix) >= 4 and suffix[:2] == ".s" and suffix[-1] == "p" and suffix[2:-1].isdigit():
        return int(suffix[2:-1])
    return None


def _option_line(words, where: str) -> tuple[str, str, str, float]:
    unit, param, form, r_ref = "GHZ", "S", "MA", 50.0
    k = 0
    while k < len(words):
        w = words[k].upper()
        if w in UNITS:
            unit = w
        elif w in PARAMETERS:
            param = w
        elif w in ("G", "H"):
            raise RingprintError(f"{where}: the option line names {w}-parameters; ringprint reads "
                                 "S, Y or Z parameters (save the file as S-parameters)")
        elif w in FORMATS:
            form = w
        elif w == "R":
            if k + 1 >= len(words):
                raise RingprintError(f"{where}: 'R' on the option line needs the reference "
                                     "resistance after it (e.g. 'R 50')")
            r_ref = _number(words[k + 1], where)
            if not r_ref > 0:
                raise RingprintError(f"{where}: reference resistance R {words[k + 1]} must be > 0")
            k += 1
        else:
            raise RingprintError(f"{where}: unknown word {words[k]!r} on the option line; use a unit "
                                 "(Hz, kHz, MHz, GHz), a parameter (S, Y, Z), a format (RI, MA, DB) "
                                 "and 'R <ohm>'")
        k += 1
    return unit, param, form, r_ref


def _number(text: str, where: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise RingprintError(f"{where}: {text!r} is not a number; fix or remove that row") from None
    if not np.isfinite(value):
        raise RingprintError(f"{where}: {text!r} is not a finite number; fix or remove that row")
    return value


def _keyword(line: str, state: dict, where: str) -> None:
    """A version 2.0 ``[Keyword] value`` line."""
    name, _, value = line[1:].partition("]")
    name = " ".join(name.lower().split())
    value = value.strip()
    if name == "number of ports":
        state["ports_kw"] = int(_number(value, where))
    elif name == "number of frequencies":
        state["freqs_kw"] = int(_number(value, where))
    elif name == "network data":
        state["in_data"] = True
    elif name in ("noise data", "end"):
        state["in_data"] = False
        state["done"] = True


def check_touchstone_text(path) -> FileFacts:
    """Check a Touchstone file's text (module docstring) and say what it holds.

    Raises
    ------
    RingprintError
        One line naming the file, the line number and the fix.
    """
    path = Path(path)
    try:
        lines = path.read_text(encoding="latin-1").splitlines()
    except OSError as exc:
        raise RingprintError(f"{path}: cannot read the file ({exc.strerror}); check the path") from None
    named = _ports_from_name(path)
    if named is None:
        raise RingprintError(f"{path}: not a Touchstone file name; name it .s1p or .s2p")
    if named > MAX_PORTS:
        raise RingprintError(f"{path}: a {named}-port file; ringprint reads 1-port and 2-port files")
    state = {"in_data": None, "done": False}
    option = None
    values: list[tuple[int, list[float]]] = []     # (line number, numbers) per data line
    for no, raw in enumerate(lines, start=1):
        line = raw.split("!", 1)[0].strip()
        where = f"{path}, line {no}"
        if not line:
            continue
        if line.startswith("#"):
            if option is None:
                option = _option_line(line[1:].split(), where)
            continue
        if line.startswith("["):
            _keyword(line, state, where)
            continue
        if state["done"] or state["in_data"] is False:
            continue
        if option is None:
            raise RingprintError(f"{where}: data before the option line; put a line such as "
                                 "'# GHz S RI R 50' (unit, parameter, format, reference) first")
        values.append((no, [_number(t, where) for t in line.split()]))
    if option is None:
        raise RingprintError(f"{path}: no option line (e.g. '# GHz S RI R 50'); add one so the "
                             "units, format and reference resistance are not guessed")
    ports = state.get("ports_kw", named)
    if ports != named:
        raise RingprintError(f"{path}: [Number of Ports] says {ports} but the name says {named}; "
                             "make them agree")
    freqs = _rows(path, values, ports, version2=state["in_data"] is not None)
    if not freqs:
        raise RingprintError(f"{path}: no data rows; the file holds no frequencies")
    expected = state.get("freqs_kw")
    if expected is not None and expected != len(freqs):
        raise RingprintError(f"{path}: [Number of Frequencies] says {expected} but the file has "
                             f"{len(freqs)} rows; fix the count or the rows")
    unit, param, form, r_ref = option
    return FileFacts(ports, unit, param, form, r_ref, len(freqs))


def _rows(path: Path, values, ports: int, version2: bool) -> list[float]:
    """Frequencies of the network rows; checks row lengths and increasing frequency."""
    width = 1 + 2 * ports * ports
    freqs: list[float] = []
    if version2:                                   # rows may wrap over several lines
        flat = [(no, v) for no, vals in values for v in vals]
        for start in range(0, len(flat), width):
            chunk = flat[start:start + width]
            if len(chunk) < width:
                raise RingprintError(f"{path}, line {chunk[0][0]}: the last row has {len(chunk)} of its "
                                     f"{width} values; the file is cut short, complete or remove it")
            _next_frequency(path, chunk[0][0], chunk[0][1], freqs)
        return freqs
    for no, vals in values:
        where = f"{path}, line {no}"
        if ports == 2 and len(vals) == 5 and freqs and vals[0] <= freqs[-1]:
            break                                  # noise parameters follow the network data
        if ports == 1 and len(vals) == 9:
            raise RingprintError(f"{where}: 9 values, a 2-port row, in a 1-port file; rename the file "
                                 ".s2p and choose the port to compare")
        if len(vals) != width:
            raise RingprintError(f"{where}: {len(vals)} values, but a {ports}-port row has {width} "
                                 "(frequency and the complex values); the row is truncated or "
                                 "malformed, fix or remove it")
        _next_frequency(path, no, vals[0], freqs)
    return freqs


def _next_frequency(path: Path, no: int, f: float, freqs: list) -> None:
    if f < 0:
        raise RingprintError(f"{path}, line {no}: negative frequency {f:g}; fix the row")
    if freqs and f <= freqs[-1]:
        raise RingprintError(f"{path}, line {no}: frequency {f:g} does not increase (previous "
                             f"{freqs[-1]:g}); sort the rows and remove repeated ones")
    freqs.append(f)


def read_reflection(path, port: int | None = None) -> Reflection:
    """The reflection coefficient of one port of a 1-port or 2-port Touchstone file.

    Parameters
    ----------
    path : path-like
        A ``.s1p`` or ``.s2p`` file.
    port : int or None
        1 or 2: which reflection (S11 or S22) of a 2-port file; a 1-port file accepts
        None or 1.

    Raises
    ------
    RingprintError
        For any of the problems in the module docstring, and for a 2-port file read
        without ``port``.
    """
    import skrf

    path = Path(path)
    facts = check_touchstone_text(path)
    if facts.ports == 2 and port not in (1, 2):
        raise RingprintError(f"{path}: a 2-port file where one reflection is expected; say which "
                             "port to use (--port 1 for S11, --port 2 for S22)")
    if facts.ports == 1 and port not in (None, 1):
        raise RingprintError(f"{path}: a 1-port file has no port {port}; leave --port out")
    k = 0 if port in (None, 1) else 1
    try:
        net = skrf.Network(str(path))
    except Exception as exc:  # scikit-rf's own exceptions name no line: say what it said
        raise RingprintError(f"{path}: the Touchstone reader refused the file "
                             f"({type(exc).__name__}: {exc}); check it against the format") from None
    z0 = np.real(np.asarray(net.z0)[:, k])
    if not np.allclose(z0, z0[0]):
        raise RingprintError(f"{path}: the reference impedance changes with frequency; ringprint "
                             "needs one reference resistance per file")
    return Reflection(np.asarray(net.f, float), np.asarray(net.s[:, k, k], complex), float(z0[0]),
                      str(path))


def write_s1p(path, f_hz, s, z0: float = 50.0, comments=()) -> Path:
    """Write one reflection as a 1-port Touchstone file (version 1.0, Hz, RI), atomically.

    Parameters
    ----------
    path : path-like
        Target file; should end in ``.s1p``.
    f_hz, s : array_like
        Increasing frequencies (Hz) and complex reflection coefficients.
    z0 : float
        Reference resistance (ohm).
    comments : iterable of str
        Lines written as ``!`` comments at the top.
    """
    import skrf

    f_hz = np.asarray(f_hz, float)
    s = np.asarray(s, complex)
    if f_hz.ndim != 1 or f_hz.shape != s.shape or f_hz.size < 1 or np.any(np.diff(f_hz) <= 0):
        raise RingprintError(f"{path}: need increasing frequencies and one reflection per frequency")
    if not (np.all(np.isfinite(s)) and z0 > 0):
        raise RingprintError(f"{path}: reflections must be finite and z0 = {z0!r} > 0")
    net = skrf.Network(frequency=skrf.Frequency.from_f(f_hz, unit="hz"), s=s.reshape(-1, 1, 1),
                       z0=float(z0), name=Path(path).stem)
    net.comments = "\n".join(str(c) for c in comments)
    text = net.write_touchstone(return_string=True, skrf_comment=False, form="ri",
                                format_spec_freq="{:.12g}", format_spec_A="{:.12g}",
                                format_spec_B="{:.12g}", r_ref=float(z0))
    return atomic_write_text(os.fspath(path), text)
