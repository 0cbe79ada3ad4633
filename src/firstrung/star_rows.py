"""What the star logs (``astrometry``, ``light_curves``) share: the star a row names, its
optional site and its time.

A row names its star by the ``[[star]]``'s id or name (case and surrounding spaces
ignored); its ``site`` is optional. Its time is ``time_utc`` or, with a site that has a
time zone, ``time_local``.
"""

from __future__ import annotations

import numpy as np

from firstrung.csv_cells import got
from firstrung.times import TimeFormatError, in_ephemeris_span, parse_local, parse_utc


def star_site_and_time(row, campaign) -> tuple[str, str, np.datetime64]:
    """The row's star id, site id (``''`` when none) and UTC time (NaT after a problem)."""
    text = row.cell("star")
    star = campaign.star_matching(text) if text else None
    known = ", ".join(s.id for s in campaign.stars) or "none: add a [[star]] to the campaign file"
    if star is None:
        row.problem(row.column("star"), f"expected a star of the campaign ({known}), got {got(text)}")
    site_text = row.cell("site")
    site = None
    if site_text:
        site = campaign.site_matching(site_text)
        if site is None:
            row.problem(row.column("site"), f"unknown site {got(site_text)} (known: {', '.join(campaign.site_ids) or 'none'})")
    nat = np.datetime64("NaT", "ms")
    column = row.column("time_utc")
    if column is None:
        row.problem(None, "expected a time_utc or time_local column")
        return (star.id if star else text), (site.id if site else site_text), nat
    cell = row.cell("time_utc")
    try:
        if cell == "":
            raise TimeFormatError(f"expected an ISO 8601 time such as 2027-09-12T21:40:00Z, got {got(cell)}")
        if column == "time_utc":
            t = parse_utc(cell)
        elif site is None or site.timezone is None:
            row.problem(column, "a local time needs the row's site with a timezone in the campaign file; give time_utc")
            t = nat
        else:
            t = parse_local(cell, site.timezone)
    except TimeFormatError as error:
        row.problem(column, error.message)
        t = nat
    if not np.isnat(t) and not in_ephemeris_span(t):
        row.problem(column, f"expected a time within the span of the bundled ephemeris (1900-2053), got {got(cell)}")
        t = nat
    return (star.id if star else text), (site.id if site else ""), t
