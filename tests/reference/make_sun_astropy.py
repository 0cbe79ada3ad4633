"""Regenerate sun_astropy_de421.csv: the Sun from astropy, as the independent reference.

astropy reads the same DE421 file (from the skyfield-data package) through its own
reduction pipeline (ERFA: IAU 2006/2000A precession-nutation, its own aberration and
light deflection, its own topocentric step), with its bundled IERS-B table for UT1
and polar motion and no download (``iers.conf.auto_download = False``).

For each invented site and each date of 2024 (every 5th day):
- ``transit_utc``: the topocentric apparent hour angle (astropy TETE frame with the
  site as origin, against the local apparent sidereal time) brought to zero by
  Newton iteration to 1 ms;
- ``altitude_deg``/``azimuth_deg``: airless apparent altitude and azimuth
  (AltAz with pressure=0) at the transit instant and two hours before it.

Run: python tests/reference/make_sun_astropy.py  (about a minute).
"""

from __future__ import annotations

import csv
import os

import numpy as np
import skyfield_data
from astropy import units as u
from astropy.coordinates import TETE, AltAz, EarthLocation, get_body, solar_system_ephemeris
from astropy.time import Time
from astropy.utils import iers

iers.conf.auto_download = False

SITES = [  # invented sites: both hemispheres, the tropics, an equatorial site, a high latitude
    ("north", 46.2, 7.4, 620.0),
    ("south", -33.9, 151.1, 40.0),
    ("tropic", 15.5, -61.3, 300.0),
    ("equator", -0.8, 36.9, 1800.0),
    ("subarctic", 62.4, -114.4, 200.0),
]
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "sun_astropy_de421.csv")


def main() -> None:
    path = os.path.join(os.path.dirname(skyfield_data.__file__), "data", "de421.bsp")
    solar_system_ephemeris.set(path)
    days = np.arange(np.datetime64("2024-01-01"), np.datetime64("2025-01-01"), 5)
    rows = []
    for name, lat, lon, elev in SITES:
        loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elev * u.m)
        guess = days.astype("datetime64[ms]") + np.timedelta64(int((12 - lon / 15) * 3600e3), "ms")
        t = Time(guess.astype(str).tolist(), scale="utc")
        for _ in range(6):
            sun = get_body("sun", t, loc)
            tete = sun.transform_to(TETE(obstime=t, location=loc))
            last = t.sidereal_time("apparent", longitude=lon * u.deg)
            ha = ((last - tete.ra).wrap_at(180 * u.deg)).to_value(u.deg)
            t = t - (ha / 360.9856) * u.day
        for label, times in (("transit", t), ("transit-2h", t - 2 * u.hour)):
            sun = get_body("sun", times, loc)
            aa = sun.transform_to(AltAz(obstime=times, location=loc, pressure=0 * u.hPa))
            for k in range(len(days)):
                rows.append(
                    {
                        "site": name,
                        "latitude_deg": lat,
                        "longitude_deg": lon,
                        "elevation_m": elev,
                        "date": str(days[k]),
                        "kind": label,
                        "time_utc": times[k].isot + "Z",
                        "altitude_deg": f"{aa.alt.deg[k]:.8f}",
                        "azimuth_deg": f"{aa.az.deg[k]:.8f}",
                    }
                )
    with open(OUT, "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    print(f"wrote {len(rows)} rows to {OUT}")


if __name__ == "__main__":
    main()
