"""Result sheets for the schools of a network: one printable page per school, what the coordinator sends back.

Each page holds the school's reading, the Sun's declination that day, the
latitude it measured, its own Earth radius against the subsolar point, its
partners (the pairs it is in, nearest in longitude first) and the network's
result, with the solar caution. A school whose reading was not used (flagged
by the check, refused, left out by the reduction or by the network's fit) gets
a page too: its reading as logged, why it was not used, what to check before
measuring again, and the network's result. One HTML file, a page per school;
print it from a browser.
"""

from __future__ import annotations

import numpy as np

#: Partners listed on a school's page (the pairs nearest its meridian first).
PARTNERS_SHOWN = 8

_PAGE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{{ campaign }}: results for every school</title>
<style>
body { font-family: sans-serif; font-size: 11pt; margin: 0; }
section { page-break-after: always; padding: 1.5cm; }
h1 { font-size: 16pt; margin: 0 0 0.3em; } h2 { font-size: 12pt; margin: 1em 0 0.3em; }
.big { font-size: 20pt; font-weight: bold; } table { border-collapse: collapse; }
td, th { border-bottom: 1px solid #ccc; padding: 2px 8px; text-align: left; } .num { text-align: right; }
.caution { border: 2px solid #b00; padding: 6px; margin-top: 1em; font-size: 10pt; }
.small { font-size: 9pt; color: #444; } .unused { border: 1px solid #999; padding: 4px 10px; margin-top: 0.8em; }
.unused h2 { margin-top: 0.4em; } li { margin-bottom: 0.2em; }
</style></head><body>
{% for s in schools %}<section>
<h1>{{ s.name }}</h1>
<p class="small">{{ campaign }}{% if s.latitude %} · {{ s.latitude }} · {{ s.longitude }}{% endif %}</p>
<h2>Your reading</h2>
<table>{% for r in s.readings %}<tr>{% if r.date is defined %}<td>{{ r.date }}</td><td>{{ r.time }}</td><td class="num">{{ r.reading }}</td><td class="num">{{ r.gnomon }}</td>{% endif %}<td class="small">{{ r.where }}</td></tr>{% endfor %}</table>
{% if s.unused %}<div class="unused"><h2>Your reading was not used</h2>
<p>It did not count in the network's result, because:</p>
<ul>{% for r in s.unused.reasons %}<li><b>{{ r.plain }}</b><br><span class="small">{{ r.detail }}</span></li>{% endfor %}</ul>
<h2>Before you measure again, check</h2>
<ul>{% for c in s.unused.checks %}<li>{{ c }}</li>{% endfor %}</ul>
<p class="small">Then send the corrected row (or a new reading) to the coordinator: it will count with the others.</p></div>{% endif %}
{% if s.declination %}<p>The Sun stood {{ s.zenith }} from your zenith at noon ({{ s.side }}). That day it stood at the zenith at latitude {{ s.declination }} (its declination, from the DE421 ephemeris).
The latitude your shadow gives: <b>{{ s.astronomical }}</b>.</p>
<h2>Your Earth</h2>
{% if s.subsolar %}<p class="big">{{ s.subsolar }}</p>
<p>The Earth's radius from your reading alone: the distance along your meridian to where the Sun stood overhead, divided by the angle between the two verticals.</p>
{% else %}<p>{{ s.subsolar_note }}</p>{% endif %}
<h2>With your partners</h2>
{% if s.partners %}<table><tr><th>partner</th><th class="num">north-south apart</th><th class="num">Earth's radius from the pair</th></tr>
{% for p in s.partners %}<tr><td>{{ p.name }}</td><td class="num">{{ p.apart }}</td><td class="num">{{ p.radius }}</td></tr>{% endfor %}</table>
<p class="small">{{ s.partner_count }} pairs in all{% if s.partner_median %}; their median {{ s.partner_median }}{% endif %}.</p>
{% else %}<p>No partner observed the same day at least 100 km north or south of you.</p>{% endif %}
{% endif %}<h2>The whole network</h2>
<p>{{ network.sites }} schools: the Earth's radius is <b>{{ network.radius }}</b> (68 % interval {{ network.interval }}); a perfect measurement at these schools gives {{ network.expected }} (the WGS84 ellipsoid). Thank you for taking part.</p>
<p class="caution">{{ caution }}</p>
</section>
{% endfor %}</body></html>
"""


def _deg(value: float, positive: str, negative: str) -> str:
    return f"{abs(value):.3f}° {positive if value >= 0 else negative}"


def _unused(school) -> dict | None:
    """What the page of a school whose reading was not used says: the reasons and the checks."""
    if school is None:
        return None
    return {"reasons": [{"plain": r.plain[0].upper() + r.plain[1:] + ".", "detail": r.detail} for r in school.reasons],
            "checks": [c[0].upper() + c[1:] + "." for c in school.checks]}


def school_pages(run) -> str:
    """The HTML of every school's page (escaped; deterministic)."""
    import jinja2

    from firstrung.jsonout import time_z
    from firstrung.safety import SOLAR_CAUTION

    red = run.reduction
    names = {s.id: s.name for s in run.campaign.sites}
    lon = {s.id: s.longitude_deg for s in run.campaign.sites}
    readings = run.readings
    ids = np.array([site.id for site in run.campaign.sites], dtype=object)[np.asarray(readings.site_index, int)]
    pairs = run.pairs
    r = red.earth_radius_km
    network = {"sites": len(red.sites), "radius": f"{r.value:,.0f} ± {r.sigma:,.0f} km",
               "interval": f"{r.low:,.0f} to {r.high:,.0f} km" if r.high is not None else f"above {r.low:,.0f} km",
               "expected": f"{red.expected_radius_km:,.0f} km"}
    from firstrung.methods.shadows.unused import rows_by_key, unused_schools

    unused = unused_schools(run)
    left_out_of_fit = {u.site_id: u for u in unused if u.site_id in {s.id for s in red.sites}}
    # each site's readings and pairs, grouped once (never a scan of every row or pair per site)
    first, second = (pairs.first, pairs.second) if pairs is not None else (None, None)  # ids as text, once
    rows_of = rows_by_key(ids)
    pairs_of = rows_by_key(np.r_[first, second]) if pairs is not None else {}
    n_pairs = len(first) if pairs is not None else 0
    schools = []
    for s in red.sites:
        rows = rows_of.get(s.id, np.zeros(0, int))
        day = s.series[0] if s.series else None
        subsolar, note = (run.subsolar or {}).get(s.id, (None, None))
        mine = np.sort(pairs_of.get(s.id, np.zeros(0, int)) % max(n_pairs, 1))
        others = [second[k] if first[k] == s.id else first[k] for k in mine]
        order = np.argsort([abs(lon.get(o, 0.0) - s.longitude_deg) for o in others], kind="stable")
        partners = [{"name": names.get(others[k], others[k]), "apart": f"{pairs.north_south_km[mine[k]]:,.0f} km",
                     "radius": f"{pairs.radius_km[mine[k]]:,.0f} km" + (" (flagged)" if pairs.flagged[mine[k]] else "")}
                    for k in order[:PARTNERS_SHOWN]]
        good = [pairs.radius_km[k] for k in mine if not pairs.flagged[k] and np.isfinite(pairs.radius_km[k])]
        schools.append({
            "name": s.name, "latitude": _deg(s.latitude_deg, "N", "S"), "longitude": _deg(s.longitude_deg, "E", "W"),
            "readings": [{"date": time_z(readings.time_utc[k])[:10], "time": time_z(readings.time_utc[k])[11:-1] + " UTC",
                          "reading": (f"shadow {readings.shadow_m[k] * 100:.1f} cm" if np.isfinite(readings.shadow_m[k])
                                      else "shadow -"),
                          "gnomon": f"gnomon {readings.gnomon_m[k] * 100:.1f} cm", "where": ""} for k in rows],
            "zenith": f"{day.zenith_distance_deg.value:.2f}°" if day else "-",
            "side": f"the Sun to your {day.sun_side}" if day else "",
            "declination": _deg(day.declination_deg, "N", "S") if day else "-",
            "astronomical": (f"{_deg(s.astronomical_latitude_deg.value, 'N', 'S')} ± "
                             f"{s.astronomical_latitude_deg.sigma:.2f}°"),
            "subsolar": None if subsolar is None else f"{subsolar.value:,.0f} ± {subsolar.sigma:,.0f} km",
            "subsolar_note": note or "", "unused": _unused(left_out_of_fit.get(s.id)),
            "partners": partners, "partner_count": len(mine),
            "partner_median": f"{float(np.median(good)):,.0f} km" if good else None,
        })
    schools.extend({"name": u.name, "latitude": None if u.latitude_deg is None else _deg(u.latitude_deg, "N", "S"),
                    "longitude": None if u.longitude_deg is None else _deg(u.longitude_deg, "E", "W"),
                    "readings": list(u.rows), "declination": None, "unused": _unused(u)}
                   for u in unused if u.site_id not in left_out_of_fit)
    env = jinja2.Environment(autoescape=True, keep_trailing_newline=True)
    return env.from_string(_PAGE).render(campaign=run.campaign.name, schools=schools, network=network,
                                         caution=SOLAR_CAUTION)
