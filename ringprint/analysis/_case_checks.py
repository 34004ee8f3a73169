"""Typed reading of a parsed case file with one-line errors (private helper of ``case``).

Every error names the file, the line (found by :class:`KeyLines`), where the key
sits (``[spectrum]``, ``[[part]] 2 ("housing")``) and the key, then the problem
and the fix, e.g.::

    case.toml:12: [[part]] 2 ("housing") key 'materal': unknown key; did you mean 'material'?
"""

from __future__ import annotations

import difflib
import math
from typing import Iterable, NoReturn

from ringprint.analysis._toml_lines import KeyLines
from ringprint.analysis._units import parse_frequency
from ringprint.errors import RingprintError

__all__ = ["Checker"]

ARRAY_TABLES = ("part", "band", "assembly")
#: Arrays of tables inside an element of one of ARRAY_TABLES (``[[assembly.rule]]``).
NESTED_ARRAYS = ("rule",)
TABLES = ("spectrum", "probe", "grid", "analysis", "output", "tolerance")


class Checker:
    """Reads values out of the parsed TOML, raising one-line errors that cite lines."""

    def __init__(self, filename: str, text: str, top_keys: Iterable[str] = ()):
        self.file = filename
        self.top_keys = tuple(top_keys)      # for the hint on a top-level key written too late
        self.lines = KeyLines(text)
        self.labels: dict[tuple, str] = {}   # ("part", 1) -> the part's name, for messages
        self.notes: list[str] = []           # deprecation notes, each once (see renamed)
        self.written: dict[tuple, tuple] = {}  # key path under its new name -> as written

    # -- messages ---------------------------------------------------------------
    def label(self, path: tuple, table) -> None:
        """Remember the name of an array-of-tables element for later messages."""
        if isinstance(table, dict) and isinstance(table.get("name"), str):
            self.labels[path] = table["name"]

    def where(self, path: tuple) -> str:
        path = tuple(path)
        head, rest = "", path
        if path and path[0] in ARRAY_TABLES:
            head = f"[[{path[0]}]]"
            rest = path[1:]
            if rest and isinstance(rest[0], int):
                head += f" {rest[0] + 1}"
                label = self.labels.get(path[:2])
                head += f" ({label!r})" if label else ""
                rest = rest[1:]
                if len(rest) >= 2 and rest[0] in NESTED_ARRAYS and isinstance(rest[1], int):
                    head += f" {rest[0]} {rest[1] + 1}"
                    rest = rest[2:]
        elif path and path[0] in TABLES:
            head, rest = f"[{path[0]}]", path[1:]
        keys = [str(k) for k in rest if not isinstance(k, int)]
        items = [k + 1 for k in rest if isinstance(k, int)]
        text = f"key {'.'.join(keys)!r}" if keys else ""
        text += "".join(f" item {i}" for i in items)
        return " ".join(t for t in (head, text) if t) or "top level"

    def fail(self, path: tuple, problem: str) -> NoReturn:
        path = tuple(path)
        for new, old in self.written.items():   # a renamed key: cite it as written
            if path[:len(new)] == new:
                path = old + path[len(new):]
        raise RingprintError(f"{self.file}:{self.lines.line(path)}: {self.where(path)}: {problem}")

    # -- structure --------------------------------------------------------------
    def table(self, value, path: tuple, allowed: Iterable[str]) -> dict:
        """Check that ``value`` is a table whose keys are all in ``allowed``."""
        allowed = tuple(allowed)
        if not isinstance(value, dict):
            self.fail(path, f"expected a table, got {_kind(value)}")
        for key in value:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1, cutoff=0.6)
                hint = f"did you mean {close[0]!r}?" if close else \
                    f"allowed keys here: {', '.join(allowed)}"
                if path and key in self.top_keys and not close:
                    hint = (f"{key!r} belongs to the top level: move it above the first "
                            "[table] header")
                self.fail(path + (key,), f"unknown key; {hint}")
        return value

    def renamed(self, table, path: tuple, old: str, new: str):
        """``table`` with a key written under its old name ``old`` moved to ``new``.

        The old name keeps working; one note per old name (however often it is used)
        goes to :attr:`notes`, for the run log and ``ringprint mesh``. Both names in
        one table is an error.
        """
        if not isinstance(table, dict) or old not in table:
            return table
        if new in table:
            self.fail(path + (old,), f"'{old}' is the old name of '{new}', which is given "
                      f"too; keep only {new} = ...")
        note = (f"{self.file}: case key '{old}' is now called '{new}'; the old name still "
                f"works for now, rename it")
        if note not in self.notes:
            self.notes.append(note)
        self.written[tuple(path) + (new,)] = tuple(path) + (old,)
        return {(new if key == old else key): value for key, value in table.items()}

    def require(self, table: dict, key: str, path: tuple):
        if key not in table:
            self.fail(path, f"missing key {key!r}; add {key} = ...")
        return table[key]

    # -- scalar types -----------------------------------------------------------
    def number(self, value, path: tuple, *, low: float | None = None, low_open: bool = False,
               high: float | None = None, high_open: bool = False, integer: bool = False,
               hint: str = "") -> float:
        """A finite number (int if ``integer``) within the given bounds."""
        kind_ok = isinstance(value, int) if integer else isinstance(value, (int, float))
        if isinstance(value, bool) or not kind_ok:
            self.fail(path, f"expected {'an integer' if integer else 'a number'}, got {_kind(value)}")
        if not math.isfinite(value):
            self.fail(path, f"must be finite, got {value!r}")
        too_low = low is not None and (value <= low if low_open else value < low)
        too_high = high is not None and (value >= high if high_open else value > high)
        if too_low or too_high:
            bounds = []
            if low is not None:
                bounds.append(f"{'>' if low_open else '>='} {low:g}")
            if high is not None:
                bounds.append(f"{'<' if high_open else '<='} {high:g}")
            self.fail(path, f"must be {' and '.join(bounds)}, got {value!r}"
                      + (f"; {hint}" if hint else ""))
        return value if integer else float(value)

    def positive(self, value, path: tuple, hint: str = "") -> float:
        return self.number(value, path, low=0.0, low_open=True, hint=hint)

    def string(self, value, path: tuple) -> str:
        if not isinstance(value, str):
            self.fail(path, f"expected a string in quotes, got {_kind(value)}")
        if not value.strip():
            self.fail(path, "must not be empty")
        return value

    def boolean(self, value, path: tuple) -> bool:
        if not isinstance(value, bool):
            self.fail(path, f"expected true or false, got {_kind(value)}")
        return value

    def choice(self, value, path: tuple, options: Iterable[str]) -> str:
        options = tuple(options)
        text = self.string(value, path)
        if text not in options:
            close = difflib.get_close_matches(text, options, n=1, cutoff=0.5)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            self.fail(path, f"{text!r} is not one of {', '.join(map(repr, options))}{hint}")
        return text

    def vector3(self, value, path: tuple) -> tuple[float, float, float]:
        if not isinstance(value, list) or len(value) != 3:
            self.fail(path, f"expected three numbers [x, y, z], got {_kind(value)}")
        return tuple(self.number(v, path + (i,)) for i, v in enumerate(value))

    def frequency(self, value, path: tuple) -> float:
        """A positive frequency in Hz from a number (Hz) or a string with a unit."""
        try:
            hz = parse_frequency(value)
        except (TypeError, ValueError) as exc:
            self.fail(path, str(exc))
        if hz <= 0:
            self.fail(path, f"must be > 0 Hz, got {value!r}")
        return hz


def _kind(value) -> str:
    """Describe a TOML value for a message: its type and a short repr."""
    names = {bool: "a boolean", int: "an integer", float: "a number", str: "a string",
             list: "an array", dict: "a table"}
    kind = next((n for t, n in names.items() if isinstance(value, t)), type(value).__name__)
    text = repr(value)
    return f"{kind} {text if len(text) <= 40 else text[:37] + '...'}"
