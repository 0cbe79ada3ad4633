"""Printable field sheets (HTML with print CSS) and CSV templates for observers.

A day's shadow sheet holds the site and gnomon, the predicted local apparent
noon, the set-up steps, the caution, and a table every 2 minutes from -30 to
+30 minutes with the predicted shadow length and blank cells for the reading.
Blank sheets and CSV templates for every log kind are made by
:func:`blank_field_kit` (the repository's ``field_sheets/`` holds its output).
"""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np

from firstrung import __version__
from firstrung.safety import ECLIPSE_NOTE, PHASES_CAUTION, SOLAR_CAUTION_FULL

#: The readings of a sheet: minutes from local apparent noon.
SHEET_OFFSETS_MIN = tuple(range(-30, 31, 2))
EDGE_TEXT = {
    "umbra": "sharp dark edge of the shadow (umbra)",
    "middle": "middle of the fuzzy edge (penumbra)",
    "outer": "faint outer edge of the shadow",
}
PAPER_SIZES = {"a4": "A4", "letter": "letter"}


def _environment():
    from jinja2 import Environment, PackageLoader, StrictUndefined, select_autoescape

    return Environment(
        loader=PackageLoader("firstrung", "templates"),
        autoescape=select_autoescape(["html", "j2", "css"], default_for_string=True, default=True),
        undefined=StrictUndefined,
        keep_trailing_newline=True,
    )


def _local(t_utc, zone: str | None) -> str:
    aware = np.datetime64(t_utc, "s").astype(dt.datetime).replace(tzinfo=dt.UTC)
    if zone is None:
        return aware.strftime("%H:%M:%S UTC")
    return aware.astimezone(ZoneInfo(zone)).strftime("%H:%M:%S")


def shadow_sheet_predictions(site, date) -> dict:
    """The numbers of a day's sheet: transit, altitude, shadow lengths every 2 minutes.

    ``site`` is a :class:`firstrung.methods.shadows.prediction.PlanSite`.

    >>> from firstrung.methods.shadows.prediction import PlanSite
    >>> p = shadow_sheet_predictions(PlanSite("a", "A", 46.2, 7.4, 620.0, None, 1.0, 0.001, 0.002, "umbra"), "2027-03-20")
    >>> len(p["times_utc"]), str(p["transit_utc"])[:16]
    (31, '2027-03-20T11:37')
    """
    from firstrung import ephemeris
    from firstrung.methods.shadows.altitude import penumbra_width_m
    from firstrung.methods.shadows.prediction import shadow_length_m

    transit = ephemeris.solar_transit(np.datetime64(date, "D"), site.latitude_deg, site.longitude_deg, site.elevation_m)
    t0 = np.datetime64(transit.time_utc, "s")
    # planned times on whole minutes of the site's clock, centred on noon
    centre = t0.astype("datetime64[m]")
    times = centre + np.array(SHEET_OFFSETS_MIN).astype("timedelta64[m]")
    pos = ephemeris.sun_position(times, site.latitude_deg, site.longitude_deg, site.elevation_m)
    lengths = shadow_length_m(site.gnomon_height_m, pos.altitude_deg, pos.semidiameter_deg,
                              np.array([site.edge] * times.size, dtype=object))
    noon_m, direction, noon_alt = noon_shadow(site.gnomon_height_m, site.edge, site.latitude_deg,
                                              float(transit.altitude_deg), float(transit.semidiameter_deg),
                                              float(transit.declination_deg))
    return {
        "transit_utc": t0,
        "times_utc": times,
        "shadow_m": lengths,
        "noon_altitude_deg": noon_alt,
        "noon_shadow_m": noon_m,
        "penumbra_m": float(penumbra_width_m(site.gnomon_height_m, float(transit.altitude_deg), float(transit.semidiameter_deg))),
        "direction": direction,
    }


def noon_shadow(gnomon_height_m: float, edge: str, latitude_deg: float, altitude_deg: float, semidiameter_deg: float,
                declination_deg: float) -> tuple[float, str, float]:
    """At the Sun's transit (its true altitude, semi-diameter and declination): the gnomon's shortest shadow
    [m], the way it points, and the Sun's altitude with refraction [deg], as a day's sheet prints them.

    >>> length, direction, altitude = noon_shadow(1.0, "umbra", 46.2, 44.0, 0.27, 0.2)
    >>> round(length, 3), direction, round(altitude, 2)  # the umbra's tip: cot(44.0 + 0.27 deg) = 1.0254
    (1.025, 'north', 44.02)
    """
    from firstrung.methods.shadows.prediction import shadow_length_m
    from firstrung.refraction import apparent_from_true_altitude_deg

    length = float(shadow_length_m(gnomon_height_m, altitude_deg, semidiameter_deg, np.array([edge], dtype=object))[0])
    direction = "north" if latitude_deg > declination_deg else "south"
    return length, direction, float(apparent_from_true_altitude_deg(altitude_deg))


#: Below this noon altitude a sheet warns: the shadow is over 5.7 gnomon heights long, its tip faint
#: and a small error in the board's level or the reading moves the result a lot (common practice).
LOW_SUN_DEG = 10.0


def sheet_warning(site, date) -> tuple[dict, str | None]:
    """The day's predictions and a warning when the Sun is low at noon.

    Raises :class:`firstrung.errors.InputError` when the Sun does not clear the horizon at noon
    (polar night): there is no shadow to read, so no sheet.
    """
    from firstrung.errors import InputError
    from firstrung.numbers import latitude_text

    p = shadow_sheet_predictions(site, date)
    alt = p["noon_altitude_deg"]
    day = str(np.datetime64(date, "D"))
    if alt <= 0.5:
        raise InputError(
            f"--date: the Sun does not rise above the horizon at noon at site '{site.id}' "
            f"({latitude_text(site.latitude_deg)}) on {day} (its centre at {alt:.1f}°): there is no shadow to read; "
            f"choose a day 'firstrung plan shadows' lists"
        )
    if alt < LOW_SUN_DEG:
        return p, (f"the Sun is only {alt:.1f}° high at noon at site '{site.id}' on {day}: a shadow about "
                   f"{p['noon_shadow_m']:.1f} m long with a faint tip; a day with the Sun above "
                   f"{LOW_SUN_DEG:.0f}° is far better")
    return p, None


def render_shadow_sheet(campaign_name: str, site, date, paper: str = "a4", *, blind: bool = False) -> str:
    """The HTML field sheet for one site and day (one printed page).

    ``blind`` leaves every prediction of the shadow off the sheet, so that observers
    cannot copy it (the times to read stay).
    """
    from firstrung.numbers import latitude_text, longitude_text

    p, warning = sheet_warning(site, date)
    zone = site.timezone or "UTC"
    rows = []
    for t, length in zip(p["times_utc"], p["shadow_m"], strict=True):
        rows.append({
            "local": _local(t, site.timezone)[:5],
            "utc": str(np.datetime64(t, "m"))[11:16],
            "shadow_mm": f"{length * 1000:,.0f}" if np.isfinite(length) and length > 0 else "no shadow",
            "noon": abs((t - p["transit_utc"]).astype("timedelta64[s]").astype(int)) < 60,
        })
    return _environment().get_template("shadow_sheet.html.j2").render(
        campaign=campaign_name,
        site=site,
        latitude=latitude_text(site.latitude_deg),
        longitude=longitude_text(site.longitude_deg),
        date=str(np.datetime64(date, "D")),
        version=__version__,
        caution=SOLAR_CAUTION_FULL,
        zone=zone,
        zone_short="local" if site.timezone else "UTC",
        edge_text=EDGE_TEXT[site.edge],
        noon_local=_local(p["transit_utc"], site.timezone) + (" local time" if site.timezone else " UTC"),
        noon_utc=str(p["transit_utc"])[11:19] + " UTC",
        noon_altitude_deg=p["noon_altitude_deg"],
        noon_shadow_mm=p["noon_shadow_m"] * 1000,
        penumbra_mm=p["penumbra_m"] * 1000,
        direction=p["direction"],
        rows=rows,
        page_size=PAPER_SIZES[paper],
        blind=blind,
        warning=warning,
    )


#: The blank kit: per log kind, the sheet's title, set-up steps, columns and CSV header.
BLANK_KIT = {
    "shadows": {
        "title": "Noon shadow sheet (blank)",
        "caution": SOLAR_CAUTION_FULL,
        "steps": [
            "Stand the gnomon plumb-vertical and check the board level in both directions.",
            "Measure the gnomon's height from the board to the tip, to the millimetre.",
            "Decide which edge of the shadow's tip you mark (the sharp dark edge is usual) and keep to it.",
            "Set your clock to a time signal and write down its offset (clock minus true time).",
            "Read the shadow every 2 minutes from 30 minutes before to 30 minutes after local apparent noon.",
        ],
        "columns": ["clock time", "shadow length (mm)", "edge marked", "notes"],
        "csv_header": "site,time_local,shadow_mm,edge,temperature_c,pressure_hpa,observer,note",
        "rows": 31,
        "grid": True,
    },
    "altitudes": {
        "title": "Noon Sun altitude sheet (blank)",
        "caution": SOLAR_CAUTION_FULL,
        "steps": [
            "Never sight the Sun through a quadrant, clinometer or theodolite: align the instrument by its own "
            "shadow or a projected image, or use a certified solar filter on optics.",
            "Find the instrument's index correction: read a level surface (or a known angle) and write down what "
            "must be added to its readings.",
            "Decide which part of the Sun you set on (lower limb, centre or upper limb) and keep to it.",
            "Set your clock to a time signal, or write the times in a column of their own with the date on top.",
            "Read the altitude every 2 minutes from 30 minutes before to 30 minutes after local apparent noon.",
        ],
        "columns": ["clock time", "altitude (deg)", "limb (lower / centre / upper)", "notes"],
        "csv_header": "site,date,time_local,altitude_deg,limb,angle_sigma_deg,observer,note",
        "example": "ridge,2027-09-22,13:14,41.62,lower,0.1,T. Okafor,quadrant aligned by its shadow",
        "rows": 31,
    },
    "traces": {
        "title": "Shadow-tip trace sheet (blank)",
        "caution": SOLAR_CAUTION_FULL,
        "steps": [
            "Level the board; hang a plumb line from the gnomon's tip and mark the point under it (the rod may "
            "lean: only the plumb point counts).",
            "Measure the tip's height above the board, to the millimetre.",
            "Draw two perpendicular axes through the plumb point; any turn of the board is fine.",
            "Mark the shadow's tip every 10 minutes from about 2 hours before to 2 hours after noon; a "
            "clock is not needed (at least 5 marks, both sides of noon).",
            "Measure each mark's x and y from the plumb point; write the time too if a clock was read.",
        ],
        "columns": ["mark", "x (mm)", "y (mm)", "clock time (if read)", "notes"],
        "csv_header": "site,date,time_local,tip_x_mm,tip_y_mm,observer,note",
        "example": "ridge,2027-09-22,,152,-988,class 4B,no clock",
        "rows": 25,  # every 10 minutes over 4 hours
        "grid": True,
    },
    "eclipse": {
        "title": "Lunar eclipse timing sheet (blank)",
        "caution": ECLIPSE_NOTE,
        "steps": [
            "Set your clock to a time signal and write down its offset (clock minus true time).",
            "Time the umbral contacts: U1 (the dark shadow touches the Moon), U2 (totality begins), "
            "U3 (totality ends), U4 (the shadow leaves the Moon).",
            "Time when the shadow's edge crosses the centre of each crater you know: immersion (going in) "
            "and emersion (coming out).",
            "Write the time to the second as soon as you judge the event; do not correct it later.",
        ],
        "columns": ["clock time", "event (U1-U4, immersion, emersion)", "crater", "notes"],
        "csv_header": "site,time_local,event,feature,time_sigma_s,observer",
        "rows": 24,
    },
    "phases": {
        "title": "Half-moon sheet (blank)",
        "caution": PHASES_CAUTION,
        "steps": [
            "Set your clock to a time signal and write down its offset (clock minus true time).",
            "Watch the terminator: write the time when the Moon looks exactly half lit (a straight terminator).",
            "If you measure the Sun-Moon angle, do it without ever sighting the Sun through the instrument.",
            "If you photograph the Moon, note each exposure's time and later the lit fraction you measure.",
        ],
        "columns": ["clock time", "first / last quarter", "Sun-Moon angle (deg)", "lit fraction", "notes"],
        "csv_header": "site,time_local,quarter,elongation_deg,illuminated_fraction,time_sigma_s,observer",
        "rows": 20,
    },
}


def blank_field_kit(paper: str = "a4") -> dict[str, str]:
    """File name -> text of every blank sheet (HTML) and CSV template.

    >>> sorted(blank_field_kit())[:4]
    ['altitudes-sheet.html', 'altitudes-template.csv', 'eclipse-sheet.html', 'eclipse-template.csv']
    """
    env = _environment()
    template = env.get_template("blank_sheet.html.j2")
    files = {}
    for kind, spec in BLANK_KIT.items():
        files[f"{kind}-sheet.html"] = template.render(page_size=PAPER_SIZES[paper], **spec)
        example = f"{spec['example']}\n" if "example" in spec else ""
        files[f"{kind}-template.csv"] = spec["csv_header"] + "\n" + example
    return files


def site_sheet(campaign, site_id: str, day: str, paper: str, blind: bool = False) -> tuple[str, str | None]:
    """One site's noon-shadow sheet for a day: its HTML and a warning (or None).

    Raises :class:`~firstrung.errors.InputError` for a site without a gnomon, or a day the Sun
    does not rise at noon.
    """
    from firstrung.errors import InputError
    from firstrung.methods.shadows.plan import plan_sites

    campaign.site(site_id)  # an unknown id is a clear error
    sites = {s.id: s for s in plan_sites(campaign)[0]}
    if site_id not in sites:
        raise InputError(f"--site: site '{site_id}' has no [site.gnomon] in the campaign file",
                         file=None if campaign.path is None else str(campaign.path))
    _, warning = sheet_warning(sites[site_id], day)
    return render_shadow_sheet(campaign.name, sites[site_id], day, paper, blind=blind), warning

