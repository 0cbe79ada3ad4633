"""What a campaign is: its sites with their gnomons, surveyed baselines, eclipse settings and logs\n(frozen dataclasses; :mod: reads them from the campaign file).\n"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from pathlib import Path
from zoneinfo import ZoneInfo

from firstrung.errors import InputError
from firstrung.patterns import pattern
from firstrung.times import check_zone

#: Reading error of the gnomon's height when the campaign does not give one [m].
DEFAULT_HEIGHT_SIGMA_M = 0.001


#: Reading error of one shadow length when the campaign does not give one [m].
DEFAULT_SHADOW_SIGMA_M = 0.002


#: Which tip of the shadow is marked: the sharp umbra edge (the Sun's upper
#: limb), the middle of the penumbra (the Sun's centre) or the faint outer edge
#: (the Sun's lower limb).
EDGES = ("umbra", "middle", "outer")


#: The kinds of log a campaign lists under ``[logs]``.
LOG_KINDS = ("shadows", "eclipse", "phases", "transits", "astrometry", "light_curves")


#: Site ids: letters, digits, ``-`` and ``_``.
SITE_ID_PATTERN = pattern(r"^[A-Za-z0-9_-]+$")


@dataclass(frozen=True)
class Gnomon:
    """A vertical gnomon: its height above the shadow plane and how it is read.

    Parameters
    ----------
    height_m : float
        Vertical height of the tip above the plane the shadow falls on [m].
    height_sigma_m : float
        One-sigma error of that height [m].
    shadow_sigma_m : float
        One-sigma reading error of one shadow length [m].
    edge : str
        Which tip of the shadow is marked: ``"umbra"``, ``"middle"`` or ``"outer"``.
    """

    height_m: float
    height_sigma_m: float = DEFAULT_HEIGHT_SIGMA_M
    shadow_sigma_m: float = DEFAULT_SHADOW_SIGMA_M
    edge: str = "umbra"


#: Parts of the Sun an angle instrument may be set on.
LIMBS = ("lower", "centre", "upper")


#: How the dates of a log's ``date`` column are written.
DATE_ORDERS = ("iso", "day-first", "month-first")


#: One reading's error of an angle instrument when the campaign does not give one [deg]
#: (a cardboard quadrant or a phone clinometer reads to about a quarter degree, common practice).
DEFAULT_ANGLE_SIGMA_DEG = 0.25


@dataclass(frozen=True)
class AngleInstrument:
    """An instrument that reads the Sun's altitude (quadrant, clinometer, theodolite).

    Parameters
    ----------
    sigma_deg : float
        One-sigma error of one reading [deg].
    limb : str
        The part of the Sun it is set on: ``"lower"``, ``"centre"`` or ``"upper"``.
    index_correction_deg : float
        Added to every reading [deg].
    index_correction_sigma_deg : float
        One-sigma error of that correction, common to every reading [deg].
    """

    sigma_deg: float = DEFAULT_ANGLE_SIGMA_DEG
    limb: str = "centre"
    index_correction_deg: float = 0.0
    index_correction_sigma_deg: float = 0.0


@dataclass(frozen=True)
class Site:
    """One observing site of a campaign.

    Parameters
    ----------
    id : str
        Short id used in the logs (letters, digits, ``-``, ``_``).
    name : str
        Free text shown in reports (the id when the file gives none).
    latitude_deg : float
        Geodetic WGS84 latitude, + north [deg].
    longitude_deg : float
        Longitude, + east [deg].
    elevation_m : float
        Height above the ellipsoid or sea level [m] (0 when not given).
    timezone : str or None
        IANA zone of the site's clocks; without it, local times are refused.
    gnomon : Gnomon or None
        The site's gnomon, when it does shadow work.
    """

    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float = 0.0
    timezone: str | None = None
    gnomon: Gnomon | None = None
    angle_instrument: AngleInstrument | None = None

    @property
    def zone(self) -> ZoneInfo | None:
        """The site's time zone, or ``None`` when the campaign gives none."""
        return None if self.timezone is None else check_zone(self.timezone)


@dataclass(frozen=True)
class Baseline:
    """A surveyed distance between two sites that replaces the map distance.

    Parameters
    ----------
    sites : tuple of str
        The two site ids.
    distance_km : float
        The distance between them [km].
    sigma_km : float
        Its one-sigma uncertainty [km].
    bearing_deg : float or None
        Bearing from the first site to the second, from north through east
        [deg], when known; the north-south component is then used.
    """

    sites: tuple[str, str]
    distance_km: float
    sigma_km: float
    bearing_deg: float | None = None


@dataclass(frozen=True)
class EclipseSettings:
    """Observer-measured Moon data for the purely observational eclipse reduction.

    Every field is ``None`` when the campaign does not give it; the ephemeris
    then supplies the value.

    Parameters
    ----------
    moon_diameter_arcmin, moon_diameter_sigma_arcmin : float or None
        The Moon's apparent diameter and its one-sigma error [arcmin].
    moon_rate_deg_per_h, moon_rate_sigma_deg_per_h : float or None
        The Moon's angular rate relative to the Earth's shadow, and its
        error [deg/h].
    moon_sky_rate_deg_per_h, moon_sky_rate_sigma_deg_per_h : float or None
        The Moon's angular rate against the stars, and its error [deg/h].
    """

    moon_diameter_arcmin: float | None = None
    moon_diameter_sigma_arcmin: float | None = None
    moon_rate_deg_per_h: float | None = None
    moon_rate_sigma_deg_per_h: float | None = None
    moon_sky_rate_deg_per_h: float | None = None
    moon_sky_rate_sigma_deg_per_h: float | None = None
    #: The site where the Moon's diameter and rate were measured (default: the site with the
    #: most timings of the eclipse), the interval of the rate and the instant of the diameter
    #: (defaults: the umbral phase U1-U4, greatest eclipse), UTC.
    moon_site: str | None = None
    moon_from_utc: str | None = None
    moon_to_utc: str | None = None
    moon_diameter_utc: str | None = None


@dataclass(frozen=True)
class Star:
    """One star of a campaign (``[[star]]``): its place and the extinction towards it.

    Parameters
    ----------
    id : str
        Short id used in the logs' ``star`` column.
    name : str
        Free text (the id when the file gives none).
    ra_deg, dec_deg : float
        ICRS right ascension and declination [deg].
    extinction_mag, extinction_sigma_mag : float or None
        Interstellar extinction in the light-curve log's band and its one-sigma [mag].
    hip : int or None
        Its Hipparcos number, when given (else the shipped catalogue is searched by position).
    period_days : float or None
        A Cepheid's known period, for planning its nights [d].
    """

    id: str
    name: str
    ra_deg: float
    dec_deg: float
    extinction_mag: float | None = None
    extinction_sigma_mag: float | None = None
    hip: int | None = None
    period_days: float | None = None


def _empty_logs() -> dict[str, tuple[Path, ...]]:
    return {kind: () for kind in LOG_KINDS}


@dataclass(frozen=True)
class Campaign:
    """A measurement campaign as read from its TOML file.

    Parameters
    ----------
    name : str
        The campaign's name (the file's stem when ``[campaign] name`` is absent).
    path : pathlib.Path or None
        The campaign file, as given; ``None`` when parsed from text.
    sites : tuple of Site
        In the order of the file.
    baselines : tuple of Baseline
        Surveyed distances.
    logs : dict of str to tuple of pathlib.Path
        Log files by kind (``"shadows"``, ``"eclipse"``, ``"phases"``; every
        key present), joined to the campaign file's folder.
    eclipse : EclipseSettings
        Observer-measured Moon data.
    """

    name: str
    path: Path | None = None
    sites: tuple[Site, ...] = ()
    baselines: tuple[Baseline, ...] = ()
    logs: dict[str, tuple[Path, ...]] = field(default_factory=_empty_logs)
    eclipse: EclipseSettings = field(default_factory=EclipseSettings)
    date_order: str = "iso"
    stars: tuple[Star, ...] = ()
    #: Sites that shadow-log rows gave themselves (open networks, see :mod:`firstrung.open_sites`),
    #: and the rows refused on the way (positions that disagree, bad position cells).
    row_site_ids: tuple[str, ...] = ()
    row_problems: tuple = ()

    def star_matching(self, cell: str) -> Star | None:
        """The star whose id or name is ``cell`` (case and surrounding spaces ignored), else ``None``.

        >>> Campaign("c", stars=(Star("dcep", "delta Cephei", 337.3, 58.4),)).star_matching("Delta Cephei").id
        'dcep'
        """
        return self._star_by_label.get(cell.strip().lower())

    @functools.cached_property
    def _star_by_label(self) -> dict[str, Star]:
        """Stars by id and by name, case and surrounding spaces ignored (ids first)."""
        labels: dict[str, Star] = {}
        for star in self.stars:
            labels.setdefault(star.name.strip().lower(), star)
        for star in self.stars:
            labels[star.id.lower()] = star
        return labels

    @functools.cached_property
    def site_ids(self) -> tuple[str, ...]:
        """The site ids, in the order of the file."""
        return tuple(site.id for site in self.sites)

    @functools.cached_property
    def _site_by_id(self) -> dict[str, Site]:
        return {site.id: site for site in self.sites}

    @functools.cached_property
    def _site_by_label(self) -> dict[str, Site]:
        """Sites by id and by name, case and surrounding spaces ignored (ids first)."""
        labels: dict[str, Site] = {}
        for site in self.sites:
            labels.setdefault(site.name.strip().lower(), site)
        for site in self.sites:
            labels[site.id.lower()] = site
        return labels

    def site_matching(self, cell: str) -> Site | None:
        """The site whose id or name is ``cell`` (case and surrounding spaces ignored), else ``None``.

        >>> Campaign("c", sites=(Site("ridge", "Ridge Dome", 46.0, 7.0),)).site_matching(" ridge dome ").id
        'ridge'
        """
        site = self._site_by_id.get(cell)
        return site if site is not None else self._site_by_label.get(cell.strip().lower())

    @property
    def folder(self) -> Path:
        """The folder log paths are relative to (the current one when parsed from text)."""
        return Path(".") if self.path is None else self.path.parent

    def logs_outside_folder(self) -> tuple[Path, ...]:
        r"""Log files that lie outside the campaign file's folder (an absolute path, ``..``, a link).

        They are read like any other (teachers share folders); commands say so,
        since ``check --accepted`` copies their lines.

        >>> from firstrung.campaign import parse_campaign
        >>> c = parse_campaign('[[site]]\nid = "a"\nlatitude_deg = 1\nlongitude_deg = 2\n'
        ...                    '[logs]\nshadows = ["logs/a.csv", "../b.csv"]\n', path="camp/c.toml")
        >>> [str(p) for p in c.logs_outside_folder()]
        ['camp/../b.csv']
        """
        try:
            home = self.folder.resolve()
        except (OSError, RuntimeError):
            return ()
        outside = []
        for paths in self.logs.values():
            for p in paths:
                try:
                    resolved = Path(p).resolve()
                except (OSError, RuntimeError, ValueError):
                    continue
                if not resolved.is_relative_to(home) and p not in outside:
                    outside.append(p)
        return tuple(outside)

    def site(self, site_id: str) -> Site:
        """Return the site with that id.

        Raises
        ------
        InputError
            When the campaign has no such site.
        """
        site = self._site_by_id.get(site_id)
        if site is not None:
            return site
        raise InputError(f"unknown site {site_id!r} (known: {', '.join(self.site_ids)})")

    def baseline(self, site_a: str, site_b: str) -> Baseline | None:
        """The surveyed baseline between two sites (in either order), or ``None``."""
        wanted = {site_a, site_b}
        for baseline in self.baselines:
            if set(baseline.sites) == wanted:
                return baseline
        return None
