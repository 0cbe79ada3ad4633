"""``firstrung serve`` driven over HTTP on a loopback port, as phones and the coordinator use it."""

from __future__ import annotations

import csv
import io
import json
import os
import re
import signal
import subprocess
import sys
import time
import urllib.parse
from pathlib import Path

import pytest
from tests.collect.client import Server, form_tokens, post_reading, request

DEMO = Path(__file__).resolve().parents[2] / "src" / "firstrung" / "data" / "demo" / "campaign.toml"
pytestmark = pytest.mark.loopback

FORM = {"Content-Type": "application/x-www-form-urlencoded", "Accept": "application/json"}


def collecting_campaign(folder: Path, logs: str = "shadows = []\neclipse = []\nphases = []\n") -> Path:
    """The demo campaign's sites (invented), collecting the kinds named in ``logs`` (empty lists)."""
    text = DEMO.read_text(encoding="utf-8").split("[logs]")[0] + "[logs]\n" + logs
    path = folder / "campaign.toml"
    path.write_text(text, encoding="utf-8")
    return path


def every_reading(server: Server) -> list[dict]:
    return list(csv.DictReader(io.StringIO(request(server.links["coordinator"] + "/readings.csv").text)))


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    folder = tmp_path_factory.mktemp("serve")
    campaign = collecting_campaign(folder)
    server = Server(campaign, folder / "store.sqlite", folder / "links.json")
    yield folder, campaign, server
    server.stop()


def test_links_file_names_coordinator_and_every_site(served):
    from firstrung.campaign import read_campaign

    _, campaign, server = served
    sites = {s.id for s in read_campaign(campaign).sites}  # every site of the campaign, whatever it holds
    assert {"fjell", "lowmead", "sardo"} <= sites and set(server.links["sites"]) == sites
    tokens = [u.rsplit("/", 1)[1] for u in [server.links["coordinator"], *server.links["sites"].values()]]
    assert len(set(tokens)) == len(sites) + 1 and all(len(t) >= 43 for t in tokens)  # 32 random bytes each
    assert server.links["coordinator"].startswith("http://127.0.0.1:")


def test_each_form_kind_stores_a_reading_with_the_checks_verdict(served):
    _, _, server = served
    site = server.links["sites"]["lowmead"]
    page = request(site).text
    for kind in ("shadows", "eclipse", "phases"):
        assert f'name="kind" value="{kind}"' in page
    # lowmead (47.80 N, 8.90 E): a shadow of 1.5 m gnomon at apparent noon, 2027-03-20 (from the plan's prediction)
    shadow = post_reading(site, "shadows", {"time_local": "2027-03-20T12:25:00", "shadow_mm": "1661"})
    eclipse = post_reading(site, "eclipse", {"time_utc": "2029-06-26T01:32:40Z", "event": "U1"})
    phases = post_reading(site, "phases", {"time_utc": "2027-01-15T18:40:00Z", "quarter": "first"})
    for answer in (shadow, eclipse, phases):
        assert answer.status == 201, answer.text
        assert answer.json()["stored"] is True
    assert isinstance(shadow.json()["looks_right"], bool)
    # an eclipse contact an hour off is the check's event-time-mismatch, as `firstrung check` says it
    assert [f["code"] for f in eclipse.json()["flags"]] in ([], ["event-time-mismatch"], ["moon-below-horizon"])
    logs = {k: request(server.links["coordinator"] + f"/logs/{k}.csv").text for k in ("shadows", "eclipse", "phases")}
    assert "lowmead,2027-03-20T12:25:00,1661" in logs["shadows"]
    assert "lowmead,2029-06-26T01:32:40Z,U1" in logs["eclipse"]
    assert "lowmead,2027-01-15T18:40:00Z,first" in logs["phases"]


def test_the_verdict_is_the_checks_own_diagnosis(served):
    _, _, server = served
    site = server.links["sites"]["sardo"]
    # a length typed in mm into the cm column: a wild value, the check's outlier (or unit) flag, stored all the same
    answer = post_reading(site, "shadows", {"time_local": "2027-03-20T12:20:00", "shadow_cm": "5040"})
    assert answer.status == 201
    data = answer.json()
    assert data["looks_right"] is False
    assert {f["code"] for f in data["flags"]} & {"outlier", "length-unit", "series-mismatch"}


def test_a_refused_reading_stores_nothing_and_names_the_field(served):
    _, _, server = served
    site = server.links["sites"]["fjell"]
    before = len(every_reading(server))
    cases = [
        ({"time_local": "2027-03-20T12:30:00", "shadow_mm": "-5"}, "shadow_mm", "positive number"),
        ({"time_local": "2027-03-20T12:30:00"}, "shadow_m", "a value is needed"),
        ({"time_local": "2027-03-28T02:30:00", "shadow_mm": "1500"}, "time_local", "does not exist"),
        ({"time_local": "yesterday noon", "shadow_mm": "1500"}, "time_local", "ISO 8601"),
        ({"time_local": "2027-03-20T12:30:00", "time_utc": "2027-03-20T11:30:00Z", "shadow_mm": "1"}, "time_utc", "one of"),
    ]
    for cells, field, words in cases:
        answer = post_reading(site, "shadows", cells)
        assert answer.status == 422, (cells, answer.text)
        assert answer.json()["field"] == field, answer.text
        assert words in answer.json()["reason"], answer.text
    page = post_reading(site, "eclipse", {"time_utc": "2029-06-26T01:32:40Z", "event": "U9"}, accept_json=False)
    assert page.status == 422 and "Not stored." in page.text and "<b>event</b>" in page.text
    assert len(every_reading(server)) == before


def test_wrong_or_missing_tokens_get_404_and_store_nothing(served):
    _, _, server = served
    before = len(every_reading(server))
    site = server.links["sites"]["fjell"]
    base = site.rsplit("/s/", 1)[0]
    bad = site[:-4] + ("AAAA" if not site.endswith("AAAA") else "BBBB")
    assert request(bad).status == 404
    assert request(base + "/s/").status == 404
    assert request(base + "/").status == 404
    body = urllib.parse.urlencode({"kind": "shadows", "time_local": "2027-03-20T12:30:00", "shadow_mm": "1500"})
    assert request(bad, body.encode(), FORM).status == 404
    # a site's token is no coordinator's, and the other way round
    token = site.rsplit("/", 1)[1]
    assert request(f"{base}/c/{token}/logs/shadows.csv").status == 404
    assert request(f"{base}/s/{server.links['coordinator'].rsplit('/', 1)[1]}").status == 404
    assert len(every_reading(server)) == before


def test_every_page_gives_each_form_its_own_id_and_token_and_the_other_sites_do_not_take_them(served):
    """The forms are kept rendered; their ids and anti-forgery tokens are new on every page, one per form, and
    a form of one site's page is refused by another site's link (403, nothing stored)."""
    _, _, server = served
    fjell, lowmead = server.links["sites"]["fjell"], server.links["sites"]["lowmead"]
    first, second = request(fjell).text, request(fjell).text
    ids = [re.findall(r'name="(form_id|csrf_token)" value="([^"]*)"', page) for page in (first, second)]
    assert len(ids[0]) == len(ids[1]) >= 2 * 3  # a form per kind, three for the shadows
    values = [v for found in ids for _, v in found]
    assert len(set(values)) == len(values) and not any("<" in v or "&" in v for v in values)
    assert "form-id-" not in first and "form-token-" not in second
    before = len(every_reading(server))
    fields = form_tokens(first, "shadows")
    fields.update({"time_utc": "2027-03-20T11:20:00Z", "shadow_mm": "1500"})
    assert request(lowmead, urllib.parse.urlencode(fields).encode(), FORM).status == 403
    assert len(every_reading(server)) == before


def test_hostile_input_is_escaped_or_refused(served):
    _, _, server = served
    site = server.links["sites"]["fjell"]
    before = len(every_reading(server))
    page = request(site).text
    # forged posts: no form token, another link's token, a token of another form
    fields = {"kind": "shadows", "time_local": "2027-03-20T12:30:00", "shadow_mm": "1500"}
    assert request(site, urllib.parse.urlencode(fields).encode(), FORM).status == 403
    other = form_tokens(request(server.links["sites"]["sardo"]).text, "shadows")
    assert request(site, urllib.parse.urlencode({**fields, **other}).encode(), FORM).status == 403
    mine = form_tokens(page, "shadows")
    assert request(site, urllib.parse.urlencode({**fields, **mine, "form_id": "forged"}).encode(), FORM).status == 403
    # oversized bodies, declared or not
    huge = urllib.parse.urlencode({**fields, **mine, "note": "x" * 20000}).encode()
    assert request(site, huge, FORM).status == 413
    # another content type
    assert request(site, b"{}", {"Content-Type": "application/json"}).status == 415
    assert len(every_reading(server)) == before
    # script tags and formula cells: stored as text, escaped in pages, made inert in the CSV
    answer = post_reading(site, "shadows", {"time_local": "2027-03-20T12:34:00", "shadow_mm": "1659",
                                            "observer": "<script>alert('x')</script>", "note": "=HYPERLINK(\"http://x\")"})
    assert answer.status == 201
    for html in (request(site).text, request(server.links["coordinator"]).text):
        assert "<script>" not in html
        assert "&lt;script&gt;" in html
    log = request(server.links["coordinator"] + "/logs/shadows.csv")
    assert log.headers["Content-Type"].startswith("text/csv")
    row = [r for r in csv.DictReader(io.StringIO(log.text)) if r["observer"].startswith("<script>")][0]
    assert row["note"] == "'=HYPERLINK(\"http://x\")"
    headers = request(site).headers
    assert "default-src 'none'" in headers["Content-Security-Policy"]
    assert headers["Referrer-Policy"] == "no-referrer"


def test_a_form_sent_twice_is_stored_once_and_withdrawn_readings_are_kept(served):
    _, _, server = served
    site = server.links["sites"]["sardo"]
    page = request(site).text
    first = post_reading(site, "shadows", {"time_local": "2027-03-20T12:36:00", "shadow_mm": "700"}, page=page)
    again = post_reading(site, "shadows", {"time_local": "2027-03-20T12:36:00", "shadow_mm": "700"}, page=page)
    assert first.status == again.status == 201
    assert again.json()["id"] == first.json()["id"] and again.json()["again"] is True
    coordinator = server.links["coordinator"]
    form = request(coordinator).text
    tokens = {name: form.split(f'name="{name}" value="')[1].split('"')[0] for name in ("form_id", "csrf_token")}
    body = urllib.parse.urlencode({"reading": first.json()["id"], "reason": "board moved", **tokens}).encode()
    assert request(coordinator + "/withdraw", body, {"Content-Type": "application/x-www-form-urlencoded"}).status == 200
    forged = urllib.parse.urlencode({"reading": first.json()["id"]}).encode()
    assert request(coordinator + "/withdraw", forged, FORM).status == 403
    assert ",700" not in request(coordinator + "/logs/shadows.csv").text
    kept = [r for r in every_reading(server) if r["id"] == str(first.json()["id"])]
    assert kept and kept[0]["withdrawn_reason"] == "board moved" and kept[0]["withdrawn_utc"]


def test_only_the_kinds_named_are_collected(tmp_path):
    campaign = collecting_campaign(tmp_path, "shadows = []\n")
    with Server(campaign, tmp_path / "s.sqlite", tmp_path / "links.json") as server:
        page = request(server.links["sites"]["fjell"]).text
        assert 'value="shadows"' in page and 'value="eclipse"' not in page
        assert "certified solar filter" in page  # the solar caution beside the shadow form
        assert "Local apparent noon on" in page
        assert request(server.links["coordinator"] + "/logs/eclipse.csv").status == 404


def _ended(pid: int) -> bool:
    try:
        return Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0] in ("Z", "X")
    except OSError:
        return True


@pytest.mark.skipif(not Path("/proc/self/task").exists() or (os.cpu_count() or 1) < 2,
                    reason="needs /proc and two cores (the check runs in the server's own process on one)")
def test_the_check_process_ends_with_the_server_even_when_the_server_is_killed(tmp_path, monkeypatch):
    monkeypatch.setenv("TMPDIR", str(tmp_path))  # a server killed outright cannot remove its passing files' folders
    campaign = collecting_campaign(tmp_path, "shadows = []\n")
    with Server(campaign, tmp_path / "s.sqlite", tmp_path / "links.json") as server:
        answer = post_reading(server.links["sites"]["fjell"], "shadows",
                              {"time_utc": "2027-03-20T11:20:00Z", "shadow_mm": "1500"})
        assert answer.status == 201 and "check-failed" not in {f["code"] for f in answer.json()["flags"]}
        pid = server.process.pid
        children = [int(c) for task in Path(f"/proc/{pid}/task").glob("*/children") for c in task.read_text().split()]
        assert children  # the check process (and multiprocessing's resource tracker)
        server.process.kill()
        server.process.wait()
        deadline = time.monotonic() + 15
        while not all(_ended(c) for c in children) and time.monotonic() < deadline:
            time.sleep(0.2)
        left = [c for c in children if not _ended(c)]
        for c in left:  # (they would hold the server's output open)
            os.kill(c, signal.SIGKILL)
        assert not left


def _reduce(campaign: Path) -> dict:
    out = subprocess.run([sys.executable, "-m", "firstrung", "reduce", "shadows", str(campaign), "--json"],
                         capture_output=True, text=True, timeout=300, env={"COLUMNS": "80", **__import__("os").environ})
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


def test_restart_keeps_every_reading_and_downloads_reduce_like_the_files(tmp_path):
    campaign = collecting_campaign(tmp_path, "shadows = []\n")
    subprocess.run([sys.executable, "-m", "firstrung", "simulate", "shadows", str(campaign), "--from", "2027-03-20",
                    "--to", "2027-03-20", "-o", str(tmp_path / "sim"), "--seed", "5"], check=True,
                   capture_output=True, timeout=300)
    with open(tmp_path / "sim" / "shadows.csv", encoding="utf-8", newline="") as f:
        rows = [r for k, r in enumerate(csv.DictReader(f)) if k % 5 == 0]  # a reading every 10 minutes
    store, links = tmp_path / "store.sqlite", tmp_path / "links.json"
    half = len(rows) // 2
    with Server(campaign, store, links) as server:
        for r in rows[:half]:
            cells = {k: v for k, v in r.items() if k != "site" and v}
            assert post_reading(server.links["sites"][r["site"]], "shadows", cells).status == 201
        first_links = server.links
        before = request(server.links["coordinator"] + "/logs/shadows.csv").text
    with Server(campaign, store, links) as server:
        assert server.links["sites"] == {s: u.replace(u.split("/")[2], server.links["coordinator"].split("/")[2])
                                         for s, u in first_links["sites"].items()}
        assert request(server.links["coordinator"] + "/logs/shadows.csv").text == before
        for r in rows[half:]:
            cells = {k: v for k, v in r.items() if k != "site" and v}
            assert post_reading(server.links["sites"][r["site"]], "shadows", cells).status == 201
        downloaded = request(server.links["coordinator"] + "/logs/shadows.csv").text
    assert len(list(csv.DictReader(io.StringIO(downloaded)))) == len(rows)
    (tmp_path / "given").mkdir()
    with open(tmp_path / "given" / "shadows.csv", "w", newline="", encoding="utf-8") as f:
        writer = csv.DictWriter(f, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    (tmp_path / "got").mkdir()
    (tmp_path / "got" / "shadows.csv").write_text(downloaded, encoding="utf-8")
    base = campaign.read_text(encoding="utf-8").split("[logs]")[0]
    (tmp_path / "from_files.toml").write_text(base + '[logs]\nshadows = ["given/shadows.csv"]\n', encoding="utf-8")
    (tmp_path / "from_server.toml").write_text(base + '[logs]\nshadows = ["got/shadows.csv"]\n', encoding="utf-8")
    files, served_result = _reduce(tmp_path / "from_files.toml"), _reduce(tmp_path / "from_server.toml")
    assert served_result["earth_radius_km"] == files["earth_radius_km"]
    assert served_result["sites"] == files["sites"]
    # a sanity bound, not the reference: the synthetic campaign's radius within 5 % of the WGS84 meridional radius
    assert abs(files["earth_radius_km"]["value"] / files["expected_radius_km"] - 1) < 0.05


def test_the_shadow_page_offers_the_angle_and_tip_trace_forms_with_their_own_predictions(served):
    _, _, server = served
    site = server.links["sites"]["fjell"]
    page = request(site).text
    assert page.count('name="kind" value="shadows"') == 3  # a length, an angle, a tip position
    for title in ("Shadow length", "The Sun&#39;s altitude", "Shadow tip on the board"):
        assert title in page, title
    angle = page[page.index('id="shadows-angle-way"'):page.index('id="shadows-trace-way"')]
    # the angle form asks for an angle and predicts one: no length field, no length in its hint
    assert 'name="value:altitude_deg"' in angle and "zenith distance" in angle
    assert "value:shadow_m" not in angle and "Shortest shadow" not in angle and " cm" not in angle
    hint = angle[angle.index('class="hint"'):angle.index("</div>")]
    assert "lower limb" in hint and "upper limb" in hint and "refraction included" in hint
    trace = page[page.index('id="shadows-trace-way"'):]
    trace = trace[:trace.index("</form>")]
    assert 'name="value:tip_x_mm"' in trace and 'name="value:tip_y_mm"' in trace and "value:shadow_m" not in trace
    assert "every 10 minutes" in trace  # as the blank trace sheet asks
    # an angle and a timed tip position are stored as the log's own columns and checked
    angle_reading = post_reading(site, "shadows", {"time_local": "2027-03-20T12:30:00", "altitude_deg": "28.1",
                                                   "limb": "lower"})
    tip_reading = post_reading(site, "shadows", {"time_local": "2027-03-20T12:30:00", "tip_x_mm": "12",
                                                 "tip_y_mm": "2110"})
    for answer in (angle_reading, tip_reading):
        assert answer.status == 201, answer.text
    log = request(server.links["coordinator"] + "/logs/shadows.csv").text
    header = log.splitlines()[0].split(",")
    assert {"altitude_deg", "limb", "tip_x_mm", "tip_y_mm"} <= set(header)
