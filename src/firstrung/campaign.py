"""The campaign file: sites, their gnomons, surveyed baselines and where the logs are.

A campaign is one TOML file (see the design's "Files" contract)::

    [campaign]
    name = "Autumn shadow exchange"

    [[site]]
    id = "ridge"
    name = "Ridge outreach dome"
    latitude_deg = 46.2
    longitude_deg = 7.4
    elevation_m = 620
    timezone = "Europe/Zurich"

    [site.gnomon]
    height_m = 1.0

    [logs]
    shadows = ["logs/shadows.csv"]

:func:`read_campaign` reads and checks it. Every problem is one
:class:`~firstrung.errors.InputError` whose text names the file and the TOML
key, e.g. ``campaign.toml:site[2].latitude_deg: expected ...``. Sites and
baselines are counted from 1 in these keys, in the order of the file.
"""

from __future__ import annotations

import datetime as dt
import math
import os
from pathlib import Path

from firstrung.campaign_model import (
    DATE_ORDERS,
    DEFAULT_ANGLE_SIGMA_DEG,
    DEFAULT_HEIGHT_SIGMA_M,
    DEFAULT_SHADOW_SIGMA_M,
    EDGES,
    LIMBS,
    LOG_KINDS,
    SITE_ID_PATTERN,
    AngleInstrument,
    Baseline,
    Campaign,
    EclipseSettings,
    Gnomon,
    Site,
    _empty_logs,
)
from firstrung.constants import WGS84_SEMI_MAJOR_AXIS_M
from firstrung.errors import InputError
from firstrung.patterns import pattern
from firstrung.times import check_zone
from firstrung.toml_plain import document as toml_document
from firstrung.toml_plain import syntax_error as toml_syntax_error

__all__ = [
    "DEFAULT_HEIGHT_SIGMA_M",
    "DEFAULT_SHADOW_SIGMA_M",
    "EDGES",
    "LOG_KINDS",
    "Baseline",
    "Campaign",
    "EclipseSettings",
    "Gnomon",
    "Site",
    "parse_campaign",
    "read_campaign",
]


#: Lowest and highest accepted site elevation [m]: the Dead Sea shore to above Everest's summit.
ELEVATION_RANGE_M = (-500.0, 9000.0)
#: Gnomon heights must be below this [m].
GNOMON_HEIGHT_LIMIT_M = 100.0
#: Gnomon heights must be at least this [m] (1 mm: anything smaller casts no readable shadow).
GNOMON_HEIGHT_MIN_M = 1e-3
#: A stated reading error of a shadow must be at least this [m] (0.01 mm: no shadow edge is
#: sharper; a zero or vanishing error would give one reading infinite weight).
SHADOW_SIGMA_MIN_M = 1e-5
#: Surveyed baselines must be at most this long [km]: half the WGS84 equator,
#: the longest shortest path between two points on the Earth's surface.
BASELINE_LIMIT_KM = math.pi * WGS84_SEMI_MAJOR_AXIS_M / 1000.0

_NO_SITES = "no [[site]] table; a campaign needs at least one site (id, latitude_deg, longitude_deg)"


def _distinct(paths) -> tuple[Path, ...]:
    """The paths in order, each file once: ``logs/x.csv`` and ``./logs/x.csv`` (or a link to it) are one log."""
    out, seen = [], set()
    for path in paths:
        key = os.path.normcase(os.path.realpath(path))
        if key not in seen:
            seen.add(key)
            out.append(path)
    return tuple(out)


_TOP_LEVEL_KEYS = ("campaign", "site", "baseline", "logs", "eclipse", "star")
_CAMPAIGN_KEYS = ("name",)
_SITE_KEYS = ("id", "name", "latitude_deg", "longitude_deg", "elevation_m", "timezone", "gnomon", "angle_instrument")
_ANGLE_KEYS = ("sigma_deg", "limb", "index_correction_deg", "index_correction_sigma_deg")
_GNOMON_KEYS = ("height_m", "height_sigma_m", "shadow_sigma_m", "edge")
_BASELINE_KEYS = ("sites", "distance_km", "sigma_km", "bearing_deg")
_ECLIPSE_KEYS = (
    "moon_diameter_arcmin",
    "moon_diameter_sigma_arcmin",
    "moon_rate_deg_per_h",
    "moon_rate_sigma_deg_per_h",
    "moon_sky_rate_deg_per_h",
    "moon_sky_rate_sigma_deg_per_h",
)
#: Where and when the observers measured the Moon (its place on the sky from a site differs
#: from the geocentric one): a site id and ISO 8601 UTC times.
_ECLIPSE_WHERE_KEYS = ("moon_site", "moon_from_utc", "moon_to_utc", "moon_diameter_utc")

#: Integers longer than this are shown by their length in messages.
_SHOWN_DIGITS = 20
#: Python refuses to convert integers with more digits than this (sys.get_int_max_str_digits).
_MAX_DIGITS = 4300

_TOML_POSITION_RE = pattern(
    r"^(?P<message>.*?)\s*\(at line (?P<line>\d+), column (?P<column>\d+)\)$"
)


# --- reading -----------------------------------------------------------------


def read_campaign(path: str | os.PathLike[str]) -> Campaign:
    """Read and check a campaign file.

    Parameters
    ----------
    path : str or path-like
        The campaign's TOML file (UTF-8; a BOM is accepted).

    Returns
    -------
    Campaign
        With log paths joined to the file's folder. Log files are not opened
        here; a missing one is reported when the logs are read.

    Raises
    ------
    InputError
        When the file is missing or unreadable, is not TOML, or breaks a rule
        of the campaign format; one line naming the file and the key.
    """
    label = os.fspath(path)
    file_path = Path(path)
    try:
        data = file_path.read_bytes()
    except FileNotFoundError:
        raise InputError("no such file", file=label) from None
    except IsADirectoryError:
        raise InputError("is a folder, expected a campaign file (TOML)", file=label) from None
    except OSError as error:
        raise InputError(f"cannot read the file: {error.strerror or error}", file=label) from None
    except ValueError:  # a NUL character in the path
        raise InputError("not a usable file name (it holds a NUL character)", file=label) from None
    if data.startswith((b"PK\x03\x04", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1")):
        raise InputError("a ZIP archive or office document, not a campaign file (TOML text)", file=label)
    if data.startswith((b"\xff\xfe", b"\xfe\xff", b"\x00\x00\xfe\xff")):
        kind = "UTF-32" if data.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")) else "UTF-16"
        raise InputError(f"{kind} text; save the campaign file as UTF-8", file=label)
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as error:
        raise InputError(
            f"not UTF-8 text (byte 0x{data[error.start]:02x} at offset {error.start}); "
            "save the campaign file as UTF-8",
            file=label,
        ) from None
    key = (label, data)
    if key not in _READ:  # the same file read twice in one command (its note, then its work) is parsed once
        _READ.clear()
        _READ[key] = parse_campaign(text, path=file_path)
    from firstrung.open_sites import with_row_sites

    return with_row_sites(_READ[key], label)  # read every time: the logs may have changed since


#: The last campaign read, by its path and bytes (a Campaign is frozen: sharing it is safe).
_READ: dict[tuple[str, bytes], Campaign] = {}


def parse_campaign(text: str, *, path: str | os.PathLike[str] | None = None, allow_no_sites: bool = False) -> Campaign:
    """Check the text of a campaign file.

    Parameters
    ----------
    text : str
        The TOML text.
    path : str or path-like, optional
        Where the text came from: names the file in messages, gives the
        default campaign name (its stem) and the folder log paths are
        relative to. Without it, messages say ``<campaign>``, the default
        name is ``campaign`` and log paths stay as written.
    allow_no_sites : bool, optional
        Accept no site, star or shadow log yet (an open network that schools join on line).

    Returns
    -------
    Campaign

    Raises
    ------
    InputError
        One line naming the file and the TOML key at fault.

    Examples
    --------
    >>> c = parse_campaign('''
    ... [[site]]
    ... id = "ridge"
    ... latitude_deg = 46.2
    ... longitude_deg = 7.4
    ... ''')
    >>> c.name, c.site_ids
    ('campaign', ('ridge',))
    """
    label = "<campaign>" if path is None else os.fspath(path)
    file_path = None if path is None else Path(path)
    if text.startswith("\ufeff"):
        text = text[1:]
    try:
        document = toml_document(text)  # the plain part of TOML read quickly
    except RecursionError:
        raise InputError("TOML syntax error: arrays or tables nested too deeply", file=label) from None
    except ValueError as error:  # tomllib's syntax error, or an integer of more digits than Python converts
        if toml_syntax_error(error):
            raise _syntax_error(error, label) from None
        message = str(error)
        if "digits" in message:
            message = f"a number too long to read (more than {_MAX_DIGITS} digits)"
        first_line = message.splitlines()[0] if message else type(error).__name__
        raise InputError(f"TOML syntax error: {first_line}", file=label) from None
    reader = _Reader(label)
    for key, value in document.items():
        if key not in _TOP_LEVEL_KEYS:
            what = "table" if isinstance(value, dict | list) else "top-level key"
            raise reader.unknown(key, key, _TOP_LEVEL_KEYS, what=what)

    default_name = "campaign" if file_path is None else file_path.stem
    name = reader.campaign_name(document.get("campaign"), default_name)
    from firstrung.campaign_stars import read_stars

    stars = read_stars(reader, document.get("star"))
    sites = reader.sites(document.get("site")) if "site" in document or not stars else ()
    baselines = reader.baselines(document.get("baseline"), sites)
    folder = Path(".") if file_path is None else file_path.parent
    logs = reader.logs(document.get("logs"), folder if file_path is not None else None)
    if not sites and not stars and not logs["shadows"] and not allow_no_sites:  # open networks: the shadow logs' rows may give the sites
        raise reader.error(None, _NO_SITES)
    eclipse = reader.eclipse(document.get("eclipse"))
    date_order = reader.date_order(document.get("logs"))
    return Campaign(
        name=name,
        path=file_path,
        sites=sites,
        baselines=baselines,
        logs=logs,
        eclipse=eclipse,
        date_order=date_order,
        stars=stars,
    )


def _syntax_error(error: ValueError, label: str) -> InputError:
    """An InputError ``file:line:column: TOML syntax error: ...`` from tomllib's error."""
    message = str(error)
    match = _TOML_POSITION_RE().match(message)
    if match is None:
        return InputError(f"TOML syntax error: {message}", file=label)
    return InputError(
        f"TOML syntax error: {match['message']}",
        file=label,
        row=int(match["line"]),
        column=match["column"],
    )


def _show(value: object) -> str:
    """A TOML value as it would be written, for messages."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return repr(value)
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, int) and abs(value) >= 10**_SHOWN_DIGITS:
        return f"an integer of {len(str(abs(value)))} digits"
    return str(value)


class _Reader:
    """Checks the parts of a parsed campaign document; raises on the first problem."""

    def __init__(self, label: str) -> None:
        self.label = label

    # --- generic checks ---------------------------------------------------------

    def error(self, key: str | None, message: str) -> InputError:
        return InputError(message, file=self.label, column=key)

    def unknown(
        self, key: str, shown: str, allowed: tuple[str, ...], *, what: str = "key"
    ) -> InputError:
        return self.error(shown, f"unknown {what} {key!r} (allowed: {', '.join(allowed)})")

    def table(self, value: object, key: str, how: str) -> dict:
        if not isinstance(value, dict):
            raise self.error(key, f"expected a table written as {how}, got {_show(value)}")
        return value

    def check_keys(self, table: dict, prefix: str, allowed: tuple[str, ...]) -> None:
        for key in table:
            if key not in allowed:
                raise self.unknown(key, f"{prefix}.{key}", allowed)

    def number(self, table: dict, prefix: str, key: str, expected: str, ok=None) -> float | None:
        """A finite TOML int or float (not a boolean), or ``None`` when absent."""
        if key not in table:
            return None
        value = table[key]
        where = f"{prefix}.{key}"
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.error(where, f"expected {expected}, got {_show(value)}")
        try:
            number = float(value)
        except OverflowError:  # an integer beyond the range of a float
            number = math.inf
        if not math.isfinite(number) or (ok is not None and not ok(number)):
            raise self.error(where, f"expected {expected}, got {_show(value)}")
        return number

    def required_number(self, table: dict, prefix: str, key: str, expected: str, ok=None) -> float:
        number = self.number(table, prefix, key, expected, ok)
        if number is None:
            raise self.error(f"{prefix}.{key}", f"missing; expected {expected}")
        return number

    def text(self, table: dict, prefix: str, key: str, expected: str) -> str | None:
        if key not in table:
            return None
        value = table[key]
        if not isinstance(value, str) or not value.strip():
            raise self.error(f"{prefix}.{key}", f"expected {expected}, got {_show(value)}")
        return value

    # --- the parts ----------------------------------------------------------------

    def campaign_name(self, value: object, default: str) -> str:
        if value is None:
            return default
        table = self.table(value, "campaign", "[campaign]")
        self.check_keys(table, "campaign", _CAMPAIGN_KEYS)
        name = self.text(table, "campaign", "name", "the campaign's name as text")
        return default if name is None else name.strip()

    def sites(self, value: object) -> tuple[Site, ...]:
        if value is None:
            return ()
        if not isinstance(value, list):
            raise self.error("site", "expected sites written as [[site]] (an array of tables)")
        sites: list[Site] = []
        first_use: dict[str, str] = {}
        for number, entry in enumerate(value, start=1):
            prefix = f"site[{number}]"
            site = self.site(entry, prefix)
            if site.id in first_use:
                raise self.error(
                    f"{prefix}.id",
                    f"duplicate site id {site.id!r} (already used by {first_use[site.id]})",
                )
            first_use[site.id] = prefix
            sites.append(site)
        return tuple(sites)

    def site(self, value: object, prefix: str) -> Site:
        table = self.table(value, prefix, "[[site]]")
        self.check_keys(table, prefix, _SITE_KEYS)
        if "id" not in table:
            raise self.error(f"{prefix}.id", "missing; expected a short site id such as 'ridge'")
        site_id = table["id"]
        if not isinstance(site_id, str) or not SITE_ID_PATTERN().match(site_id):
            raise self.error(
                f"{prefix}.id",
                f"expected a site id of letters, digits, '-' and '_', got {_show(site_id)}",
            )
        name = self.text(table, prefix, "name", "the site's name as text")
        latitude_deg = self.required_number(
            table,
            prefix,
            "latitude_deg",
            "a latitude between -90 and 90 degrees (+ north)",
            lambda x: -90.0 <= x <= 90.0,
        )
        longitude_deg = self.required_number(
            table,
            prefix,
            "longitude_deg",
            "a longitude between -180 and 180 degrees (+ east)",
            lambda x: -180.0 <= x <= 180.0,
        )
        low_m, high_m = ELEVATION_RANGE_M
        elevation_m = self.number(
            table,
            prefix,
            "elevation_m",
            f"an elevation between {low_m:g} and {high_m:g} m",
            lambda x: low_m <= x <= high_m,
        )
        timezone = None
        if "timezone" in table:
            try:
                timezone = check_zone(table["timezone"]).key
            except InputError as error:
                raise self.error(f"{prefix}.timezone", error.message) from None
        gnomon = None
        if "gnomon" in table:
            gnomon = self.gnomon(table["gnomon"], f"{prefix}.gnomon")
        angle_instrument = None
        if "angle_instrument" in table:
            angle_instrument = self.angle_instrument(table["angle_instrument"], f"{prefix}.angle_instrument")
        return Site(
            id=site_id,
            name=site_id if name is None else name,
            latitude_deg=latitude_deg,
            longitude_deg=longitude_deg,
            elevation_m=0.0 if elevation_m is None else elevation_m,
            timezone=timezone,
            gnomon=gnomon,
            angle_instrument=angle_instrument,
        )

    def angle_instrument(self, value: object, prefix: str) -> AngleInstrument:
        table = self.table(value, prefix, "[site.angle_instrument]")
        self.check_keys(table, prefix, _ANGLE_KEYS)
        sigma_deg = self.number(
            table, prefix, "sigma_deg", "a positive number of degrees below 10", lambda x: 0.0 < x < 10.0
        )
        index_deg = self.number(
            table, prefix, "index_correction_deg", "a correction between -10 and 10 degrees",
            lambda x: -10.0 <= x <= 10.0,
        )
        index_sigma_deg = self.number(
            table, prefix, "index_correction_sigma_deg", "a non-negative number of degrees below 10",
            lambda x: 0.0 <= x < 10.0,
        )
        limb = "centre"
        if "limb" in table:
            raw = table["limb"]
            limb = raw.strip().lower() if isinstance(raw, str) else ""
            if limb not in LIMBS:
                raise self.error(f"{prefix}.limb", f"expected 'lower', 'centre' or 'upper', got {_show(raw)}")
        return AngleInstrument(
            sigma_deg=DEFAULT_ANGLE_SIGMA_DEG if sigma_deg is None else sigma_deg,
            limb=limb,
            index_correction_deg=0.0 if index_deg is None else index_deg,
            index_correction_sigma_deg=0.0 if index_sigma_deg is None else index_sigma_deg,
        )

    def gnomon(self, value: object, prefix: str) -> Gnomon:
        table = self.table(value, prefix, "[site.gnomon]")
        self.check_keys(table, prefix, _GNOMON_KEYS)
        limit = GNOMON_HEIGHT_LIMIT_M
        height_m = self.required_number(
            table,
            prefix,
            "height_m",
            f"a gnomon height of at least {GNOMON_HEIGHT_MIN_M:g} m and below {limit:g} m",
            lambda x: GNOMON_HEIGHT_MIN_M <= x < limit,
        )
        height_sigma_m = self.number(
            table, prefix, "height_sigma_m", "a non-negative number of metres", lambda x: x >= 0.0
        )
        shadow_sigma_m = self.number(
            table, prefix, "shadow_sigma_m",
            f"a reading error of at least {SHADOW_SIGMA_MIN_M:g} m (no shadow is read exactly)",
            lambda x: x >= SHADOW_SIGMA_MIN_M,
        )
        edge = "umbra"
        if "edge" in table:
            raw = table["edge"]
            edge = raw.strip().lower() if isinstance(raw, str) else ""
            if edge not in EDGES:
                raise self.error(
                    f"{prefix}.edge", f"expected 'umbra', 'middle' or 'outer', got {_show(raw)}"
                )
        return Gnomon(
            height_m=height_m,
            height_sigma_m=DEFAULT_HEIGHT_SIGMA_M if height_sigma_m is None else height_sigma_m,
            shadow_sigma_m=DEFAULT_SHADOW_SIGMA_M if shadow_sigma_m is None else shadow_sigma_m,
            edge=edge,
        )

    def baselines(self, value: object, sites: tuple[Site, ...]) -> tuple[Baseline, ...]:
        if value is None:
            return ()
        if not isinstance(value, list):
            raise self.error(
                "baseline", "expected baselines written as [[baseline]] (an array of tables)"
            )
        known = tuple(site.id for site in sites)
        baselines: list[Baseline] = []
        first_use: dict[frozenset[str], str] = {}
        for number, entry in enumerate(value, start=1):
            prefix = f"baseline[{number}]"
            baseline = self.baseline(entry, prefix, known)
            pair = frozenset(baseline.sites)
            if pair in first_use:
                raise self.error(
                    f"{prefix}.sites",
                    f"sites {baseline.sites[0]!r} and {baseline.sites[1]!r} already have a "
                    f"baseline ({first_use[pair]})",
                )
            first_use[pair] = prefix
            baselines.append(baseline)
        return tuple(baselines)

    def baseline(self, value: object, prefix: str, known: tuple[str, ...]) -> Baseline:
        table = self.table(value, prefix, "[[baseline]]")
        self.check_keys(table, prefix, _BASELINE_KEYS)
        where = f"{prefix}.sites"
        expected = 'two different site ids such as ["ridge", "coast"]'
        if "sites" not in table:
            raise self.error(where, f"missing; expected {expected}")
        pair = table["sites"]
        if (
            not isinstance(pair, list)
            or len(pair) != 2
            or not all(isinstance(item, str) for item in pair)
        ):
            raise self.error(where, f"expected {expected}, got {_show(pair)}")
        for site_id in pair:
            if site_id not in known:
                raise self.error(where, f"unknown site {site_id!r} (known: {', '.join(known)})")
        if pair[0] == pair[1]:
            raise self.error(where, f"expected {expected}, got {pair[0]!r} twice")
        distance_km = self.required_number(
            table, prefix, "distance_km", "a positive distance in km", lambda x: x > 0.0
        )
        if distance_km > BASELINE_LIMIT_KM:
            raise self.error(
                f"{prefix}.distance_km",
                f"expected a distance of at most {BASELINE_LIMIT_KM:.1f} km (half the equator), "
                f"got {_show(table['distance_km'])}",
            )
        sigma_km = self.required_number(
            table, prefix, "sigma_km", "a non-negative uncertainty in km", lambda x: x >= 0.0
        )
        bearing_deg = self.number(
            table,
            prefix,
            "bearing_deg",
            "a bearing from 0 up to (not including) 360 degrees",
            lambda x: 0.0 <= x < 360.0,
        )
        return Baseline(
            sites=(pair[0], pair[1]),
            distance_km=distance_km,
            sigma_km=sigma_km,
            bearing_deg=bearing_deg,
        )

    def logs(self, value: object, folder: Path | None) -> dict[str, tuple[Path, ...]]:
        logs = _empty_logs()
        if value is None:
            return logs
        table = dict(self.table(value, "logs", "[logs]"))
        table.pop("date_order", None)
        self.check_keys(table, "logs", LOG_KINDS + ("date_order",))
        for kind, entry in table.items():
            items = [entry] if isinstance(entry, str) else entry
            if not isinstance(items, list) or not all(
                isinstance(item, str) and item.strip() for item in items
            ):
                raise self.error(
                    f"logs.{kind}",
                    f'expected a list of paths such as ["logs/{kind}.csv"], got {_show(entry)}',
                )
            paths = (Path(item) for item in items)
            from firstrung.log_paths import expand_log_paths  # folders and patterns: their files
            logs[kind] = _distinct(expand_log_paths(path if folder is None else folder / path for path in paths))
        return logs

    def date_order(self, value: object) -> str:
        if not isinstance(value, dict) or "date_order" not in value:
            return "iso"
        raw = value["date_order"]
        order = raw.strip().lower() if isinstance(raw, str) else ""
        if order not in DATE_ORDERS:
            raise self.error(
                "logs.date_order", f"expected 'iso', 'day-first' or 'month-first', got {_show(raw)}"
            )
        return order

    def eclipse(self, value: object) -> EclipseSettings:
        if value is None:
            return EclipseSettings()
        table = self.table(value, "eclipse", "[eclipse]")
        self.check_keys(table, "eclipse", _ECLIPSE_KEYS + _ECLIPSE_WHERE_KEYS)
        where = {"moon_site": self.text(table, "eclipse", "moon_site", "a site id as text")}
        expected_time = "an ISO 8601 UTC time such as 2029-06-26T03:22:00Z"
        for key in _ECLIPSE_WHERE_KEYS[1:]:
            raw = table.get(key)
            if raw is None:
                where[key] = None
                continue
            stamp = None
            if isinstance(raw, str):
                try:
                    stamp = dt.datetime.fromisoformat(raw.strip().replace("Z", "+00:00").replace("z", "+00:00"))
                except ValueError:
                    stamp = None
            elif isinstance(raw, dt.datetime):
                stamp = raw
            if stamp is None or stamp.utcoffset() != dt.timedelta(0):
                raise self.error(f"eclipse.{key}", f"expected {expected_time}, got {_show(raw)}")
            where[key] = stamp.replace(tzinfo=None).isoformat()
        if (where["moon_from_utc"] is None) != (where["moon_to_utc"] is None):
            raise self.error("eclipse.moon_to_utc", "give moon_from_utc and moon_to_utc together (the rate's interval)")
        if where["moon_from_utc"] is not None and not where["moon_to_utc"] > where["moon_from_utc"]:
            raise self.error("eclipse.moon_to_utc", "expected a time after eclipse.moon_from_utc")
        numbers = {}
        for key in _ECLIPSE_KEYS:
            unit = "arcmin" if key.endswith("_arcmin") else "deg/h"
            if "_sigma_" in key:
                numbers[key] = self.number(
                    table, "eclipse", key, f"a non-negative number in {unit}", lambda x: x >= 0.0
                )
            else:
                numbers[key] = self.number(
                    table, "eclipse", key, f"a positive number in {unit}", lambda x: x > 0.0
                )
        for value_key, sigma_key in (
            ("moon_diameter_arcmin", "moon_diameter_sigma_arcmin"),
            ("moon_rate_deg_per_h", "moon_rate_sigma_deg_per_h"),
            ("moon_sky_rate_deg_per_h", "moon_sky_rate_sigma_deg_per_h"),
        ):
            if numbers[sigma_key] is not None and numbers[value_key] is None:
                raise self.error(f"eclipse.{sigma_key}", f"given without eclipse.{value_key}")
        if numbers["moon_rate_deg_per_h"] is not None and (
            numbers["moon_sky_rate_deg_per_h"] is not None
        ):
            raise self.error(
                "eclipse.moon_sky_rate_deg_per_h",
                "give moon_rate_deg_per_h (relative to the Earth's shadow) or "
                "moon_sky_rate_deg_per_h (against the stars), not both",
            )
        return EclipseSettings(**numbers, **where)
