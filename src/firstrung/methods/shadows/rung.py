"""What the shadow method gives the ladder: the Earth's radius (and the factor to the equatorial radius
the eclipse counts in), and the Sun's angular size on the shadow days.
And what it gives the report: its section (:func:`report_section`).
"""

from __future__ import annotations

import numpy as np

from firstrung.constants import SHADOW_EARTH_RADIUS_KM
from firstrung.numbers import rounded
from firstrung.uncertainty import Draw, earth_radius_draw


def ladder_draws(ctx) -> None:
    """Reduce the campaign's shadows and put the Earth's radius into the ladder's context ``ctx``."""
    from firstrung.methods.shadows.run import run_shadows

    shadow_run = run_shadows(ctx.campaign_path)
    ctx.runs["shadows"] = shadow_run
    ctx.problems.extend(shadow_run.problems)
    ctx.draws["earth_radius_km"] = earth_radius_draw(shadow_run.reduction.earth_radius_km)
    equatorial = SHADOW_EARTH_RADIUS_KM / float(shadow_run.reduction.expected_radius_km)
    ctx.factors["equatorial_radius_factor"] = equatorial
    ctx.notes.append(
        f"the Moon's distance in km: the shadows' radius (the meridional radius of curvature at the sites' "
        f"latitudes) times the WGS84 ratio {equatorial:.5f} gives the equatorial radius the eclipse's "
        "parallax is counted in"
    )
    ctx.sources.append(("earth_radius_km", "noon shadows (reduce shadows)"))
    ctx.draws["sun_angular_diameter_deg"] = _sun_diameter_draw(ctx.campaign, ctx.sources)


def _sun_diameter_draw(campaign, sources):
    """The Sun's angular diameter on the campaign's shadow days, from the ephemeris (said so)."""
    from firstrung import ephemeris
    from firstrung.methods.shadows.log import read_shadow_logs

    log = read_shadow_logs(campaign)
    if len(log) == 0:
        return None
    days = np.unique(np.asarray(log.time_utc).astype("datetime64[D]"))
    pos = ephemeris.sun_position(days.astype("datetime64[s]") + np.timedelta64(12, "h"), 0.0, 0.0)
    sources.append(("sun_angular_diameter_deg", "the Sun's angular size from the ephemeris on the shadow days"))
    return Draw("gaussian", float(2 * np.mean(pos.semidiameter_deg)), 0.0)


TITLE = "The Earth's radius from noon shadows"

METHOD = (
    "Each shadow length L of a gnomon of height h gives the apparent altitude of the marked edge, atan(h/L). "
    "Refraction (Bennett 1982) is removed and the edge moved to the Sun's centre by the semi-diameter of the "
    "date. Each site's readings around noon are fitted for its astronomical latitude and its clock offset, "
    "with the Sun's declination and hour angle from the DE421 ephemeris at each reading, so the declination "
    "is the one at that site's own transit. The latitudes are fitted against the sites' north-south "
    "distances along the meridian on the WGS84 ellipsoid; the slope is one over the Earth's radius. Every "
    "input's error is propagated to the radius, and the error budget says which limits it."
)


#: A campaign of more sites than this (or whose sites come from its log's rows) is shown as a network:
#: a map, the pairs' histogram and a table of every site's own result.
NETWORK_SITES = 12


#: Panels of the shadow-series figure: every series up to this many, else the outlying sites' first.
SERIES_SHOWN = 12


def _series(run) -> tuple[list[dict], int]:
    """Readings and the fitted curve of the (site, day) series drawn, in minutes from the fitted noon.

    Every series when there are at most :data:`SERIES_SHOWN`; otherwise the outlying sites'
    series first, then the others in order, that many. Also returns how many series there are.
    """
    from firstrung import ephemeris
    from firstrung.methods.shadows.prediction import shadow_length_m

    r = run.reduction
    readings = run.readings
    sites = {s.id: i for i, s in enumerate(run.campaign.sites)}
    every = [(site, d) for site in r.sites for d in site.series]
    if len(every) > SERIES_SHOWN:
        ranked = [p for p in every if p[0].outlier] + [p for p in every if not p[0].outlier]
        chosen = {id(p[1]) for p in ranked[:SERIES_SHOWN]}
        every = [p for p in every if id(p[1]) in chosen]
    site_index = np.asarray(readings.site_index)
    order = np.argsort(site_index, kind="stable")
    bounds = np.searchsorted(site_index[order], np.arange(len(run.campaign.sites) + 1))
    out = []
    for site, d in every:
        i = sites[site.id]
        camp_site = run.campaign.sites[i]
        mask = np.sort(order[bounds[i]:bounds[i + 1]])  # this site's readings, in the log's order
        day = np.datetime64(d.date, "D")
        t = readings.time_utc[mask].astype("datetime64[us]")
        shift = np.timedelta64(int(np.round(camp_site.longitude_deg / 15 * 3600e6)), "us")
        sel = (t + shift).astype("datetime64[D]") == day
        if not np.any(sel):
            continue
        true_t = t[sel] - np.timedelta64(int(round(d.clock_offset_s.value * 1e6)), "us")
        transit = d.transit_utc.astype("datetime64[us]")
        minutes = (true_t - transit).astype(np.int64) / 60e6
        grid_min = np.linspace(minutes.min() - 2, minutes.max() + 2, 60)
        grid_t = transit + (grid_min * 60e6).astype(np.int64).astype("timedelta64[us]")
        pos = ephemeris.sun_position(grid_t, camp_site.latitude_deg, camp_site.longitude_deg, camp_site.elevation_m)
        lat = np.radians(d.latitude_deg.value)
        dec, ha = np.radians(pos.declination_deg), np.radians(pos.hour_angle_deg)
        alt = np.degrees(np.arcsin(np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha)))
        edge = readings.edge[mask][sel][0]
        height = float(readings.gnomon_m[mask][sel][0])
        model = shadow_length_m(height, alt, pos.semidiameter_deg, np.array([edge] * grid_t.size, dtype=object))
        out.append({"label": f"{site.id} {d.date}", "minutes": minutes, "shadow_m": readings.shadow_m[mask][sel],
                    "model_minutes": grid_min, "model_shadow_m": model})
    return out, sum(len(site.series) for site in r.sites)


def report_section(run, progress=lambda step: None) -> dict:
    """The shadow section of the report: its context (``data``), figures, plain headline and dates."""
    from firstrung import figures
    from firstrung.methods.shadows.comparison import radius_z
    from firstrung.methods.shadows.present import shadow_run_to_json

    progress("drawing the shadow fits")
    data = shadow_run_to_json(run, pairs=False)
    red = run.reduction
    network = bool(run.campaign.row_site_ids) or len(red.sites) > NETWORK_SITES
    # one reading per site has no series to draw: a network shows its map and pairs instead
    single = float(np.median([d.readings for s in red.sites for d in s.series])) <= 2
    figs = {} if network and single else {"series": figures.shadow_series_figure(*_series(run))}
    pos = np.array([s.north_south_km for s in red.sites])
    lat = np.array([s.astronomical_latitude_deg.value for s in red.sites])
    sig = np.array([s.astronomical_latitude_deg.sigma for s in red.sites])
    out = np.array([s.outlier for s in red.sites])
    resid_deg = np.array([s.residual_arcmin for s in red.sites]) / 60.0
    slope = np.degrees(1.0 / red.earth_radius_km.value)
    intercept = float(np.mean((lat - resid_deg) - slope * pos))
    figs["latitude"] = figures.latitude_line_figure(pos, lat, sig, [s.id for s in red.sites], out, intercept, slope)
    if network and run.pairs is not None and len(red.sites) > 1 and data.get("method") == "network":
        from firstrung.figures_network import network_map_figure, pairs_histogram_figure
        from firstrung.methods.shadows.unused import unused_schools

        # the schools whose reading was not used are on the map too (crosses), and thanked with the others
        unused = [u for u in unused_schools(run) if u.site_id not in {s.id for s in red.sites}]
        placed = [u for u in unused if u.latitude_deg is not None]
        figs["map"] = network_map_figure([s.latitude_deg for s in red.sites] + [u.latitude_deg for u in placed],
                                         [s.longitude_deg for s in red.sites] + [u.longitude_deg for u in placed],
                                         np.r_[out, np.ones(len(placed), bool)])
        figs["pairs"] = pairs_histogram_figure(run.pairs.radius_km, run.pairs.flagged, red.earth_radius_km.value,
                                               red.expected_radius_km)
        names = {s["name"] for s in data["sites"]} | {u.name for u in unused}
        data = data | {"participants": sorted(names, key=str.lower), "schools_not_used": len(unused),
                       "not_used": [{"name": u.name, "latitude_deg": u.latitude_deg, "longitude_deg": u.longitude_deg,
                                     "codes": ", ".join(dict.fromkeys(r.code for r in u.reasons))} for u in unused]}
    r = red.earth_radius_km
    value, interval = rounded(r.value, r.low, r.high, space=" ")
    expected = rounded(red.expected_radius_km, red.expected_radius_km - r.sigma, red.expected_radius_km + r.sigma)[0]
    z = radius_z(red)
    verdict = "agrees with it" if z is not None and abs(z) < 2 else "differs from it by more than chance allows"
    headline = (f"The Earth's radius is {value} km (68 % interval {interval} km). A perfect measurement at these "
                f"sites gives {expected} km; the campaign {verdict} ({z:+.1f} sigma).")
    dates = sorted({d["date"] for s in data["sites"] for d in s["days"]})
    return {
        "name": "shadows", "title": TITLE, "method": METHOD, "data": data, "figures": figs,
        "headline": headline, "dates": dates, "z": z,
        "radius_text": f"{value} km", "interval_text": f"{interval} km", "expected_text": f"{expected} km",
        "headline_numbers": {"quantity": "earth_radius_km", "value": value, "interval": interval},
    }
