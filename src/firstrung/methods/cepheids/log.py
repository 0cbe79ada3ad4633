"""The light-curve log: magnitudes of a star, each with its one-sigma and its band.

Columns: ``star`` (a ``[[star]]``'s id or name), ``time_utc`` (or ``time_local`` with a site
that has a time zone), ``magnitude``, ``magnitude_sigma`` [mag], ``band`` (``V``, ``I``,
``K``, ...), optional ``site``, ``observer``, ``note``.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import Campaign
from firstrung.csv_cells import TIME_COLUMNS, cell_text, got
from firstrung.log_record import TimedRows
from firstrung.star_rows import star_site_and_time
from firstrung.tabular import Row, Slot, read_log

#: Largest stated error of one magnitude [mag].
MAX_SIGMA_MAG = 2.0


@dataclass(frozen=True)
class LightCurveLog(TimedRows):
    """The good rows of light-curve logs and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        Where each row came from, its site id (``''`` when none) and its instant [UTC].
    star, band : numpy.ndarray of str
    magnitude, magnitude_sigma : numpy.ndarray of float
        [mag]
    observer, note : numpy.ndarray of object
    """

    star: np.ndarray
    magnitude: np.ndarray
    magnitude_sigma: np.ndarray
    band: np.ndarray
    observer: np.ndarray
    note: np.ndarray


LOG_SLOTS = (
    Slot(("star",), required=True),
    Slot(TIME_COLUMNS, required=True),
    Slot(("magnitude",), required=True, numeric=True),
    Slot(("magnitude_sigma",), required=True, numeric=True),
    Slot(("band",), required=True),
    Slot(("site",)),
    Slot(("observer",)),
    Slot(("note",)),
)


def normalised_band(text: str) -> str:
    """A band as typed, spaces dropped, a one-letter band upper-cased (``v`` is ``V``).

    >>> normalised_band(" v "), normalised_band("Ks")
    ('V', 'Ks')
    """
    band = "".join(text.split())
    return band.upper() if len(band) == 1 else band


def _parse_light_curve_row(row: Row, campaign: Campaign) -> dict:
    star, site, t = star_site_and_time(row, campaign)
    band = normalised_band(row.cell("band"))
    if not band or len(band) > 12:
        row.problem(row.column("band"), f"expected a photometric band such as V, I or K, got {got(row.cell('band'))}")
    return {
        "star": star,
        "site": site,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "magnitude": row.number("magnitude", "a magnitude between -30 and 30", lambda x: -30.0 <= x <= 30.0,
                                required=True),
        "magnitude_sigma": row.number("magnitude_sigma", f"a positive error up to {MAX_SIGMA_MAG:g} mag",
                                      lambda x: 0.0 < x <= MAX_SIGMA_MAG, required=True),
        "band": band,
        "observer": cell_text(row, "observer"),
        "note": cell_text(row, "note"),
    }


def read_light_curve_logs(campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None) -> LightCurveLog:
    """Read light-curve logs: the good rows and a problem for each bad one (never raises on content)."""
    return read_log(
        LightCurveLog, campaign, "light_curves", paths, LOG_SLOTS, _parse_light_curve_row,
        dict(star=str, magnitude=float, magnitude_sigma=float, band=str, observer=object, note=object),
    )


#: Julian date of the Unix epoch [d].
UNIX_EPOCH_JD = 2440587.5


def julian_date_utc(time_utc) -> np.ndarray:
    """Julian dates of UTC instants [d] (the UTC scale: a period's few-second drift is far below its error).

    >>> float(julian_date_utc(np.array(["2000-01-01T12:00"], dtype="datetime64[ms]"))[0])
    2451545.0
    """
    return np.asarray(time_utc, dtype="datetime64[ms]").astype(np.int64) / 86_400_000.0 + UNIX_EPOCH_JD


def main_band(bands) -> str:
    """The band most rows give (ties: the first in alphabetical order).

    >>> main_band(np.array(["V", "V", "I"]))
    'V'
    """
    names, counts = np.unique(np.asarray(bands, dtype=str), return_counts=True)
    return str(names[np.argmax(counts)])
