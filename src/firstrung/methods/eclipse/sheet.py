"""The eclipse field sheet for one site and night: its contacts in local time with the Moon's
altitude, and a crater list with predicted immersion and emersion times and a chart.

Craters are chosen by our own criterion and said so on the sheet: of the tool's crater table
(``craters.csv``), those whose positions were read in the IAU Gazetteer of Planetary
Nomenclature (never one written from memory) and at least 25 km across (easy to find in a small telescope or binoculars), then as many as asked whose
predicted immersions are spread as evenly as possible over the partial phase, so that the
timings sample the whole edge of the shadow; they are listed in the order they go in.
"""

from __future__ import annotations

import numpy as np

from firstrung import __version__
from firstrung.errors import InputError

#: Craters at least this wide are easy to identify in small instruments (our criterion).
MIN_DIAMETER_KM = 25.0
#: How many craters a sheet lists.
SHEET_CRATERS = 12
EVENT_WORDS = {
    "P1": "penumbra touches the Moon (hard to see)",
    "U1": "umbra touches the Moon",
    "U2": "totality begins",
    "greatest": "greatest eclipse",
    "U3": "totality ends",
    "U4": "umbra leaves the Moon",
    "P4": "penumbra leaves the Moon",
}


def crater_selection(eclipse, n: int = SHEET_CRATERS) -> list[dict]:
    """The sheet's craters for one eclipse: wide enough to find, immersions spread over the eclipse.

    Returns dicts with ``name``, ``latitude_deg``, ``longitude_deg``, ``diameter_km``,
    ``immersion_utc`` and ``emersion_utc`` (NaT where the crater does not cross the edge),
    ordered by immersion.
    """
    from firstrung.methods.eclipse.craters import load_craters
    from firstrung.methods.eclipse.prediction import feature_edge_times

    table = load_craters()
    read = np.array([s == "gazetteer" for s in table.source], bool)  # never a position written from memory
    wide = np.flatnonzero(read & (table.diameter_km >= MIN_DIAMETER_KM))
    lat, lon = table.latitude_deg[wide], table.longitude_deg[wide]
    conv = str(eclipse.convention)
    imm = feature_edge_times(eclipse, lat, lon, ["immersion"] * len(wide), convention=conv)
    emr = feature_edge_times(eclipse, lat, lon, ["emersion"] * len(wide), convention=conv)
    ok = np.flatnonzero(~np.isnat(imm))
    if not len(ok):
        return []
    t = (imm[ok] - imm[ok].min()).astype("timedelta64[s]").astype(float)
    targets = np.linspace(t.min(), t.max(), min(n, len(ok)))
    chosen: list[int] = []
    for target in targets:  # nearest unused crater to each evenly spaced moment
        free = [k for k in range(len(ok)) if k not in chosen]
        chosen.append(min(free, key=lambda k: (abs(t[k] - target), k)))
    chosen.sort(key=lambda k: t[k])
    out = []
    for k in chosen:
        i = ok[k]
        out.append({"name": table.name[wide[i]], "latitude_deg": float(lat[i]), "longitude_deg": float(lon[i]),
                    "diameter_km": float(table.diameter_km[wide[i]]), "immersion_utc": imm[i], "emersion_utc": emr[i]})
    return out


def _clock(t, zone: str | None) -> str:
    import datetime as dt
    from zoneinfo import ZoneInfo

    if t is None or np.isnat(t):
        return "—"
    nearest = (np.datetime64(t, "ms") + np.timedelta64(500, "ms")).astype("datetime64[s]")  # to the nearest second
    aware = nearest.astype(dt.datetime).replace(tzinfo=dt.UTC)
    return (aware.astimezone(ZoneInfo(zone)) if zone else aware).strftime("%H:%M:%S")


def _chart_svg(craters: list[dict], eclipse) -> str:
    """The Moon's disc at greatest eclipse, north up and east left as in the sky, the craters numbered."""
    from firstrung.methods.eclipse.prediction import feature_points

    r, c = 70.0, 80.0
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{2 * c:.0f}" height="{2 * c:.0f}" '
             f'viewBox="0 0 {2 * c:.0f} {2 * c:.0f}" role="img" aria-label="crater chart">',
             f'<circle cx="{c}" cy="{c}" r="{r}" fill="#f4f4f4" stroke="#333" stroke-width="1"/>',
             f'<text x="{c}" y="9" font-size="8" text-anchor="middle">N</text>',
             f'<text x="4" y="{c + 3}" font-size="8">E</text>']
    if craters:
        p = feature_points(eclipse.greatest_utc[0], [x["latitude_deg"] for x in craters],
                           [x["longitude_deg"] for x in craters])
        for k, (de, dn) in enumerate(zip(np.atleast_1d(p.disc_east), np.atleast_1d(p.disc_north), strict=True), 1):
            x, y = c - r * float(de), c - r * float(dn)
            parts.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="2.2" fill="#333"/>'
                         f'<text x="{x + 3:.1f}" y="{y - 2:.1f}" font-size="7">{k}</text>')
    parts.append("</svg>")
    return "".join(parts)


def render_eclipse_sheet(campaign_name: str, site, date, paper: str = "a4", *, blind: bool = False) -> str:
    """The HTML eclipse sheet for one site (a campaign ``Site``) and the night of ``date``."""
    from firstrung.methods.eclipse.prediction import eclipse_near, eclipse_visibility
    from firstrung.methods.shadows.sheet import PAPER_SIZES, _environment
    from firstrung.numbers import latitude_text, longitude_text
    from firstrung.safety import ECLIPSE_NOTE

    day = np.datetime64(date, "D")
    e = eclipse_near(str(day) + "T12:00:00Z", window_days=1.0)
    if len(e) == 0:
        raise InputError(f"--date: no lunar eclipse within a day of {day}; 'firstrung plan eclipse' lists them")
    if str(e.kind[0]) == "penumbral":
        raise InputError(f"--date: the eclipse of {day} is penumbral: no umbral contact or crater to time")
    v = eclipse_visibility(e, [site.latitude_deg], [site.longitude_deg], [site.elevation_m])
    events = list(v.events)
    zone = site.timezone
    rows = []
    for name in ("P1", "U1", "U2", "greatest", "U3", "U4", "P4"):
        t = e.greatest_utc[0] if name == "greatest" else e.contacts_utc[name][0]
        if np.isnat(t):
            continue
        j = events.index(name)
        alt = float(v.moon_altitude_deg[0, j, 0])
        rows.append({"event": name, "words": EVENT_WORDS[name], "local": _clock(t, zone), "utc": _clock(t, None),
                     "moon_alt": alt, "timeable": bool(v.moon_up[0, j, 0] and v.dark[0, j, 0]),
                     "up": bool(v.moon_up[0, j, 0])})
    if not any(r["up"] for r in rows):
        raise InputError(f"--date: the Moon is below the horizon at site '{site.id}' during the whole eclipse of {day}")
    craters = crater_selection(e)
    for k, x in enumerate(craters, 1):
        x["n"] = k
        x["immersion_local"] = _clock(x["immersion_utc"], zone)
        x["emersion_local"] = _clock(x["emersion_utc"], zone)
    return _environment().get_template("eclipse_sheet.html.j2").render(
        campaign=campaign_name, site=site, date=str(day), version=__version__, caution=ECLIPSE_NOTE,
        zone=zone or "UTC", latitude=latitude_text(site.latitude_deg), longitude=longitude_text(site.longitude_deg),
        kind=str(e.kind[0]), magnitude=float(e.umbral_magnitude[0]), convention=str(e.convention), rows=rows,
        craters=craters, chart=_chart_svg(craters, e), page_size=PAPER_SIZES[paper], blind=blind,
        min_diameter_km=MIN_DIAMETER_KM,
    )


def site_sheet(campaign, site_id: str, day: str, paper: str, blind: bool = False) -> tuple[str, str | None]:
    """One site's sheet for the lunar eclipse of a night: its HTML (and no warning)."""
    return render_eclipse_sheet(campaign.name, campaign.site(site_id), day, paper, blind=blind), None

