"""The half-moon field sheet for one site and quarter: the site's true half moon and its windows
(Sun and Moon both high enough, the Sun far enough from the Moon) in the site's clock time."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np

from firstrung import __version__
from firstrung.errors import InputError


def _clock(text: str, zone: str | None) -> str:
    t = dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
    local = t.astimezone(ZoneInfo(zone)) if zone else t
    return local.strftime("%Y-%m-%d %H:%M")


def render_phases_sheet(campaign, site, date, paper: str = "a4", *, blind: bool = False) -> str:
    """The HTML half-moon sheet for ``site`` (a campaign ``Site``) and the quarter within two days of ``date``."""
    from firstrung.methods.phases.present import phase_plan_to_json
    from firstrung.methods.phases.run import plan_phases
    from firstrung.methods.shadows.sheet import PAPER_SIZES, _environment
    from firstrung.numbers import latitude_text, longitude_text
    from firstrung.safety import PHASES_CAUTION

    day = np.datetime64(date, "D")
    data = phase_plan_to_json(plan_phases(campaign, str(day - 2), str(day + 2)))
    if not data["quarters"]:
        raise InputError(f"--date: no first or last quarter within two days of {day}; 'firstrung plan phases' lists them")
    q = min(data["quarters"], key=lambda x: abs(np.datetime64(x["dichotomy_utc"][:19]) - np.datetime64(str(day) + "T12:00")))
    here = q["sites"][site.id]
    zone = site.timezone
    windows = [{"start": _clock(w["start_utc"], zone), "end": _clock(w["end_utc"], zone)[11:],
                "hours": w["duration_min"] / 60.0, "contains": w["contains_dichotomy"],
                "sun_alt": w["sun_altitude_deg"], "moon_alt": w["moon_altitude_deg"]} for w in here["windows"]]
    return _environment().get_template("phases_sheet.html.j2").render(
        campaign=campaign.name, site=site, date=str(day), version=__version__, caution=PHASES_CAUTION,
        zone=zone or "UTC", latitude=latitude_text(site.latitude_deg), longitude=longitude_text(site.longitude_deg),
        quarter=q["quarter"], half_local=_clock(here["dichotomy_utc"], zone), half_utc=here["dichotomy_utc"][11:19],
        quadrature_local=_clock(q["quadrature_utc"], zone), windows=windows, page_size=PAPER_SIZES[paper],
        blind=blind, sun_alt=here["sun_altitude_deg"], moon_alt=here["moon_altitude_deg"],
    )


def site_sheet(campaign, site_id: str, day: str, paper: str, blind: bool = False) -> tuple[str, str | None]:
    """One site's sheet for the half moon nearest a day: its HTML (and no warning)."""
    return render_phases_sheet(campaign, campaign.site(site_id), day, paper, blind=blind), None

