"""Sites that shadow-log rows carry themselves (open networks): no ``[[site]]`` table to write.

A shadow-log row may give its own ``latitude_deg`` and ``longitude_deg``
(together), and optionally ``elevation_m`` and ``timezone``; its ``site`` cell
is then any name (a school). :func:`with_row_sites` reads those columns from
the campaign's shadow logs and adds one site per name (names compared without
regard to case and surrounding spaces, as the ``site`` cell is matched).

Rows of one name must agree on the position within :data:`AGREE_KM`; when
they do not, every row of that name is refused with both positions named
(which one is right cannot be told from the log), and the name gets no site.
A row whose name is a declared ``[[site]]`` must agree with it the same way.
A row with a bad position cell is refused with the cell named. The refused
rows travel with the campaign (``Campaign.row_problems``) so that every
reader of the shadow logs leaves them out and reports them.
"""

from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from firstrung.campaign_model import Campaign, Gnomon, Site
from firstrung.csv_cells import Slot, got
from firstrung.errors import InputError, RowProblem
from firstrung.tabular import _read_table, display_name

#: Rows of one name must give positions this close to each other [km] (the Contract's 1 km).
AGREE_KM = 1.0
#: Radius of the sphere used to compare two positions of one site [km]: the IUGG mean radius is
#: plenty for a 1 km test (common practice).
_SPHERE_KM = 6371.0
#: Accepted elevations [m]: below the Dead Sea shore to above any school.
ELEVATION_RANGE_M = (-500.0, 9000.0)

#: The position columns of a shadow log (all optional; latitude and longitude come together).
POSITION_SLOTS = (
    Slot(("latitude_deg",), numeric=True),
    Slot(("longitude_deg",), numeric=True),
    Slot(("elevation_m",), numeric=True),
    Slot(("timezone",)),
)
_SLOTS = (Slot(("site",)),) + POSITION_SLOTS + (Slot(("gnomon_m", "gnomon_cm", "gnomon_mm"), numeric=True),)
_GNOMON_FACTORS = {"gnomon_m": 1.0, "gnomon_cm": 0.01, "gnomon_mm": 0.001}


@dataclass(frozen=True)
class _Mark:
    """One row's position."""

    file: str
    row: int
    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float
    timezone: str | None
    gnomon_m: float = math.nan


def site_id_for(name: str, taken: set[str]) -> str:
    """A site id (letters, digits, ``-``, ``_``) for a free-text name, unique among ``taken``.

    >>> site_id_for("École Jules Ferry (Lyon)", set())
    'ecole-jules-ferry-lyon'
    >>> site_id_for("ridge", {"ridge"})
    'ridge-2'
    """
    plain = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode("ascii").lower()
    base = re.sub(r"[^a-z0-9_-]+", "-", plain).strip("-") or "site"
    found, k = base, 2
    while found in taken:
        found, k = f"{base}-{k}", k + 1
    return found


def _where(m: _Mark) -> str:
    return f"{m.latitude_deg:.4f}, {m.longitude_deg:.4f} ({m.file} row {m.row})"


def _apart_km(lat1, lon1, lat2, lon2):
    """Great-circle distance on a sphere [km] (haversine), vectorised."""
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dlat, dlon = p2 - p1, np.radians(np.asarray(lon2) - np.asarray(lon1))
    a = np.sin(dlat / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dlon / 2) ** 2
    return 2.0 * _SPHERE_KM * np.arcsin(np.sqrt(np.clip(a, 0.0, 1.0)))


def _number(table, cells: dict, column: str | None, low: float, high: float, what: str,
            label: str, row: int, problems: list) -> float | None:
    cell = cells.get(column, "") if column else ""
    if cell == "":
        return math.nan
    value, reason = table.read_number(cell)
    if value is None or not low <= value <= high:
        why = "" if reason is None else f" ({reason})"
        problems.append(RowProblem(label, row, column, f"expected {what}, got {got(cell)}{why}"))
        return None
    return value


def _may_hold_positions(path: Path) -> bool:
    """False when the file's first 64 kB name no latitude column (the usual log: nothing more is read).

    Unreadable files say True: the full read reports nothing, and the log reader says why.
    """
    try:
        with open(path, "rb") as f:
            head = f.read(65536)
    except (OSError, ValueError):
        return False
    text = head.decode("utf-16", "ignore") if head.startswith((b"\xff\xfe", b"\xfe\xff")) else head.decode("latin-1")
    return "latitude" in text.lower()


def _marks_of_file(path: Path, campaign: Campaign, problems: list) -> list[_Mark]:
    """Every row of one file that gives a position, with a problem for each bad position cell."""
    from firstrung.times import TimeFormatError, check_zone

    if not _may_hold_positions(path):
        return []
    label = display_name(path, campaign)
    table = _read_table(path, label, _SLOTS, columnar=True)
    chosen = table.chosen
    lat_col, lon_col = chosen.get("latitude_deg"), chosen.get("longitude_deg")
    if lat_col is None and lon_col is None:
        return []
    chunks = getattr(table, "chunks", None)
    if chunks is not None:  # read a slice of lines at a time (each chunk its own number reading)
        rows = [(chunk, chunk.numbers[k], chunk.cells_of(k)) for chunk in chunks for k in range(len(chunk.numbers))]
    elif table.columns is not None:
        rows = [(table, table.numbers[k], table.cells_of(k)) for k in range(len(table.numbers))]
    else:
        rows = [(table, number, cells) for number, cells in table.rows if cells]
    site_col, elev_col, zone_col = chosen.get("site"), chosen.get("elevation_m"), chosen.get("timezone")
    gnomon_col = chosen.get("gnomon_m")
    marks, zones = [], {}
    for part, number, cells in rows:
        name = cells.get(site_col, "").strip() if site_col else ""
        lat_cell = cells.get(lat_col, "") if lat_col else ""
        lon_cell = cells.get(lon_col, "") if lon_col else ""
        if not name or (lat_cell == "" and lon_cell == ""):
            continue
        if (lat_cell == "") != (lon_cell == ""):
            missing = ("latitude_deg", lat_col) if lat_cell == "" else ("longitude_deg", lon_col)
            problems.append(RowProblem(label, number, missing[1] or missing[0],
                                       "give latitude_deg and longitude_deg together (the row's own position)"))
            continue
        bad = len(problems)
        lat = _number(part, cells, lat_col, -90.0, 90.0, "a latitude from -90 to 90 deg (+ north)",
                      label, number, problems)
        lon = _number(part, cells, lon_col, -180.0, 180.0, "a longitude from -180 to 180 deg (+ east)",
                      label, number, problems)
        low, high = ELEVATION_RANGE_M
        elev = _number(part, cells, elev_col, low, high, f"an elevation from {low:g} to {high:g} m",
                       label, number, problems)
        zone = cells.get(zone_col, "").strip() if zone_col else ""
        if zone and zone not in zones:
            try:
                check_zone(zone)
                zones[zone] = True
            except (InputError, TimeFormatError):
                zones[zone] = False
        if zone and not zones[zone]:
            problems.append(RowProblem(label, number, zone_col,
                                       f"expected an IANA time zone such as Europe/Paris, got {got(zone)}"))
        if len(problems) > bad:
            continue
        gnomon = math.nan
        if gnomon_col is not None:  # checked by the log's reader; here only the site's plain height
            value, _ = part.read_number(cells.get(gnomon_col, ""))
            gnomon = value * _GNOMON_FACTORS[gnomon_col] if value is not None and value > 0 else math.nan
        marks.append(_Mark(label, number, name, float(lat), float(lon),
                           0.0 if math.isnan(elev) else float(elev), zone or None, gnomon))
    return marks


def with_row_sites(campaign: Campaign, label: str | None = None) -> Campaign:
    """The campaign with a site for every name its shadow-log rows give a position for.

    Returns the campaign unchanged when no shadow log carries positions.
    With ``label`` (the campaign file, for the message), a campaign left with
    no site and no star is refused.
    """
    out = _cached(campaign)
    if label is not None and not out.sites and not out.stars:
        raise InputError("no [[site]] table; a campaign needs at least one site (id, latitude_deg, longitude_deg) "
                         "or shadow-log rows that give their own latitude_deg and longitude_deg", file=label)
    return out


#: The last campaign given its row sites, by the campaign and its logs' sizes and times (one command
#: reads its campaign more than once; a log that changes is read again).
_LAST: dict = {}


def _cached(campaign: Campaign) -> Campaign:
    import os

    stamps = []
    for path in campaign.logs.get("shadows", ()):
        try:
            info = os.stat(path)
            stamps.append((str(path), info.st_mtime_ns, info.st_size))
        except (OSError, ValueError):
            stamps.append((str(path), None, None))
    key = (id(campaign), tuple(stamps))
    hit = _LAST.get(key)
    if hit is not None and hit[0] is campaign:
        return hit[1]
    out = _with_row_sites(campaign)
    _LAST.clear()
    _LAST[key] = (campaign, out)
    return out


def _with_row_sites(campaign: Campaign) -> Campaign:
    problems: list[RowProblem] = []
    marks: list[_Mark] = []
    for path in campaign.logs.get("shadows", ()):
        marks.extend(_marks_of_file(Path(path), campaign, problems))
    if not marks and not problems:
        return campaign
    groups: dict[str, list[_Mark]] = {}
    for m in marks:
        groups.setdefault(m.name.lower(), []).append(m)
    taken = set(campaign.site_ids)
    new_sites, new_ids = [], []
    for group in groups.values():
        first = group[0]
        declared = campaign.site_matching(first.name)
        lat = np.array([m.latitude_deg for m in group])
        lon = np.array([m.longitude_deg for m in group])
        if declared is None and len(group) == 1:
            apart = np.zeros(1)
        elif declared is not None:
            apart = _apart_km(declared.latitude_deg, declared.longitude_deg, lat, lon)
            worst = int(np.argmax(apart))
            if apart[worst] > AGREE_KM:
                where = (f"the campaign file's {declared.latitude_deg:.4f}, {declared.longitude_deg:.4f} "
                         f"(site '{declared.id}')")
                _refuse(group, where, group[worst], float(apart[worst]), problems)
            continue
        else:
            apart = _apart_km(lat[0], lon[0], lat, lon)
        worst = int(np.argmax(apart))
        if apart[worst] > AGREE_KM:
            _refuse(group, _where(first), group[worst], float(apart[worst]), problems)
            continue
        site_id = site_id_for(first.name, taken)
        taken.add(site_id)
        elevation = next((m.elevation_m for m in group if m.elevation_m != 0.0), 0.0)
        zone = next((m.timezone for m in group if m.timezone), None)
        heights = [m.gnomon_m for m in group if m.gnomon_m == m.gnomon_m and m.gnomon_m < 100.0]
        # the school's rod, for planning and sheets (its rows give their own heights to the reduction)
        gnomon = Gnomon(float(np.median(heights))) if heights else None
        new_sites.append(Site(site_id, first.name, first.latitude_deg, first.longitude_deg, elevation, zone, gnomon))
        new_ids.append(site_id)
    return replace(
        campaign,
        sites=campaign.sites + tuple(new_sites),
        row_site_ids=campaign.row_site_ids + tuple(new_ids),
        row_problems=campaign.row_problems + tuple(sorted(problems, key=lambda p: (p.file, p.row or 0))),
    )


def _refuse(group: list[_Mark], first_where: str, other: _Mark, apart_km: float, problems: list) -> None:
    """Refuse every row of one name: its rows disagree on the position (both named)."""
    message = (
        f"site {got(group[0].name)}: its rows disagree on the position by {apart_km:,.1f} km: "
        f"{first_where} and {_where(other)}; one name needs one position (within {AGREE_KM:g} km), "
        "so its rows are not used"
    )
    problems.extend(RowProblem(m.file, m.row, "latitude_deg", message) for m in group)


def site_cells(campaign: Campaign, wanted) -> dict[tuple[str, int], str]:
    """The ``site`` cell of each (file, row) in ``wanted``, read again from the shadow logs (for rows a
    reader refused, whose school is still to be named). Rows without a site cell are left out."""
    wanted = set(wanted)
    files = {f for f, _ in wanted}
    out: dict[tuple[str, int], str] = {}
    for path in campaign.logs.get("shadows", ()):
        label = display_name(Path(path), campaign)
        if label not in files:
            continue
        table = _read_table(Path(path), label, (Slot(("site",)),), columnar=True)
        column = table.chosen.get("site")
        if column is None:
            continue
        chunks = getattr(table, "chunks", None)
        if chunks is not None:
            rows = ((chunk.numbers[k], chunk.cells_of(k)) for chunk in chunks for k in range(len(chunk.numbers)))
        elif table.columns is not None:
            rows = ((table.numbers[k], table.cells_of(k)) for k in range(len(table.numbers)))
        else:
            rows = ((number, cells) for number, cells in table.rows if cells)
        for number, cells in rows:
            if (label, int(number)) in wanted and cells.get(column, "").strip():
                out[(label, int(number))] = cells.get(column, "").strip()
    return out


def refused_rows(campaign: Campaign) -> set[tuple[str, int]]:
    """(file, row) of every row the position check refused."""
    return {(p.file, p.row) for p in campaign.row_problems if p.row is not None}


def without_refused_rows(campaign: Campaign, columns: dict, problems) -> tuple[dict, list[RowProblem]]:
    """A log's columns without the rows the position check refused, and its problems with theirs.

    A refused row may also have failed another cell's check: it is then left
    out once, and both problems are reported.
    """
    if not campaign.row_problems:
        return columns, list(problems)
    refused = refused_rows(campaign)
    files = np.asarray(columns["file"], dtype=str)
    rows = np.asarray(columns["row"], dtype=np.int64)
    drop = np.fromiter(((f, int(r)) in refused for f, r in zip(files, rows, strict=True)), bool, len(rows))
    if drop.any():
        columns = {name: values[~drop] for name, values in columns.items()}
    # a name refused for its positions has no site: the reader's "unknown site" for its rows says less
    kept = [p for p in problems if not ((p.file, p.row) in refused and p.message.startswith("unknown site"))]
    merged = sorted(kept + list(campaign.row_problems), key=lambda p: (p.file, p.row or 0))
    return columns, merged
