"""Reading a finished run's results directory (the commands that work on one)."""

from __future__ import annotations

import json
from pathlib import Path

from ringprint.errors import RingprintError


def read_modes_json(results: Path) -> dict:
    """modes.json of a results directory of ``ringprint run``, with its list of modes.

    Raises
    ------
    RingprintError
        No such directory, no modes.json, unreadable JSON or no list of modes.
    """
    results = Path(results)
    if not results.is_dir():
        raise RingprintError(f"{results}: no such directory; give the results directory of "
                             "`ringprint run`")
    path = results / "modes.json"
    if not path.is_file():
        raise RingprintError(f"{results} has no modes.json; give the results directory of "
                             "`ringprint run`")
    try:
        summary = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise RingprintError(f"{path} is not readable JSON ({exc}); run the case again") from None
    if not isinstance(summary, dict) or not isinstance(summary.get("modes"), list):
        raise RingprintError(f"{path} has no list of modes; run the case again")
    return summary
