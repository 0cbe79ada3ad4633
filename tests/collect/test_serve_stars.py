"""The collection point takes star readings (astrometry, light curves) like any other log."""

from __future__ import annotations

import pytest
from tests.collect.client import Server, post_reading, request
from tests.collect.test_serve import collecting_campaign

pytestmark = pytest.mark.loopback


def test_star_readings_are_stored_checked_and_given_back(tmp_path):
    camp = collecting_campaign(tmp_path, "astrometry = []\nlight_curves = []\n")
    camp.write_text(camp.read_text().replace(
        "[logs]", '[[star]]\nid = "target"\nname = "collection target"\nra_deg = 337.2929\ndec_deg = 58.4152\n\n[logs]'))
    server = Server(camp, tmp_path / "store.sqlite", tmp_path / "links.json")
    try:
        site = server.links["sites"]["lowmead"]
        page = request(site).text
        assert 'name="kind" value="astrometry"' in page and 'name="kind" value="light_curves"' in page
        good = post_reading(site, "astrometry", {"star": "target", "time_utc": "2027-09-10T22:00:00Z", "ra_deg": "337.2931",
                                                 "dec_deg": "58.4153", "sigma_arcsec": "0.1"})
        assert good.status == 201 and good.json()["flags"] == []
        # the right ascension in hours: the check's own diagnosis comes back with the reading
        hours = post_reading(site, "astrometry", {"star": "target", "time_utc": "2027-09-11T22:00:00Z", "ra_deg": "22.4862",
                                                  "dec_deg": "58.4153", "sigma_arcsec": "0.1"})
        assert hours.status == 201 and [f["code"] for f in hours.json()["flags"]] == ["ra-hours"]
        unknown = post_reading(site, "light_curves", {"star": "nosuch", "time_utc": "2027-09-10T22:00:00Z",
                                                      "magnitude": "3.9", "magnitude_sigma": "0.02", "band": "V"})
        assert unknown.status >= 400 and "star" in unknown.text
        log = request(server.links["coordinator"] + "/logs/astrometry.csv").text
        assert "target,2027-09-10T22:00:00Z,337.2931,58.4153,0.1,lowmead" in log
    finally:
        server.stop()
