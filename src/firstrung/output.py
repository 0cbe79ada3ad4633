"""Writing output files safely: atomically, never over an input.

Every file firstrung writes goes to a temporary file in the same folder
(``.<name>.<random>.part``) and is renamed into place, so a reader never sees
half a file and an error or Ctrl-C leaves nothing behind: the destination is
either untouched or complete. Writing to a path that is one of the inputs
(the same file by another name included: a symbolic or hard link) is
refused.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

from firstrung.errors import InputError

__all__ = ["refuse_overwriting_inputs", "write_atomic"]

#: Suffix of the temporary file an output is written to before the rename.
PART_SUFFIX = ".part"


def _same_file(a: Path, b: Path) -> bool:
    """Whether two paths name the same file (after links), whether or not it exists yet."""
    try:
        if a.resolve() == b.resolve():
            return True
    except (OSError, RuntimeError, ValueError):  # a loop of links, or a NUL in the path
        pass
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        return False


def refuse_overwriting_inputs(path, inputs: Iterable = ()) -> Path:
    """The output path, or InputError when it names one of the input files.

    Parameters
    ----------
    path : path-like
        The output file.
    inputs : iterable of path-like
        Files the output must not replace (``None`` entries are skipped).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        When the output is one of the inputs, under any name.

    Examples
    --------
    >>> refuse_overwriting_inputs("report.html", ["campaign.toml"]).name
    'report.html'
    """
    out = Path(path)
    for item in inputs:
        if item is not None and _same_file(out, Path(item)):
            raise InputError(f"output {out} is one of the inputs; choose another file name")
    return out


def _creation_mode(existing: Path) -> int:
    """Permission bits for the new file: the replaced file's, else the usual ones (umask)."""
    try:
        return existing.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_atomic(path, data: str | bytes, *, inputs: Iterable = ()) -> Path:
    """Write ``data`` to ``path`` through a temporary file and a rename.

    Parameters
    ----------
    path : path-like
        Destination; its folder must exist (InputError otherwise). An
        existing file there is replaced whole, keeping its permissions.
    data : str or bytes
        Text is written as UTF-8 with ``\\n`` line ends.
    inputs : iterable of path-like
        Files this output must not replace.

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    InputError
        When the output is one of the inputs, its folder does not exist, it
        names a folder, or the system refuses the write (permissions, disk
        full); nothing is left behind.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> write_atomic(d / "a.txt", "hello\\n").read_text()
    'hello\\n'
    >>> sorted(p.name for p in d.iterdir())
    ['a.txt']
    """
    out = refuse_overwriting_inputs(path, inputs)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"cannot write {out}: the folder {folder} does not exist")
    if out.is_dir():
        raise InputError(f"cannot write {out}: it is a folder; give a file name")
    payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    mode = _creation_mode(out)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", suffix=PART_SUFFIX, dir=folder)
    except OSError as error:
        raise InputError(f"cannot write {out}: {error.strerror or error}") from None
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(payload)
            f.flush()
            os.fsync(f.fileno())
        if hasattr(os, "chmod"):
            os.chmod(tmp, mode)
        os.replace(tmp, out)
    except BaseException as error:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        if isinstance(error, OSError):
            raise InputError(f"cannot write {out}: {error.strerror or error}") from None
        raise
    return out


def rows_to_csv(rows, columns) -> str:
    """CSV text of row dictionaries with the given columns (``\\n`` line ends)."""
    import csv
    import io

    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(columns), lineterminator="\n", extrasaction="ignore")
    w.writeheader()
    w.writerows(rows)
    return buf.getvalue()
