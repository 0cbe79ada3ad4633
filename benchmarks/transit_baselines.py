"""Baselines for the transit paths of benchmarks/run.py, written as a competent skyfield user would,
and run in full beside the commands.

- Every transit of Mercury and Venus 1900-2050 with its geocentric contacts: ``find_minima`` of
  the apparent Sun-planet separation, then ``find_discrete`` on "inside the contact circle" for
  C1/C4 (sum of the semidiameters) and C2/C3 (their difference) around each minimum that is a
  transit.
- One transit's contacts at 1,000 sites: the same ``find_discrete`` with each site's topocentric
  apparent places, one site at a time (skyfield's topocentric positions take one observer).

Both use the same DE421 file and semidiameters (959.63" at 1 au for the Sun; Mercury 3.36",
Venus 8.41" at 1 au), so their contacts should agree with firstrung's to well under a second.
"""

from __future__ import annotations

import math

import numpy as np

AU_KM = 149_597_870.7
SUN_RADIUS_KM = AU_KM * math.tan(math.radians(959.63 / 3600))
PLANET_RADIUS_KM = {"mercury": AU_KM * math.tan(math.radians(3.36 / 3600)),
                    "venus": AU_KM * math.tan(math.radians(8.41 / 3600))}


def _load():
    import skyfield_data
    from skyfield.api import Loader

    loader = Loader(skyfield_data.__path__[0] + "/data", verbose=False)
    return loader("de421.bsp"), loader.timescale(builtin=True)


def _offset_function(eph, observer, planet: str, internal: bool):
    """Separation of the centres minus the contact's separation [deg], as a function of time."""
    body, sun = eph[f"{planet} barycenter"], eph["sun"]

    def offset(t):
        o = observer.at(t)
        p, s = o.observe(body).apparent(), o.observe(sun).apparent()
        sep = p.separation_from(s).degrees
        sp = np.degrees(np.arcsin(PLANET_RADIUS_KM[planet] / p.distance().km))
        ss = np.degrees(np.arcsin(SUN_RADIUS_KM / s.distance().km))
        return sep - (ss - sp if internal else ss + sp)

    return offset


def _contacts(ts, eph, observer, planet, t_first, t_last):
    """C1-C4 between two instants [TT JD], NaN where absent, by ``find_discrete``."""
    from skyfield.searchlib import find_discrete

    out = {}
    for internal, (ingress, egress) in ((False, ("C1", "C4")), (True, ("C2", "C3"))):
        f = _offset_function(eph, observer, planet, internal)

        def inside(t, f=f):
            return f(t) < 0

        inside.step_days = 5.0 / 1440.0
        times, values = find_discrete(ts.tt_jd(t_first), ts.tt_jd(t_last), inside)
        into = [t.tt for t, v in zip(times, values, strict=True) if v]
        out_of = [t.tt for t, v in zip(times, values, strict=True) if not v]
        out[ingress] = into[0] if into else np.nan
        out[egress] = out_of[-1] if out_of else np.nan
    return out


def skyfield_all_transits(first_utc: str, last_utc: str) -> list[tuple[str, dict]]:
    """Every transit of Mercury and Venus in a range with its geocentric C1-C4 [TT JD]."""
    from skyfield.searchlib import find_minima

    eph, ts = _load()
    earth = eph["earth"]
    t0 = ts.utc(*map(int, first_utc.split("-")))
    t1 = ts.utc(*map(int, last_utc.split("-")))
    found = []
    for planet in ("mercury", "venus"):
        external = _offset_function(eph, earth, planet, False)

        def separation(t, planet=planet):
            e = earth.at(t)
            return e.observe(eph[f"{planet} barycenter"]).apparent().separation_from(e.observe(eph["sun"]).apparent()).degrees

        separation.step_days = 1.0
        times, values = find_minima(t0, t1, separation)
        for t, v in zip(times, values, strict=True):
            e = earth.at(t)
            behind = e.observe(eph[f"{planet} barycenter"]).distance().km > e.observe(eph["sun"]).distance().km
            if v > 1.0 or behind or external(t) >= 0:
                continue  # not a transit: the planet misses the disc or passes behind the Sun
            found.append((planet, _contacts(ts, eph, earth, planet, t.tt - 0.3, t.tt + 0.3)))
    found.sort(key=lambda x: x[1]["C1"])
    return found


def skyfield_site_contacts(latitude_deg, longitude_deg, planet: str, first_tt_jd: float, last_tt_jd: float):
    """One transit's C1-C4 at each site [TT JD], one site at a time."""
    from skyfield.api import wgs84

    eph, ts = _load()
    out = {c: np.full(len(latitude_deg), np.nan) for c in ("C1", "C2", "C3", "C4")}
    for i, (lat, lon) in enumerate(zip(latitude_deg, longitude_deg, strict=True)):
        observer = eph["earth"] + wgs84.latlon(float(lat), float(lon))
        for c, v in _contacts(ts, eph, observer, planet, first_tt_jd, last_tt_jd).items():
            out[c][i] = v
    return out


def agreement_all_transits(ours_json: dict, theirs: list[tuple[str, dict]]) -> str:
    """The largest difference between firstrung's geocentric contacts and the baseline's [s]."""
    from firstrung.ephemeris.planets import tt_jd_of_utc

    ours = ours_json["transits"]
    if len(ours) != len(theirs):
        return f"transits found: firstrung {len(ours)}, skyfield {len(theirs)}"
    worst = 0.0
    for t, (planet, contacts) in zip(ours, theirs, strict=True):
        if t["planet"] != planet:
            return f"different planets on {t['date']}"
        for c, text in t["contacts_utc"].items():
            mine = float(tt_jd_of_utc(np.array([text.rstrip("Z")], dtype="datetime64[us]"))[0])
            worst = max(worst, abs(mine - contacts[c]) * 86400.0)
    return f"{len(ours)} transits, every contact within {worst:.1f} s of skyfield's (firstrung's JSON rounds to the second)"


def agreement_sites(ours_json: dict, theirs: dict, ids: list[str]) -> str:
    """The largest difference between firstrung's site contacts and the baseline's [s]."""
    from firstrung.ephemeris.planets import tt_jd_of_utc

    sites = ours_json["transits"][0]["sites"]
    worst, compared = 0.0, 0
    for j, sid in enumerate(ids):
        for c, x in sites[sid].items():
            if np.isnan(theirs[c][j]):
                continue
            mine = float(tt_jd_of_utc(np.array([x["time_utc"].rstrip("Z")], dtype="datetime64[us]"))[0])
            worst = max(worst, abs(mine - theirs[c][j]) * 86400.0)
            compared += 1
    return f"{compared:,} site contacts, every one within {worst:.1f} s of skyfield's (JSON rounds to the second)"


# --- the transit rows of benchmarks/run.py -----------------------------------------------------


def bench_all_transits(work_root, repeats: int):
    """``plan transits`` 1900-2050 (whole command, cold) beside the skyfield baseline, run in full."""
    import json
    import time

    from run import Row, cold, transit_campaign, warm

    one = transit_campaign(work_root / "transits", 1)
    args = ["plan", "transits", str(one), "--from", "1900-01-01", "--to", "2050-12-31", "--json"]
    whole = cold(args, repeats, ok=(0,))
    t0 = time.perf_counter()
    theirs = skyfield_all_transits("1900-01-01", "2050-12-31")
    base_s = time.perf_counter() - t0
    row = Row("plan transits", "every transit 1900-2050, contacts", whole, warm(args, max(1, repeats - 1)),
              target="< 5 s")
    row.baselines = [("skyfield find_minima + find_discrete", base_s)]
    row.agreement = agreement_all_transits(json.loads(whole.stdout), theirs)
    return row


def bench_site_contacts(work_root, repeats: int, n_sites: int = 1_000):
    """``plan transits`` of 2032-11-13 at ``n_sites`` sites beside skyfield, one site at a time."""
    import json
    import time

    from run import Row, cold, transit_campaign, warm

    from firstrung.campaign import read_campaign
    from firstrung.methods.transit.prediction import inferior_planet_transits

    many = transit_campaign(work_root / "transits", n_sites)
    args = ["plan", "transits", str(many), "--from", "2032-11-01", "--to", "2032-11-30", "--json"]
    whole = cold(args, repeats, ok=(0,))
    c = read_campaign(many)
    tr = inferior_planet_transits("2032-11-13T00:00Z", "2032-11-13T23:59Z")
    lat = [s.latitude_deg for s in c.sites]
    lon = [s.longitude_deg for s in c.sites]
    t0 = time.perf_counter()
    theirs = skyfield_site_contacts(lat, lon, "mercury", tr.contacts_tt_jd["C1"][0] - 0.05,
                                    tr.contacts_tt_jd["C4"][0] + 0.05)
    base_s = time.perf_counter() - t0
    row = Row("plan transits", f"2032-11-13 at {n_sites:,} sites", whole, warm(args, max(1, repeats - 1)),
              target="< 2 s")
    row.baselines = [("skyfield find_discrete, per site", base_s)]
    row.agreement = agreement_sites(json.loads(whole.stdout), theirs, [s.id for s in c.sites])
    return row


if __name__ == "__main__":
    import sys
    import tempfile
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).parent))
    from run import machine_line, markdown, print_table

    quick = "--quick" in sys.argv
    with tempfile.TemporaryDirectory() as scratch:
        rows = [bench_all_transits(Path(scratch), 1 if quick else 3),
                bench_site_contacts(Path(scratch), 1 if quick else 3, 100 if quick else 1_000)]
    print(machine_line(quick))
    print_table(rows)
    print(markdown(rows, [], machine_line(quick)))
