"""Find the line of a key in TOML text (private helper of :mod:`ringprint.analysis.case`).

``tomllib`` returns plain dicts without positions, so error messages find the line of
a key by scanning the text again. The heuristic, in order:

1. Comments (``#`` outside a string) are dropped; basic, literal and multi-line strings
   are skipped so that brackets, ``=`` and ``#`` inside them do not count.
2. A line whose first character (after blanks) is ``[`` at nesting depth 0 is a table
   header: ``[a.b]`` makes ``("a", "b")`` the current table, ``[[a]]`` appends an element
   to the array of tables ``a`` and makes ``("a", i)`` current (``i`` counts from 0).
   A header inside an array of tables (``[[a.b]]`` or ``[a.c]`` after ``[[a]]``) belongs
   to its current element: ``("a", i, "b", j)``, ``j`` counting within that element.
3. A line ``key = ...`` or ``a.b = ...`` at nesting depth 0 records the path
   ``current table + key parts`` at that line. Lines inside a multi-line array or string
   are continuation lines and record nothing.
4. Keys inside an inline table (``{ eps_r = 3 }``) and elements of arrays are not
   recorded: a query for such a path falls back to its nearest recorded ancestor, i.e.
   the line of the key that holds the inline table or array.

The scan never raises: on text it does not understand it simply records less, and the
caller then reports the nearest ancestor's line (or line 1 for the document).
"""

from __future__ import annotations

import re

__all__ = ["KeyLines"]

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
_ONE_KEY = r"""(?:[A-Za-z0-9_-]+|"[^"]*"|'[^']*')"""
_KEY_LINE = re.compile(rf"^\s*({_ONE_KEY}(?:\s*\.\s*{_ONE_KEY})*)\s*=")


def _split_key(text: str) -> tuple[str, ...]:
    """Split a dotted TOML key (``a."b.c".d``) into its parts; quotes are removed."""
    parts: list[str] = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch in " \t.":
            i += 1
        elif ch in "\"'":
            end = text.find(ch, i + 1)
            end = n if end < 0 else end
            parts.append(text[i + 1:end])
            i = end + 1
        else:
            m = _BARE_KEY.match(text, i)
            if not m:
                break
            parts.append(m.group(0))
            i = m.end()
    return tuple(parts)


class _Scanner:
    """Walks the text once, tracking strings and bracket depth across lines."""

    def __init__(self) -> None:
        self.depth = 0          # open [ and { outside strings
        self.in_multi = None    # '"""' or "'''" while inside a multi-line string

    def code_of(self, line: str) -> str:
        """Return the parts of ``line`` outside strings/comments (strings as ``""``)."""
        out: list[str] = []
        i, n = 0, len(line)
        while i < n:
            if self.in_multi:
                end = line.find(self.in_multi, i)
                if end < 0:
                    return "".join(out)
                i = end + 3
                self.in_multi = None
                out.append('""')
                continue
            ch = line[i]
            if ch == "#":
                break
            if line.startswith('"""', i) or line.startswith("'''", i):
                self.in_multi = line[i:i + 3]
                i += 3
                continue
            if ch in "\"'":
                j = i + 1
                while j < n and line[j] != ch:
                    j += 2 if (ch == '"' and line[j] == "\\") else 1
                out.append('""')
                i = j + 1
                continue
            if ch in "[{":
                self.depth += 1
            elif ch in "]}":
                self.depth = max(0, self.depth - 1)
            out.append(ch)
            i += 1
        return "".join(out)


class KeyLines:
    """Map from key paths of a TOML document to 1-based line numbers.

    Parameters
    ----------
    text : str
        The TOML source.

    Notes
    -----
    A path is a tuple of keys and array-of-table indices, e.g. ``("part", 1,
    "material")`` for the ``material`` key of the second ``[[part]]``. See the module
    docstring for the heuristic.
    """

    def __init__(self, text: str):
        self._lines: dict[tuple, int] = {}
        counts: dict[tuple, int] = {}
        table: tuple = ()
        scan = _Scanner()
        for number, raw in enumerate(text.splitlines(), start=1):
            starts_inside = scan.depth > 0 or scan.in_multi is not None
            stripped = raw.strip()
            if starts_inside:
                scan.code_of(raw)
                continue
            if stripped.startswith("[["):
                name = _split_key(stripped[2:stripped.find("]]")])
                array = self._within(name[:-1], counts) + name[-1:]
                index = counts.get(array, 0)
                counts[array] = index + 1
                table = array + (index,)
                self._lines.setdefault(table, number)
                self._lines.setdefault(array, number)
                continue
            if stripped.startswith("["):
                end = stripped.find("]")
                table = self._within(_split_key(stripped[1:end if end > 0 else None]), counts)
                self._lines.setdefault(table, number)
                continue
            scan.code_of(raw)
            match = _KEY_LINE.match(raw)
            if match:
                self._lines.setdefault(table + _split_key(match.group(1)), number)

    @staticmethod
    def _within(name: tuple, counts: dict) -> tuple:
        """A header's key path with the current element of each enclosing array of
        tables: ``[[assembly.rule]]`` under the second ``[[assembly]]`` is
        ``("assembly", 1, "rule")``."""
        out: tuple = ()
        for key in name:
            out += (key,)
            if out in counts:
                out += (counts[out] - 1,)
        return out

    def line(self, path: tuple) -> int:
        """Line of ``path``, or of its nearest recorded ancestor (1 if none)."""
        path = tuple(path)
        while path:
            if path in self._lines:
                return self._lines[path]
            path = path[:-1]
        return 1
