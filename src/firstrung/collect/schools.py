"""Schools that join an open network through the collection point's join link.

A school gives its name, its position (latitude and longitude, optional
elevation and IANA time zone) and its gnomon's height. The position is
checked by the code that reads a shadow log's own positions
(:func:`firstrung.open_sites.with_row_sites`), on a one-row log, so the join
form refuses exactly what ``firstrung check`` would refuse in a log, and names
the field. A joined school gets a site id made from its name (unique among the
campaign's sites and the schools already joined: a name whose id is taken is
refused, so the reader of the log gives the school the same id) and its own link; its
readings are exported under its name, with its position and gnomon in every
row: an open network's log (the design's "Open networks" contract), which ``check`` and
``reduce shadows`` read with no ``[[site]]`` table for it.
"""

from __future__ import annotations

import csv
import itertools
import math
from dataclasses import dataclass, replace
from pathlib import Path

from firstrung.campaign_model import Campaign, Gnomon, Site
from firstrung.errors import InputError

#: The position columns a shadow-log row may carry (open networks), as the join form asks them.
POSITION_COLUMNS = ("latitude_deg", "longitude_deg", "elevation_m", "timezone")
#: The gnomon's height, in one of these columns (the log's own names).
GNOMON_COLUMNS = ("gnomon_m", "gnomon_cm", "gnomon_mm")
#: Longest school name accepted [characters].
NAME_LIMIT = 80
#: Most schools one collection point takes (a bound on what a flood of joins can store).
MAX_SCHOOLS = 5000
_UNIT_WORDS = {"gnomon_m": "metres", "gnomon_cm": "centimetres", "gnomon_mm": "millimetres"}
_FACTORS_M = {"gnomon_m": 1.0, "gnomon_cm": 0.01, "gnomon_mm": 0.001}


@dataclass(frozen=True)
class School:
    """A school that joined: its site id, its name as typed and its log cells (position and gnomon)."""

    id: str
    name: str
    cells: tuple[tuple[str, str], ...]
    joined_utc: str

    @property
    def cell_map(self) -> dict[str, str]:
        return dict(self.cells)

    def site(self) -> Site:
        """The school as a campaign site (for its page's predictions and the check of its readings)."""
        c = self.cell_map
        column = next(n for n in GNOMON_COLUMNS if n in c)
        return Site(self.id, self.name, float(c["latitude_deg"]), float(c["longitude_deg"]),
                    float(c.get("elevation_m", "0")), c.get("timezone") or None,
                    Gnomon(float(c[column]) * _FACTORS_M[column]))

    def row_cells(self, cells: dict[str, str]) -> dict[str, str]:
        """A reading's cells with the school's position, and its gnomon unless the reading gives one.

        >>> s = School("ridge-school", "Ridge School", (("latitude_deg", "46.2"), ("longitude_deg", "7.4"),
        ...            ("gnomon_cm", "120")), "2027-03-20T10:00:00Z")
        >>> s.row_cells({"shadow_cm": "88.1"})
        {'shadow_cm': '88.1', 'latitude_deg': '46.2', 'longitude_deg': '7.4', 'gnomon_cm': '120'}
        >>> s.row_cells({"shadow_cm": "88.1", "gnomon_m": "1.2"})["gnomon_m"], s.site().gnomon.height_m
        ('1.2', 1.2)
        """
        own = {k: v for k, v in self.cells if not (k in GNOMON_COLUMNS and any(cells.get(g) for g in GNOMON_COLUMNS))}
        return {**cells, **own}


def serving_campaign(path) -> Campaign:
    """The campaign file as the collection point serves it.

    As :func:`firstrung.campaign.read_campaign` reads it, except that an open
    network with no site yet (no ``[[site]]``, no star, ``shadows = []``) is
    accepted: its schools join on line. Without a shadow log to collect, such
    a file is refused as ``read_campaign`` refuses it.
    """
    from firstrung.campaign import parse_campaign, read_campaign
    from firstrung.open_sites import with_row_sites

    try:
        return read_campaign(path)
    except InputError as error:
        try:
            text = Path(path).read_text(encoding="utf-8-sig")
            campaign = parse_campaign(text, path=path, allow_no_sites=True)
        except (OSError, UnicodeDecodeError, InputError):
            raise error from None
        from firstrung.collect.kinds import log_kind, named_kinds

        try:
            kinds = named_kinds(path)
        except InputError:
            raise error from None
        if campaign.sites or campaign.stars or not any(log_kind(k).slot_of("latitude_deg") for k in kinds):
            raise error from None  # a school can join only to send a log whose rows carry its position
        return with_row_sites(campaign)


def _number_text(cell: str) -> str:
    """A number cell the reader accepted, written with a decimal point (a decimal comma is read)."""
    value = float(cell.replace(",", "."))
    return repr(value) if value != int(value) or abs(value) >= 1e15 else str(int(value))


_counter = itertools.count()


def read_school(values: dict[str, str], campaign: Campaign, taken: set[str], folder: Path
                ) -> tuple[str, str, tuple[tuple[str, str], ...]] | tuple[None, str, str]:
    """A joining school from the form's cleaned values: (id, name, cells), or (None, field, reason).

    ``taken`` holds the lower-cased ids and names already in use (sites and schools).
    The position goes through the open-network row reader on a one-row log
    written in ``folder``.
    """
    from firstrung.csv_cells import got
    from firstrung.open_sites import site_id_for, with_row_sites

    name = values.get("name", "")
    if not name:
        return None, "name", "the school's name is needed"
    if len(name) > NAME_LIMIT:
        return None, "name", f"expected at most {NAME_LIMIT} characters, got {len(name)}"
    if not name[0].isalnum():
        return None, "name", f"expected a name that starts with a letter or a digit, got {got(name[:40])}"
    if name.lower() in taken:
        return None, "name", (f"{got(name)} has joined already (or is a site of the campaign): ask the coordinator "
                              "for its link, or tell the two apart in the name (add the town)")
    for column in ("latitude_deg", "longitude_deg"):
        if not values.get(column):
            return None, column, "a value is needed (degrees; latitude + north, longitude + east)"
    gnomon_column = values.get("column:gnomon_m") or "gnomon_cm"
    if gnomon_column not in GNOMON_COLUMNS:
        return None, "gnomon_m", f"expected a unit of {', '.join(GNOMON_COLUMNS)}, got {got(gnomon_column[:40])}"
    gnomon_cell = values.get("value:gnomon_m", "")
    if not gnomon_cell:
        return None, gnomon_column, "the gnomon's height is needed (from the tip to the board the shadow falls on)"
    site_id = site_id_for(name, set())
    if site_id in taken:  # the log names the school; the same id from its name, whatever the rows' order
        return None, "name", (f"{got(name)} reads as the site id {site_id!r}, which another site or school has: "
                              "tell the two apart in the name (add the town, or Latin letters)")
    path = folder / f"join-{next(_counter)}.csv"
    columns = ["site", *POSITION_COLUMNS, gnomon_column]
    with open(path, "w", encoding="utf-8", newline="") as f:  # ';': a decimal comma reads as in a log
        writer = csv.writer(f, delimiter=";")
        writer.writerow(columns)
        writer.writerow([name, *(values.get(c, "") for c in POSITION_COLUMNS), gnomon_cell])
    try:
        probe = replace(campaign, path=folder / "campaign.toml", logs={**campaign.logs, "shadows": (path,)})
        read = with_row_sites(probe)
    finally:
        path.unlink()
    problems = read.row_problems[len(campaign.row_problems):]
    if problems:
        return None, problems[0].column or "name", problems[0].message
    site = next((s for s in read.sites if s.id == site_id), None)
    if site is None:  # the reader kept no site for the row and said nothing: say what is known
        return None, "latitude_deg", "expected a position the open-network reader accepts"
    if site.gnomon is None:
        words = _UNIT_WORDS[gnomon_column]
        return None, gnomon_column, (f"expected a positive number of {words} below 100 m, got {got(gnomon_cell)} "
                                     "(a decimal point or comma, no thousands separator)")
    cells = [("latitude_deg", repr(site.latitude_deg)), ("longitude_deg", repr(site.longitude_deg))]
    if values.get("elevation_m"):
        cells.append(("elevation_m", _number_text(values["elevation_m"])))
    if site.timezone:
        cells.append(("timezone", site.timezone))
    cells.append((gnomon_column, _number_text(gnomon_cell)))
    if not all(math.isfinite(float(v)) for k, v in cells if k != "timezone"):
        return None, gnomon_column, "expected finite numbers"
    return site_id, name, tuple(cells)
