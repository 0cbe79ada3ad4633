"""An open network's join link, driven over HTTP on a loopback port: schools register, send readings,
and the coordinator's log reduces as the same rows given as a file.

The schools and their readings are invented (``simulate_network``, the open-network rehearsal);
the reduction compared with is firstrung's own on the same rows given as a file (regression:
the export must not change a result).
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
import subprocess
import sys
import urllib.parse

import pytest
from tests.collect.client import Server, form_tokens, post_reading, request
from tests.collect.test_serve import collecting_campaign

pytestmark = pytest.mark.loopback

FORM = {"Content-Type": "application/x-www-form-urlencoded", "Accept": "application/json"}
OPEN = '[campaign]\nname = "Open network (invented)"\n\n[logs]\nshadows = []\neclipse = []\n'
#: A school of the invented scenario: on the campaign's equinox, near 47.8 N.
RIDGE = {"name": "Ridge School", "latitude_deg": "47.8012", "longitude_deg": "8.9034", "elevation_m": "410",
         "timezone": "Europe/Zurich", "value:gnomon_m": "120", "column:gnomon_m": "gnomon_cm"}


def join_tokens(page: str) -> dict[str, str]:
    return {name: re.search(f'name="{name}" value="([^"]*)"', page).group(1) for name in ("form_id", "csrf_token")}


def join(url: str, fields: dict, tokens: dict | None = None):
    """GET the join page, then POST the school (JSON answer)."""
    tokens = tokens if tokens is not None else join_tokens(request(url).text)
    return request(url, urllib.parse.urlencode({**tokens, **fields}).encode(), FORM)


def schools(server: Server) -> list[str]:
    return request(server.links["coordinator"], headers={"Accept": "application/json"}).json()["schools"]


@pytest.fixture(scope="module")
def open_network(tmp_path_factory):
    folder = tmp_path_factory.mktemp("join")
    campaign = folder / "campaign.toml"
    campaign.write_text(OPEN, encoding="utf-8")
    server = Server(campaign, folder / "store.sqlite", folder / "links.json")
    yield server
    server.stop()


def test_a_school_joins_and_its_own_link_stores_a_reading(open_network):
    server = open_network
    # no [[site]]: the join link is on by default, and the Contract's keys are kept
    assert server.links["sites"] == {} and server.links["coordinator"].startswith("http://127.0.0.1:")
    assert server.links["join"].startswith("http://127.0.0.1:") and server.links["schools"] == {}
    page = request(server.links["join"]).text
    assert "certified solar filter" in page and "safety officer" in page
    answer = join(server.links["join"], RIDGE)
    assert answer.status == 201, answer.text
    data = answer.json()
    assert data["joined"] is True and data["site"] == "ridge-school" and data["again"] is False
    link = data["link"]
    token = link.rsplit("/s/", 1)[1]
    assert len(token) >= 43 and token not in server.links["join"] and token not in server.links["coordinator"]
    # its own page: the shadow forms only (an eclipse log has no column for a school's position)
    mine = request(link).text
    assert 'name="kind" value="shadows"' in mine and 'name="kind" value="eclipse"' not in mine
    assert "Local apparent noon on" in mine and "Europe/Zurich" in mine
    # ridge (47.80 N, 8.90 E): a 120 cm gnomon's noon shadow at the 2027 equinox is about 133 cm
    # (tan(90 - 47.8 - 0.1 deg), the Sun's declination near 0; from the plan's own prediction)
    stored = post_reading(link, "shadows", {"time_local": "2027-03-20T12:33:00", "shadow_cm": "133.0"})
    assert stored.status == 201 and stored.json()["site"] == "ridge-school", stored.text
    assert stored.json()["looks_right"] is True, stored.text
    fields = {**form_tokens(mine, "shadows"), "kind": "eclipse", "time_utc": "2029-06-26T01:32:40Z", "event": "U1"}
    wrong = request(link, urllib.parse.urlencode(fields).encode(), FORM)
    assert wrong.status == 422 and wrong.json()["field"] == "kind", wrong.text
    # the coordinator's page lists the school; the log carries its position and gnomon in the row
    coordinator = request(server.links["coordinator"]).text
    assert "Ridge School" in coordinator and link in coordinator and server.links["join"] in coordinator
    log = list(csv.DictReader(io.StringIO(request(server.links["coordinator"] + "/logs/shadows.csv").text)))
    assert log == [{"site": "Ridge School", "time_local": "2027-03-20T12:33:00", "shadow_cm": "133.0",
                    "gnomon_cm": "120", "latitude_deg": "47.8012", "longitude_deg": "8.9034", "elevation_m": "410",
                    "timezone": "Europe/Zurich"}]
    # the same form sent twice: the same school, the same link
    assert "ridge-school" in schools(server)


def test_a_form_sent_twice_gives_the_same_school(open_network):
    server = open_network
    tokens = join_tokens(request(server.links["join"]).text)
    fields = {**RIDGE, "name": "Vale College", "latitude_deg": "44.1"}
    first, again = join(server.links["join"], fields, tokens), join(server.links["join"], fields, tokens)
    assert first.status == again.status == 201
    assert again.json()["link"] == first.json()["link"] and again.json()["again"] is True
    assert schools(server).count("vale-college") == 1
    # another form with a name that has joined: refused, naming the field
    taken = join(server.links["join"], fields)
    assert taken.status == 422 and taken.json()["field"] == "name" and "joined already" in taken.json()["reason"]
    # a name that reads as the same site id: refused too (the log's reader would give it that id)
    alike = join(server.links["join"], {**fields, "name": "Vale  College"})
    assert alike.status == 422 and alike.json()["field"] == "name" and "'vale-college'" in alike.json()["reason"]


@pytest.mark.parametrize(("fields", "field", "words"), [
    ({"latitude_deg": "95"}, "latitude_deg", "a latitude from -90 to 90 deg"),
    ({"latitude_deg": "N47.8"}, "latitude_deg", "a latitude"),
    ({"latitude_deg": ""}, "latitude_deg", "a value is needed"),
    ({"longitude_deg": "=1+1"}, "longitude_deg", "a longitude from -180 to 180 deg"),
    ({"longitude_deg": "8.9.3"}, "longitude_deg", "a longitude"),
    ({"elevation_m": "12000"}, "elevation_m", "an elevation from -500 to 9000 m"),
    ({"timezone": "Mars/Olympus"}, "timezone", "an IANA time zone"),
    ({"timezone": "@Europe/Zurich"}, "timezone", "an IANA time zone"),
    ({"value:gnomon_m": "-120"}, "gnomon_cm", "a positive number of centimetres"),
    ({"value:gnomon_m": "120000", "column:gnomon_m": "gnomon_mm"}, "gnomon_mm", "below 100 m"),
    ({"value:gnomon_m": ""}, "gnomon_cm", "height is needed"),
    ({"column:gnomon_m": "gnomon_km"}, "gnomon_m", "a unit of"),
    ({"name": ""}, "name", "name is needed"),
    ({"name": "x" * 81}, "name", "at most 80 characters"),
])
def test_a_bad_school_is_refused_naming_the_field_and_stores_nothing(open_network, fields, field, words):
    server = open_network
    before = schools(server)
    answer = join(server.links["join"], {**RIDGE, "name": "Harbour School", **fields})
    assert answer.status == 422, answer.text
    assert answer.json()["field"] == field and words in answer.json()["reason"], answer.text
    assert schools(server) == before
    page = request(server.links["join"], urllib.parse.urlencode(
        {**join_tokens(request(server.links["join"]).text), **RIDGE, "name": "Harbour School", **fields}).encode(),
        {"Content-Type": "application/x-www-form-urlencoded"})
    assert page.status == 422 and "Not joined." in page.text and f"<b>{field}</b>" in page.text


def test_forged_and_hostile_joins_are_refused_or_escaped(open_network):
    server = open_network
    url = server.links["join"]
    fields = {**RIDGE, "name": "Forged School"}
    # a script tag in a name: stored as text, escaped on every page
    hostile = join(url, {**fields, "name": "Hill <script>alert(1)</script> School"})
    assert hostile.status == 201, hostile.text
    link = hostile.json()["link"]
    answer_page = request(url, urllib.parse.urlencode(
        {**join_tokens(request(url).text), **fields, "name": "Hill <script>alert(1)</script> School"}).encode(),
        {"Content-Type": "application/x-www-form-urlencoded"})
    assert answer_page.status == 422  # the same name again, now answered as a page
    for html in (answer_page.text, request(link).text, request(server.links["coordinator"]).text):
        assert "<script>" not in html and "&lt;script&gt;" in html
    before = schools(server)
    # forged posts: no form token, a token of another form, a changed token, a token of another link's form
    assert request(url, urllib.parse.urlencode(fields).encode(), FORM).status == 403
    tokens = join_tokens(request(url).text)
    assert join(url, fields, {**tokens, "form_id": "forged"}).status == 403
    assert join(url, fields, {**tokens, "csrf_token": tokens["csrf_token"][:-1] + ("0" if tokens["csrf_token"][-1] != "0" else "1")}).status == 403
    assert join(url, fields, join_tokens(request(link).text)).status == 403
    # a wrong join token, another content type, an oversized body, a field the form has not
    assert request(url[:-4] + "AAAA", urllib.parse.urlencode({**tokens, **fields}).encode(), FORM).status == 404
    assert request(url, b"{}", {"Content-Type": "application/json"}).status == 415
    assert join(url, {**fields, "name": "x" * 20000}, tokens).status == 413
    extra = join(url, {**fields, "site": "ridge-school"}, tokens)
    assert extra.status == 422 and extra.json()["field"] == "site"
    # formula cells in every string: refused, naming the field (tab and CR prefixes included)
    for name in ("=HYPERLINK(\"http://x\")", "+1 School", "-1 School", "@SUM(1)", "\t=1+1", "\r=1+1"):
        answer = join(url, {**fields, "name": name})
        assert answer.status == 422 and answer.json()["field"] == "name", (name, answer.text)
    for column in ("latitude_deg", "longitude_deg", "elevation_m", "value:gnomon_m", "timezone"):
        for cell in ("=1+1", "@1", "\t=1", "+1+1", "\r-1+1"):
            answer = join(url, {**fields, column: cell})
            assert answer.status == 422, (column, cell, answer.text)
            assert answer.json()["field"].startswith(column.split(":")[-1][:6]), (column, cell, answer.text)
    assert schools(server) == before
    # a school's reading with formula cells: made inert in the log
    for observer, note, minute in (("@SUM(A1)", "\t=1+1", "33"), ("+cmd|' /C calc'!A0", "\r-2+3", "35")):
        sent = post_reading(link, "shadows", {"time_local": f"2027-03-20T12:{minute}:00", "shadow_cm": "97.5",
                                              "observer": observer, "note": note})
        assert sent.status == 201, sent.text
    log = request(server.links["coordinator"] + "/logs/shadows.csv").text
    rows = [r for r in csv.DictReader(io.StringIO(log)) if r["site"] == hostile.json()["name"]]
    # a tab or CR is a space, stripped; what then starts a formula gets an apostrophe
    assert [(r["observer"], r["note"]) for r in rows] == [("'@SUM(A1)", "'=1+1"), ("'+cmd|' /C calc'!A0", "'-2+3")]
    assert not any(cell.startswith(("=", "+", "@", "\t", "\r")) for r in csv.reader(io.StringIO(log)) for cell in r)


def _run(*arguments, codes=(0,)) -> dict:
    out = subprocess.run([sys.executable, "-m", "firstrung", *map(str, arguments), "--json"],
                         capture_output=True, text=True, timeout=300, env={**os.environ, "COLUMNS": "80"})
    assert out.returncode in codes, out.stderr
    return json.loads(out.stdout)


def test_the_schools_log_reduces_as_the_same_rows_given_as_a_file(tmp_path):
    from firstrung.methods.shadows.rehearsal_network import network_log_rows, simulate_network

    rows = network_log_rows(simulate_network(8, "2027-03-20", 3))
    campaign = tmp_path / "campaign.toml"
    campaign.write_text('[campaign]\nname = "Open network (invented)"\n\n[logs]\nshadows = []\n', encoding="utf-8")
    with Server(campaign, tmp_path / "store.sqlite", tmp_path / "links.json") as server:
        for r in rows:
            joined = join(server.links["join"], {"name": r["site"], "latitude_deg": r["latitude_deg"],
                                                 "longitude_deg": r["longitude_deg"], "elevation_m": r["elevation_m"],
                                                 "value:gnomon_m": r["gnomon_m"], "column:gnomon_m": "gnomon_m"})
            assert joined.status == 201, joined.text
            cells = {k: r[k] for k in ("time_utc", "shadow_cm", "observer", "note")}
            assert post_reading(joined.json()["link"], "shadows", cells).status == 201
        downloaded = request(server.links["coordinator"] + "/logs/shadows.csv").text
        check = request(server.links["coordinator"] + "/check.json").json()
    (tmp_path / "given.csv").write_text("", encoding="utf-8")
    with open(tmp_path / "given.csv", "w", newline="", encoding="utf-8") as f:
        writer = csv.DictWriter(f, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    (tmp_path / "got.csv").write_text(downloaded, encoding="utf-8")
    for name, log in (("from_file.toml", "given.csv"), ("from_server.toml", "got.csv")):
        (tmp_path / name).write_text(f'[campaign]\nname = "n"\n\n[logs]\nshadows = ["{log}"]\n', encoding="utf-8")
    given, served = (_run("reduce", "shadows", tmp_path / f"from_{k}.toml") for k in ("file", "server"))
    assert served["method"] == given["method"] == "network"
    assert served["earth_radius_km"] == given["earth_radius_km"]
    assert served["sites"] == given["sites"] and served["pairs"] == given["pairs"]
    assert {s["name"] for s in served["sites"]} <= {r["site"] for r in rows} and len(served["sites"]) >= 6
    # the coordinator's check of the log is `check` on the same rows given as a file
    flags = _run("check", tmp_path / "from_file.toml", codes=(0, 1))["flags"]
    assert [(f["row"], f["site"], f["code"]) for f in check["flags"]] == [(f["row"], f["site"], f["code"]) for f in flags]
    # a sanity bound, not the reference: the invented network within 10 % of the WGS84 meridional radius
    assert abs(given["earth_radius_km"]["value"] / given["expected_radius_km"] - 1) < 0.10


def test_a_declared_campaign_joins_only_when_asked_and_schools_survive_a_restart(tmp_path):
    campaign = collecting_campaign(tmp_path, "shadows = []\n")
    store, links = tmp_path / "store.sqlite", tmp_path / "links.json"
    with Server(campaign, store, links) as server:  # sites declared: no join link by default
        assert "join" not in server.links and set(server.links) == {"coordinator", "sites"}
    with Server(campaign, store, links, extra=["--join"]) as server:
        joined = join(server.links["join"], RIDGE)
        assert joined.status == 201
        link = joined.json()["link"]
        assert post_reading(link, "shadows", {"time_local": "2027-03-20T12:33:00", "shadow_cm": "133.0"}).status == 201
        assert post_reading(server.links["sites"]["lowmead"], "shadows",
                            {"time_local": "2027-03-20T12:25:00", "shadow_mm": "1661"}).status == 201
        join_url = server.links["join"]
    with Server(campaign, store, links, extra=["--join"]) as server:
        port = server.links["coordinator"].split("/")[2]
        assert server.links["schools"] == {"ridge-school": link.replace(link.split("/")[2], port)}
        assert server.links["join"] == join_url.replace(join_url.split("/")[2], port)
        mine = request(server.links["schools"]["ridge-school"])
        assert mine.status == 200 and "Ridge School" in mine.text
        log = list(csv.DictReader(io.StringIO(request(server.links["coordinator"] + "/logs/shadows.csv").text)))
        assert [(r["site"], r["latitude_deg"]) for r in log] == [("Ridge School", "47.8012"), ("lowmead", "")]
        check = request(server.links["coordinator"] + "/check.json").json()
        assert not [f for f in check["flags"] if f["code"] in ("unknown-site", "bad-value")], check
    with Server(campaign, store, links, extra=["--no-join"]) as server:
        assert "join" not in server.links
        assert request(join_url.replace(join_url.split("/")[2], server.links["coordinator"].split("/")[2])).status == 404


def test_a_campaign_with_no_site_and_no_shadow_log_is_refused_in_one_line(tmp_path):
    campaign = tmp_path / "campaign.toml"
    campaign.write_text('[campaign]\nname = "n"\n\n[logs]\neclipse = []\n', encoding="utf-8")
    out = subprocess.run([sys.executable, "-m", "firstrung", "serve", str(campaign), "--port", "0"],
                         capture_output=True, text=True, timeout=120, env={**os.environ, "COLUMNS": "80"})
    assert out.returncode == 2 and "Traceback" not in out.stderr
    assert "no [[site]] table" in out.stderr and len(out.stderr.strip().splitlines()) == 1
    sites = collecting_campaign(tmp_path, "eclipse = []\n")
    out = subprocess.run([sys.executable, "-m", "firstrung", "serve", str(sites), "--port", "0", "--join"],
                         capture_output=True, text=True, timeout=120, env={**os.environ, "COLUMNS": "80"})
    assert out.returncode == 2 and "--join: the campaign collects no log whose rows carry their own site" in out.stderr
