"""The ``[logs]`` entries of a campaign as files: a path, a folder (its CSV files) or a glob pattern.

One file per school is common in a network: ``shadows = ["logs/schools/"]``
or ``shadows = ["logs/schools/*.csv"]`` reads them all, in name order so that
the same folder always gives the same result. A pattern that matches nothing,
or a folder without CSV files, stays as written so that the log reader says
so in one line (``no such file``, ``is a folder``).
"""

from __future__ import annotations

import glob
import os
from collections.abc import Iterable
from pathlib import Path

_PATTERN_CHARS = ("*", "?", "[")


def expand_log_paths(paths: Iterable[Path]) -> list[Path]:
    """Every entry as the files it names, in order; each folder or pattern's files sorted by name.

    >>> [p.as_posix() for p in expand_log_paths([Path("no/such/*.csv")])]
    ['no/such/*.csv']
    """
    out: list[Path] = []
    for path in paths:
        text = os.fspath(path)
        if any(c in text for c in _PATTERN_CHARS):
            found = sorted(Path(p) for p in glob.glob(text) if os.path.isfile(p))
        elif os.path.isdir(text):
            found = sorted(p for p in Path(text).iterdir() if p.is_file() and p.suffix.lower() in (".csv", ".txt"))
        else:
            found = []
        out.extend(found or [Path(path)])
    return out
