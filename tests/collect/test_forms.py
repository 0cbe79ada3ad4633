"""The predictions beside a phone form are the day's field sheet's (regression: firstrung's own sheet)."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from firstrung.collect import forms
from firstrung.methods.shadows.prediction import PlanSite
from firstrung.methods.shadows.sheet import shadow_sheet_predictions

DEMO = Path(__file__).resolve().parents[2] / "src" / "firstrung" / "data" / "demo" / "campaign.toml"


@pytest.mark.parametrize("date", ["2027-03-20", "2027-06-21", "2027-12-21"])
def test_the_forms_noon_shadow_is_the_field_sheets(date):
    from firstrung.campaign import read_campaign

    sites = [s for s in read_campaign(DEMO).sites if s.gnomon is not None]
    assert len(sites) >= 3
    forms.prepare_noons(sites, [date] * len(sites))  # every site at once, as the server starts
    for site in sites:
        g = site.gnomon
        sheet = shadow_sheet_predictions(PlanSite(site.id, site.name, site.latitude_deg, site.longitude_deg,
                                                  site.elevation_m, site.timezone, g.height_m, g.height_sigma_m,
                                                  g.shadow_sigma_m, g.edge), date)
        noon, shortest = forms.hints("shadows", site, date, "length")
        assert f"{sheet['noon_shadow_m'] * 100:.1f} cm of a" in shortest
        assert f"pointing {sheet['direction']}; the Sun {sheet['noon_altitude_deg']:.1f}° high" in shortest
        transit = sheet["transit_utc"].astype(dt.datetime).replace(tzinfo=dt.UTC)
        clock = transit.astimezone(site.zone) if site.zone else transit
        assert clock.strftime("%H:%M:%S") in noon
        trace = forms.hints("shadows", site, date, "trace")
        assert f"{sheet['noon_shadow_m'] * 100:.1f} cm {sheet['direction']} of the plumb" in trace[-1]


def test_one_site_alone_gives_the_same_noon_as_all_sites_at_once():
    from firstrung.campaign import read_campaign

    sites = list(read_campaign(DEMO).sites)
    forms._NOONS.clear()
    alone = forms._noon(sites[0], "2027-09-23")
    forms._NOONS.clear()
    forms.prepare_today(sites, dt.datetime(2027, 9, 23, 10, tzinfo=dt.UTC))
    together = forms._noon(sites[0], "2027-09-23")
    assert together.time == alone.time  # to the second, as the page shows it
    # the same arithmetic on a longer array: equal to a few units in the last place
    for name in ("altitude_deg", "semidiameter_deg", "declination_deg"):
        assert getattr(together, name) == pytest.approx(getattr(alone, name), rel=0, abs=1e-12)
