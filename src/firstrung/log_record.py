"""The fields every log's result shares: where each good row came from, and what the reading found.

A method's log (shadows, eclipse, phases, transit, astrometry, light curves) is a frozen
dataclass on :class:`TimedRows` that adds its own columns. The trailing fields are keyword-only,
so a log's own columns follow the five shared ones in the constructor's order.
"""

from __future__ import annotations

from dataclasses import KW_ONLY, dataclass

import numpy as np

from firstrung.errors import RowProblem
from firstrung.tabular import LogRows


@dataclass(frozen=True)
class TimedRows(LogRows):
    """Where each good row came from and its instant; what reading the files found.

    Attributes
    ----------
    file : numpy.ndarray of str
        The file each row came from, as given relative to the campaign's folder.
    row : numpy.ndarray of int
        The 1-based data row in its file.
    site : numpy.ndarray of str
        The row's site id (``''`` when a log kind has none).
    time_utc : numpy.ndarray of datetime64[ms]
        The row's instant [UTC].
    time_column : numpy.ndarray of str
        The column the instant came from (``time_utc`` or ``time_local``).
    problems : tuple of RowProblem
        Every rejected row or file.
    rows_read : int
        Data rows read, good and bad.
    ignored_columns : tuple of str
        Columns the reader does not know, in order of first appearance.
    notes : tuple of str
        One line per file read in a form other than the plain one (``;`` separators,
        decimal commas, UTF-16 ...); not problems: every reading in such a file is kept.
    """

    file: np.ndarray
    row: np.ndarray
    site: np.ndarray
    time_utc: np.ndarray
    time_column: np.ndarray
    _: KW_ONLY
    problems: tuple[RowProblem, ...] = ()
    rows_read: int = 0
    ignored_columns: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
