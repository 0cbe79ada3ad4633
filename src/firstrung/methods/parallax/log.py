"""The astrometry log: each epoch's measured place of a star, with its one-sigma.

Columns: ``star`` (a ``[[star]]``'s id or name), ``time_utc`` (or ``time_local`` with a
site that has a time zone), ``ra_deg``, ``dec_deg`` (ICRS, from the observer's own
reduction against reference stars), ``sigma_arcsec`` (one coordinate's one-sigma),
optional ``site``, ``observer``, ``note``.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.csv_cells import TIME_COLUMNS, cell_text
from firstrung.log_record import TimedRows
from firstrung.star_rows import star_site_and_time
from firstrung.tabular import Row, Slot, read_log

#: Largest stated error of one position [arcsec] (beyond it a row holds no parallax worth the name).
MAX_SIGMA_ARCSEC = 60.0


@dataclass(frozen=True)
class AstrometryLog(TimedRows):
    """The good rows of astrometry logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        Where each row came from, its site id (``''`` when none) and its instant [UTC].
    star : numpy.ndarray of str
        The ``[[star]]`` id.
    ra_deg, dec_deg : numpy.ndarray of float
        The measured ICRS place [deg].
    sigma_arcsec : numpy.ndarray of float
        One coordinate's one-sigma [arcsec].
    observer, note : numpy.ndarray of object
    """

    star: np.ndarray
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    sigma_arcsec: np.ndarray
    observer: np.ndarray
    note: np.ndarray


LOG_SLOTS = (
    Slot(("star",), required=True),
    Slot(TIME_COLUMNS, required=True),
    Slot(("ra_deg",), required=True, numeric=True),
    Slot(("dec_deg",), required=True, numeric=True),
    Slot(("sigma_arcsec",), required=True, numeric=True),
    Slot(("site",)),
    Slot(("observer",)),
    Slot(("note",)),
)


def _parse_astrometry_row(row: Row, campaign: Campaign) -> dict:
    star, site, t = star_site_and_time(row, campaign)
    return {
        "star": star,
        "site": site,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "ra_deg": row.number("ra_deg", "a right ascension from 0 to 360 degrees", lambda x: 0.0 <= x < 360.0,
                             required=True),
        "dec_deg": row.number("dec_deg", "a declination between -90 and 90 degrees", lambda x: -90.0 <= x <= 90.0,
                              required=True),
        "sigma_arcsec": row.number("sigma_arcsec", f"a positive error up to {MAX_SIGMA_ARCSEC:g} arcsec",
                                   lambda x: 0.0 < x <= MAX_SIGMA_ARCSEC, required=True),
        "observer": cell_text(row, "observer"),
        "note": cell_text(row, "note"),
    }


def read_astrometry_logs(campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None) -> AstrometryLog:
    """Read astrometry logs: the good rows and a problem for each bad one (never raises on content)."""
    return read_log(
        AstrometryLog, campaign, "astrometry", paths, LOG_SLOTS, _parse_astrometry_row,
        dict(star=str, ra_deg=float, dec_deg=float, sigma_arcsec=float, observer=object, note=object),
    )
