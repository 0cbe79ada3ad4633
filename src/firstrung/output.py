"""Writing output files safely: atomically, never over an input.

Every file firstrung writes goes to a temporary file in the same folder
(``.<name>.<random>.part``) and is renamed into place, so a reader never sees
half a file and an error or Ctrl-C leaves nothing behind: the destination is
either untouched or complete. Writing to a path that is one of the inputs
(the same file by another name included: a symbolic or hard link) is
refused; :func:`campaign_inputs` names every file a campaign reads (its
campaign file and every log of every kind), which every command that
writes passes as ``inputs``. Commands that fill a folder
(:func:`make_folder`, :func:`refuse_replacing_others`) never replace a file
they did not write themselves.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

from firstrung.errors import InputError
from firstrung.patterns import pattern

__all__ = ["campaign_inputs", "make_folder", "refuse_overwriting_inputs", "refuse_replacing_others", "write_atomic"]

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
        When the output is one of the existing inputs, under any name.

    Examples
    --------
    >>> refuse_overwriting_inputs("report.html", ["campaign.toml"]).name
    'report.html'
    """
    out = Path(path)
    for item in inputs:
        # an input that does not exist yet holds nothing to lose (simulate writes a campaign's first logs)
        if item is not None and os.path.lexists(item) and _same_file(out, Path(item)):
            raise InputError(f"output {out} is one of the inputs; choose another file name")
    return out


def campaign_inputs(campaign) -> tuple[Path, ...]:
    """Every file a campaign reads: the campaign file and each log of every kind it lists.

    Parameters
    ----------
    campaign : Campaign or path-like
        A campaign read already, or the path of its file (read here; when it
        cannot be read, the file alone is returned and the command's own
        reading reports why).

    Returns
    -------
    tuple of pathlib.Path

    Examples
    --------
    >>> [p.name for p in campaign_inputs("no-such-campaign.toml")]
    ['no-such-campaign.toml']
    """
    from firstrung.campaign import Campaign, read_campaign

    if not isinstance(campaign, Campaign):
        path = Path(campaign)
        try:
            campaign = read_campaign(path)
        except (InputError, OSError):
            return (path,)
    files = [Path(campaign.path)] if campaign.path is not None else []
    files.extend(Path(p) for paths in campaign.logs.values() for p in paths)
    return tuple(files)


def make_folder(folder, option: str = "-o") -> Path:
    """Create an output folder (and its parents) if needed; InputError when that is impossible.

    >>> import tempfile, pathlib
    >>> make_folder(pathlib.Path(tempfile.mkdtemp()) / "a" / "b").is_dir()
    True
    """
    out = Path(folder)
    problem = _create_folder(out)
    if problem is not None:
        raise InputError(f"{option}: {problem}")
    if not os.access(out, os.W_OK | os.X_OK):
        raise InputError(f"{option}: cannot write into the folder {out}: permission denied")
    return out


def _create_folder(folder: Path) -> str | None:
    """Create a missing output folder and its parents, the one way every output does; what went wrong, or None."""
    blocking = next((p for p in (folder, *folder.parents) if p.exists()), None)
    if blocking is not None and not blocking.is_dir():  # a file where a folder should be, named
        return f"{blocking} exists and is not a folder"
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        return f"cannot create the folder {folder}: {error.strerror or error}"
    return None


def refuse_replacing_others(files, ours, what: str) -> None:
    """InputError unless every existing file among ``files`` is one this command wrote.

    Parameters
    ----------
    files : iterable of path-like
        The files a command is about to write into a folder.
    ours : callable(path, bytes) -> bool
        Whether an existing file's content is one the command writes itself
        (which it may replace).
    what : str
        What the command writes, for the message.
    """
    for item in files:
        path = Path(item)
        if path.is_dir():
            raise InputError(f"cannot write {path}: it is a folder")
        if not path.exists():
            continue
        try:
            old = path.read_bytes()
        except OSError as error:
            raise InputError(f"cannot check {path} before replacing it: {error.strerror or error}") from None
        if not ours(path, old):
            raise InputError(
                f"{path} exists and is not {what}; it is left as it is: choose an empty or new folder"
            )


#: First characters that make a spreadsheet read a cell as a formula (or hide one after them).
_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\n")
_PLAIN_NUMBER = pattern(r"[+-]?(\d+[.,]?\d*|[.,]\d+)([eE][+-]?\d+)?")


def spreadsheet_safe(cell: str) -> str:
    """A CSV cell a spreadsheet shows as text: a leading ``'`` before a formula-like start.

    Cells starting with ``=``, ``+``, ``-``, ``@``, a tab or a line break are
    prefixed with an apostrophe (the usual defence against formula injection);
    plain numbers such as ``-2.5`` or ``+1e3`` are left as they are.

    >>> print(spreadsheet_safe('=HYPERLINK("http://x")'), spreadsheet_safe("-2.5"), spreadsheet_safe("Kepler"))
    '=HYPERLINK("http://x") -2.5 Kepler
    """
    if not cell.startswith(_FORMULA_STARTS):
        return cell
    if _PLAIN_NUMBER().fullmatch(cell):
        return cell
    return "'" + cell


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
        Destination; a missing folder (and its parents) is created, as
        :func:`make_folder` creates a command's output folder. An existing
        file there is replaced whole, keeping its permissions.
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
        When the output is one of the inputs, its folder cannot be created, it
        names a folder, or the system refuses the write (permissions, disk
        full); nothing is left behind.
    TypeError
        When ``data`` is neither text nor bytes.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> write_atomic(d / "a.txt", "hello\\n").read_text()
    'hello\\n'
    >>> sorted(p.name for p in d.iterdir())
    ['a.txt']
    """
    if not isinstance(data, (str, bytes, bytearray, memoryview)):
        raise TypeError(f"write_atomic: expected the data as str or bytes, got {type(data).__name__}")
    out = refuse_overwriting_inputs(path, inputs)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():  # a missing folder is created, as make_folder creates a command's output folder
        problem = _create_folder(folder)
        if problem is not None:
            raise InputError(f"cannot write {out}: {problem}")
    if out.is_dir():
        raise InputError(f"cannot write {out}: it is a folder; give a file name")
    payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    mode = _creation_mode(out)
    try:
        import tempfile  # only when a file is written (most commands print)

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
