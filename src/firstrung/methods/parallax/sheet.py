"""The star field sheet for one site and night (``sheet --kind parallax`` or ``--kind cepheids``):
the dark window in the site's clock time, each campaign star's altitude through the night and when
it stands highest in a dark sky, and blank rows for positions or magnitudes."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np

from firstrung import __version__
from firstrung.errors import InputError

#: Sampling of the night on the sheet [min].
SHEET_STEP_MIN = 10


def _clock(t_utc, zone: str | None) -> str:
    aware = np.datetime64(t_utc, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)
    return (aware.astimezone(ZoneInfo(zone)) if zone else aware).strftime("%H:%M")


def night_view(campaign, site, day: str) -> dict:
    """The night that starts at the site's local noon of ``day``: its dark window and each star's altitudes."""
    from firstrung.ephemeris import sun_position
    from firstrung.ephemeris.stars import parallax_factors, star_altitude_deg
    from firstrung.methods.parallax.prediction import DARK_SUN_DEG, GOOD_ALTITUDE_DEG
    from firstrung.star_catalogue import campaign_star_entry

    noon = (np.datetime64(day, "D").astype("datetime64[ms]") + np.timedelta64(12 * 3600_000, "ms")
            - np.timedelta64(int(round(site.longitude_deg / 15.0 * 3600_000)), "ms"))
    t = noon + (np.arange(0, 24 * 60, SHEET_STEP_MIN) * 60_000).astype("timedelta64[ms]")
    sun = sun_position(t, site.latitude_deg, site.longitude_deg, site.elevation_m).altitude_deg
    dark = sun < DARK_SUN_DEG
    if not np.any(dark):
        return {"dark": None, "stars": []}
    first, last = t[np.argmax(dark)], t[len(dark) - 1 - np.argmax(dark[::-1])]
    hours = [k for k in range(t.size) if dark[k] and (k * SHEET_STEP_MIN) % 60 == 0]
    stars = []
    for star in campaign.stars:
        alt = star_altitude_deg(star.ra_deg, star.dec_deg, t, site.latitude_deg, site.longitude_deg)
        good = dark & (alt >= GOOD_ALTITUDE_DEG)
        best = int(np.argmax(np.where(dark, alt, -np.inf)))
        entry = campaign_star_entry(star)
        f_ra, f_dec = parallax_factors(star.ra_deg, star.dec_deg, t[[best]])
        stars.append({
            "id": star.id, "name": star.name, "best": _clock(t[best], site.timezone), "best_alt": float(alt[best]),
            "well_placed_h": float(good.sum() * SHEET_STEP_MIN / 60.0),
            "altitudes": [float(alt[k]) for k in hours],
            "shift_ra_mas": None if entry is None else float(entry.parallax_mas * f_ra[0]),
            "shift_dec_mas": None if entry is None else float(entry.parallax_mas * f_dec[0]),
            "period_days": star.period_days,
        })
    return {"dark": (_clock(first, site.timezone), _clock(last, site.timezone)),
            "hours": [_clock(t[k], site.timezone) for k in hours], "stars": stars}


def render_star_sheet(campaign, site, day: str, paper: str = "a4", *, blind: bool = False, kind: str = "parallax") -> str:
    """The HTML star sheet of ``kind`` (``parallax`` or ``cepheids``) for one site and night."""
    from firstrung.methods.shadows.sheet import PAPER_SIZES, _environment
    from firstrung.numbers import latitude_text, longitude_text
    from firstrung.safety import STARS_NOTE

    if not campaign.stars:
        raise InputError("no [[star]] in the campaign file: a star sheet needs a target")
    view = night_view(campaign, site, day)
    if view["dark"] is None:
        raise InputError(f"--date: the sky never gets dark (Sun below -12 deg) at {site.id} on the night of {day}")
    return _environment().get_template("star_sheet.html.j2").render(
        campaign=campaign.name, site=site, date=day, version=__version__, caution=STARS_NOTE, kind=kind,
        zone=site.timezone or "UTC", latitude=latitude_text(site.latitude_deg),
        longitude=longitude_text(site.longitude_deg), view=view, page_size=PAPER_SIZES[paper], blind=blind,
    )


def site_sheet(campaign, site_id: str, day: str, paper: str, blind: bool = False) -> tuple[str, str | None]:
    """One site's parallax sheet for the night of a day: its HTML (and no warning)."""
    return render_star_sheet(campaign, campaign.site(site_id), day, paper, blind=blind, kind="parallax"), None
