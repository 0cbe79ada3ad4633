"""The transit field sheet for one site and day: the site's C1-C4 in its clock time and UTC, the
Sun's altitude and where on the limb to look at each, a chart of the chord, boxes for the clock,
the instrument and its filter, and the solar-safety caution (this is the one rung where the
Sun itself is observed)."""

from __future__ import annotations

import numpy as np

from firstrung import __version__
from firstrung.errors import InputError

EVENT_WORDS = {
    "C1": "first contact: the planet's dark notch appears on the limb (seen only after it; note when first seen)",
    "C2": "second contact: the planet's disc wholly inside; time when the thread of light between it and "
          "the limb breaks (the black drop may delay it)",
    "greatest": "greatest transit: the planet nearest the Sun's centre (not timed)",
    "C3": "third contact: the planet's disc touches the limb from inside; time when the thread of light closes",
    "C4": "last contact: the notch leaves the limb",
}
#: Below this altitude of the Sun's centre a contact is hard to time [deg] (as ``plan transit`` warns).
LOW_SUN_DEG = 10.0


def _clock(t, zone: str | None) -> str:
    import datetime as dt
    from zoneinfo import ZoneInfo

    if t is None or np.isnat(t):
        return "—"
    nearest = (np.datetime64(t, "ms") + np.timedelta64(500, "ms")).astype("datetime64[s]")
    aware = nearest.astype(dt.datetime).replace(tzinfo=dt.UTC)
    return (aware.astimezone(ZoneInfo(zone)) if zone else aware).strftime("%H:%M:%S")


def _clock_face(position_angle_deg: float) -> str:
    """The position angle as an hour on a clock face with north at 12 and east at 9 (as on the sky)."""
    hour = round((360.0 - position_angle_deg) / 30.0) % 12
    return f"{12 if hour == 0 else hour} o'clock"


def _chart_svg(transits, k, site, contacts) -> str:
    """The Sun's disc with the chord seen from the site, north up and east left as on the sky."""
    from firstrung.methods.transit.chords import disc_offsets, planet_radius_on_disc, site_chords

    _, east, north, _ = site_chords(transits, k, [site.latitude_deg], [site.longitude_deg], [site.elevation_m])
    r, c = 70.0, 80.0
    rp = max(planet_radius_on_disc(transits, k) * r, 1.5)
    track = " ".join(f"{c - r * x:.1f},{c - r * y:.1f}" for x, y in zip(east[0], north[0], strict=True))
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{2 * c:.0f}" height="{2 * c:.0f}" '
             f'viewBox="0 0 {2 * c:.0f} {2 * c:.0f}" role="img" aria-label="the chord across the Sun">',
             f'<circle cx="{c}" cy="{c}" r="{r}" fill="#fbe9b7" stroke="#333" stroke-width="1"/>',
             f'<text x="{c}" y="8" font-size="8" text-anchor="middle">N</text>',
             f'<text x="1" y="{c + 3}" font-size="8">E</text>',
             f'<polyline points="{track}" fill="none" stroke="#555" stroke-width="0.8" stroke-dasharray="3,2"/>']
    itrs = None
    for name, tt in contacts:
        if not np.isfinite(tt):
            continue
        from firstrung.methods.transit.prediction import site_itrs_km

        itrs = site_itrs_km(site.latitude_deg, site.longitude_deg, site.elevation_m) if itrs is None else itrs
        x, y = (float(v[0]) for v in disc_offsets(transits, k, np.array([tt]), itrs))
        px, py = c - r * x, c - r * y
        # the label outside the limb, on the planet's radius from the Sun's centre
        lx, ly = c + (px - c) * 1.17, c + (py - c) * 1.17 + 2.5
        # C1 and C2 (C3 and C4) lie a planet's diameter apart: one label for each pair
        label = {"C1": "C1, C2", "C4": "C3, C4"}.get(name, name if len(contacts) < 4 else "")
        parts.append(f'<circle cx="{px:.1f}" cy="{py:.1f}" r="{rp:.1f}" fill="#111"/>'
                     f'<text x="{lx:.1f}" y="{ly:.1f}" font-size="7" text-anchor="middle">{label}</text>')
    parts.append("</svg>")
    return "".join(parts)


def render_transit_sheet(campaign_name: str, site, date, paper: str = "a4", *,
                         blind: bool = False) -> tuple[str, str | None]:
    """The HTML transit sheet for one site (a campaign ``Site``) and the transit of ``date``, and a warning."""
    from firstrung.methods.shadows.sheet import PAPER_SIZES, _environment
    from firstrung.methods.transit.prediction import (
        CONTACTS,
        contacts_at_sites,
        inferior_planet_transits,
    )
    from firstrung.numbers import latitude_text, longitude_text
    from firstrung.safety import TRANSIT_CAUTION, TRANSIT_CAUTION_MORE

    day = np.datetime64(date, "D")
    transits = inferior_planet_transits(f"{day - 1}T00:00Z", f"{day + 1}T23:59Z")
    near = [j for j in range(len(transits)) if abs(np.datetime64(transits.greatest_utc[j], "D") - day) <= 1]
    if not near:
        raise InputError(f"--date: no transit of Mercury or Venus within a day of {day}; "
                         "'firstrung plan transit' lists them")
    k = near[0]
    view = contacts_at_sites(transits, k, [site.latitude_deg], [site.longitude_deg], [site.elevation_m])
    zone = site.timezone
    rows, contacts = [], []
    for name in ("C1", "C2", "greatest", "C3", "C4"):
        if name == "greatest":
            rows.append({"event": name, "words": EVENT_WORDS[name], "local": "", "utc": "", "sun_alt": None,
                         "pa": "", "state": "", "timed": False})
            continue
        t = view.time_utc[name][0]
        if np.isnat(t):
            continue
        alt = float(view.sun_altitude_deg[name][0])
        pa = float(view.position_angle_deg[name][0])
        state = "Sun down" if alt < 0 else (f"Sun low ({alt:.0f}°)" if alt < LOW_SUN_DEG else "yes")
        rows.append({"event": name, "words": EVENT_WORDS[name], "local": _clock(t, zone), "utc": _clock(t, None),
                     "sun_alt": alt, "pa": f"{pa:.0f}° ({_clock_face(pa)})", "state": state, "timed": True})
        contacts.append((name, float(view.tt_jd[name][0])))
    timed = [r for r in rows if r["timed"]]
    if not any(r["sun_alt"] > 0 for r in timed):
        raise InputError(f"--date: the Sun is below the horizon at site '{site.id}' at every contact of the "
                         f"transit of {day}")
    low = [r["event"] for r in timed if 0 <= r["sun_alt"] < LOW_SUN_DEG]
    down = [r["event"] for r in timed if r["sun_alt"] < 0]
    warning = low_sun = None
    if low or down:
        parts = []
        if down:
            parts.append(f"the Sun is below the horizon at {', '.join(down)}")
        if low:
            parts.append(f"the Sun is under {LOW_SUN_DEG:.0f}° high at {', '.join(low)}")
        low_sun = " and ".join(parts)
        warning = f"at site '{site.id}' {low_sun}; those contacts are hard or impossible to time"
    planet = transits.planet[k]
    html = _environment().get_template("transit_sheet.html.j2").render(
        campaign=campaign_name, site=site, date=str(day), version=__version__, caution=TRANSIT_CAUTION,
        caution_full=TRANSIT_CAUTION_MORE, zone=zone or "UTC", latitude=latitude_text(site.latitude_deg),
        longitude=longitude_text(site.longitude_deg), planet=planet.capitalize(), rows=rows,
        greatest_utc=_clock(transits.greatest_utc[k], None), greatest_local=_clock(transits.greatest_utc[k], zone),
        chart=_chart_svg(transits, k, site, contacts), page_size=PAPER_SIZES[paper], blind=blind, low_sun=low_sun,
        duration_h=(transits.contacts_tt_jd["C4"][k] - transits.contacts_tt_jd["C1"][k]) * 24.0,
        contacts=CONTACTS, planet_arcsec=float(transits.planet_semidiameter_arcsec[k]) * 2,
    )
    return html, warning


def site_sheet(campaign, site_id: str, day: str, paper: str, blind: bool = False) -> tuple[str, str | None]:
    """One site's sheet for the transit of a day: its HTML and a warning when the Sun is low or down."""
    return render_transit_sheet(campaign.name, campaign.site(site_id), day, paper, blind=blind)
