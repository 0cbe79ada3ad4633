"""Writing output files safely: atomically, never over an input.

Every file firstrung writes goes to a temporary file in the same folder and
is renamed into place, so a reader never sees half a file and an error or
Ctrl-C leaves nothing behind. Writing to a path that is one of the inputs is
refused.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

from .errors import InputError


def refuse_overwriting_inputs(path, inputs: Iterable = ()) -> Path:
    """The output path, or InputError when it names one of the input files."""
    out = Path(path)
    resolved = out.resolve()
    for item in inputs:
        if item is not None and Path(item).resolve() == resolved:
            raise InputError(f"output {out} is one of the inputs; choose another file name")
    return out


def write_atomic(path, data: str | bytes, *, inputs: Iterable = ()) -> Path:
    """Write ``data`` to ``path`` through a temporary file and a rename.

    Parameters
    ----------
    path : path-like
        Destination; its folder must exist (InputError otherwise).
    data : str or bytes
        Text is written as UTF-8 with ``\\n`` line ends.
    inputs : iterable of path-like
        Files this output must not replace.

    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> write_atomic(d / "a.txt", "hello\\n").read_text()
    'hello\\n'
    """
    out = refuse_overwriting_inputs(path, inputs)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"cannot write {out}: the folder {folder} does not exist")
    payload = data.encode("utf-8") if isinstance(data, str) else data
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", suffix=".part", dir=folder)
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(payload)
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, out)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return out
