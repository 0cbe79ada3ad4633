"""What ``simulate`` writes, its own readers read: every row, none refused (a property test, hypothesis).

Campaigns are drawn anywhere on the Earth (poles and equator included),
with gnomons from 1 mm to 50 m and any stated errors the campaign reader
accepts; ranges anywhere in the ephemeris' span. Each log is written as the
command writes it and read back through the campaign, as every command reads.
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from firstrung.campaign import parse_campaign
from firstrung.methods.eclipse import rehearsal as eclipse_rehearsal
from firstrung.methods.eclipse.log import read_eclipse_logs
from firstrung.methods.phases import rehearsal as phase_rehearsal
from firstrung.methods.phases.log import read_phase_logs
from firstrung.methods.shadows import rehearsal as shadow_rehearsal
from firstrung.methods.shadows.log import read_shadow_logs
from firstrung.output import rows_to_csv

SHADOW_BLUNDERS = shadow_rehearsal.SHADOW_BLUNDERS
SHADOW_COLUMNS, ECLIPSE_COLUMNS, PHASE_COLUMNS = (m.LOG_COLUMNS for m in (shadow_rehearsal, eclipse_rehearsal,
                                                                           phase_rehearsal))
shadow_rows, eclipse_rows, phase_rows = (m.rehearsal_rows for m in (shadow_rehearsal, eclipse_rehearsal,
                                                                    phase_rehearsal))

ZONES = ("", "UTC", "Europe/Oslo", "America/Santiago", "Asia/Kolkata", "Pacific/Kiritimati", "Antarctica/McMurdo")

site = st.fixed_dictionaries({
    "latitude_deg": st.floats(-89.9, 89.9, allow_nan=False).map(lambda x: round(x, 4)),
    "longitude_deg": st.floats(-180.0, 180.0, allow_nan=False).map(lambda x: round(x, 4)),
    "elevation_m": st.integers(-400, 5000),
    "timezone": st.sampled_from(ZONES),
    "height_m": st.sampled_from([0.001, 0.0123, 0.3, 1.0, 2.5, 49.9]),
    "height_sigma_m": st.sampled_from([0.0, 1e-5, 0.001, 0.05]),
    "shadow_sigma_m": st.sampled_from([1e-5, 0.002, 0.05]),
    "edge": st.sampled_from(["umbra", "middle", "outer"]),
})


def campaign_text(sites) -> str:
    parts = ['[campaign]\nname = "drawn"\n']
    for k, s in enumerate(sites):
        zone = f'timezone = "{s["timezone"]}"\n' if s["timezone"] else ""
        parts.append(
            f'[[site]]\nid = "s{k}"\nlatitude_deg = {s["latitude_deg"]}\nlongitude_deg = {s["longitude_deg"]}\n'
            f'elevation_m = {s["elevation_m"]}\n{zone}[site.gnomon]\nheight_m = {s["height_m"]}\n'
            f'height_sigma_m = {s["height_sigma_m"]}\nshadow_sigma_m = {s["shadow_sigma_m"]}\nedge = "{s["edge"]}"\n'
        )
    parts.append('[logs]\nshadows = ["shadows.csv"]\neclipse = ["eclipse.csv"]\nphases = ["phases.csv"]\n')
    return "".join(parts)


def read_back(tmp_path, text, kind, rows, columns, reader):
    folder = tmp_path / f"c{np.random.default_rng().integers(1 << 62)}"
    folder.mkdir()
    (folder / "campaign.toml").write_text(text)
    (folder / f"{kind}.csv").write_text(rows_to_csv(rows, columns))
    campaign = parse_campaign(text, path=folder / "campaign.toml")
    log = reader(campaign)
    assert [str(p) for p in log.problems] == []
    assert log.rows_read == len(rows) == len(log)


day = st.integers(0, (np.datetime64("2053-03-01") - np.datetime64("1900-01-01")).astype(int))  # + 200 days inside


def date(n: int) -> str:
    return str(np.datetime64("1900-01-01") + np.timedelta64(n, "D"))


SETTINGS = settings(max_examples=12, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])


@SETTINGS
@given(sites=st.lists(site, min_size=1, max_size=4), first=day, days=st.integers(0, 2), seed=st.integers(0, 2**32 - 1),
       blunders=st.lists(st.sampled_from(sorted(SHADOW_BLUNDERS)), unique=True, max_size=3))
def test_simulated_shadow_logs_read_back_whole(tmp_path, sites, first, days, seed, blunders):
    text = campaign_text(sites)
    campaign = parse_campaign(text)
    rows = shadow_rows(campaign, date(first), date(first + days), seed, tuple(blunders))
    read_back(tmp_path, text, "shadows", rows, SHADOW_COLUMNS, read_shadow_logs)


@SETTINGS
@given(sites=st.lists(site, min_size=1, max_size=3), first=day, seed=st.integers(0, 2**32 - 1),
       observers=st.integers(1, 3))
def test_simulated_eclipse_logs_read_back_whole(tmp_path, sites, first, seed, observers):
    text = campaign_text(sites)
    campaign = parse_campaign(text)
    rows = eclipse_rows(campaign, date(first), date(first + 200), seed, observers_per_site=observers)
    read_back(tmp_path, text, "eclipse", rows, ECLIPSE_COLUMNS, read_eclipse_logs)


@SETTINGS
@given(sites=st.lists(site, min_size=1, max_size=4), first=day, seed=st.integers(0, 2**32 - 1))
def test_simulated_phase_logs_read_back_whole(tmp_path, sites, first, seed):
    text = campaign_text(sites)
    campaign = parse_campaign(text)
    rows = phase_rows(campaign, date(first), date(first + 40), seed)
    read_back(tmp_path, text, "phases", rows, PHASE_COLUMNS, read_phase_logs)


def test_the_equator_and_a_1_mm_gnomon_read_back_whole(tmp_path):
    # the two cases first seen: noon Sun next to the zenith (noise crosses the gnomon's foot) and a
    # shadow shorter than the 1 mm the log was written to
    sites = [
        {"latitude_deg": 0.0, "longitude_deg": 10.0, "elevation_m": 0, "timezone": "", "height_m": 1.0,
         "height_sigma_m": 0.001, "shadow_sigma_m": 0.002, "edge": "umbra"},
        {"latitude_deg": 30.0, "longitude_deg": 10.0, "elevation_m": 0, "timezone": "", "height_m": 0.001,
         "height_sigma_m": 0.0, "shadow_sigma_m": 1e-5, "edge": "middle"},
    ]
    text = campaign_text(sites)
    rows = shadow_rows(parse_campaign(text), "2027-03-19", "2027-03-22", 7)
    lengths = np.array([float(r["shadow_mm"]) for r in rows])
    assert lengths.min() > 0.0
    tiny = lengths[[r["site"] == "s1" for r in rows]]
    # a 1 mm gnomon at 60 deg casts about 0.58 mm (tan 30 deg), written with 3 significant digits; the
    # gnomon's height error is at least 1 mm (the campaign's floor), so single lengths scatter widely
    assert 0.35 < np.median(tiny) < 1.0
    assert all(len(r["shadow_mm"].replace(".", "").lstrip("0")) >= 3 for r in rows)
    read_back(tmp_path, text, "shadows", rows, SHADOW_COLUMNS, read_shadow_logs)


@SETTINGS
@given(sites=st.lists(site, min_size=1, max_size=3), first=day, seed=st.integers(0, 2**32 - 1),
       form=st.sampled_from(["altitude", "trace"]))
def test_simulated_angle_and_trace_logs_read_back_whole(tmp_path, sites, first, seed, form):
    """``simulate shadows --form altitude|trace`` writes rows the shadow reader takes, every one."""
    from firstrung.methods.shadows.rehearsal_forms import FORM_COLUMNS, form_rows

    text = campaign_text(sites)
    rows = form_rows(parse_campaign(text), form, date(first), date(first + 1), seed)
    read_back(tmp_path, text, "shadows", rows, FORM_COLUMNS[form], read_shadow_logs)
