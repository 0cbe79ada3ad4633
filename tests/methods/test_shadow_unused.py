"""Every school of an open network gets its result page, also when its reading was not used: flagged by the
check, refused by the reader, left out by the reduction or by the network's fit. The page says so, why
(the flag's diagnosis in plain words), what to check before measuring again, and the network's result.

Presentation checks on invented networks (``simulate_network``); the numbers they compare are the
reduction's own JSON (regression checks of the pages, no outside reference is involved).
"""

from __future__ import annotations

import html
import json
import re

from tests.helpers import run_cli, write_network

from firstrung.methods.shadows.rehearsal_network import (
    network_log_rows,
    network_readings,
    simulate_network,
)
from firstrung.methods.shadows.unused import CHECK_BEFORE_AGAIN, EVERY_TIME, PLAIN_WORDS

EQUINOX = "2027-03-20"




def _pages(text: str) -> dict[str, str]:
    """Each school's page by its name (as shown, unescaped)."""
    return {html.unescape(re.search(r"<h1>(.*?)</h1>", s).group(1)): s for s in text.split("<section>")[1:]}


def test_a_school_whose_only_row_was_not_used_gets_a_page_saying_why_and_what_to_check(
        tmp_path, capsys, monkeypatch):
    net = simulate_network(40, EQUINOX, 23, blunder_fraction=0.15)
    rows = network_log_rows(net)
    clean = [k for k in range(40) if not net.blunder[k]]
    bad_cell, moved = clean[0], clean[1]
    rows[bad_cell]["shadow_cm"] = "12,3x"  # a cell the reader refuses
    rows.append(dict(rows[moved], latitude_deg=f"{float(rows[moved]['latitude_deg']) + 3.0:.4f}"))  # two positions
    camp = write_network(tmp_path, rows)
    sheets = tmp_path / "schools.html"
    code, out, err = run_cli(["reduce", "shadows", camp, "--json", "--school-sheets", sheets], capsys, monkeypatch)
    assert code == 2  # rows were refused; the result from the good rows still comes
    data = json.loads(out)
    pages = _pages(sheets.read_text())
    assert set(pages) == {str(n) for n in net.name}  # every school, used or not, once
    used = {s["name"] for s in data["sites"] if not s["outlier"]}
    network = f"{data['earth_radius_km']['value']:,.0f} ± {data['earth_radius_km']['sigma']:,.0f} km"
    for name, page in pages.items():
        assert network in page and "ISO 12312-2" in page  # the network's result and the caution, on each
        assert ("Your reading was not used" in page) == (name not in used), name
    # the check's blunders: the flag's diagnosis in plain words, its message, what to check and the usual checks
    code, out, _ = run_cli(["check", camp, "--json"], capsys, monkeypatch)
    flags = json.loads(out)["flags"]
    site_name = {s.id: s.name for s in network_readings(net)[0]}
    flagged = [f for f in flags if f["severity"] == "error" and f["code"] in PLAIN_WORDS and f["site"] in site_name]
    blundered = {str(net.name[k]) for k in range(40) if net.blunder[k]}
    for f in flagged:
        page = html.unescape(pages[site_name[f["site"]]])
        words = PLAIN_WORDS[f["code"]]
        assert words[0].upper() + words[1:] in page and f["message"] in page
        assert CHECK_BEFORE_AGAIN[f["code"]][0].upper() + CHECK_BEFORE_AGAIN[f["code"]][1:] in page
        assert all(c[0].upper() + c[1:] in page for c in EVERY_TIME)
        assert "ask class of" not in page.lower()  # the coordinator's fix is not the school's
    assert len({f["site"] for f in flagged}) >= 4
    not_used = {n for n, p in pages.items() if "Your reading was not used" in p}
    assert blundered <= not_used | used  # a blunder is either caught (a page saying why) or harmless
    # the refused cell and the two positions: named on the school's page, as the reader said them
    school = str(net.name[bad_cell])
    assert "12,3x" in html.unescape(pages[school]) and "could not be used as sent" in pages[school]
    two = html.unescape(pages[str(net.name[moved])])
    assert "disagree on the position" in two and rows[moved]["latitude_deg"] in two
    assert "Your reading was not used" in two and "latitude_deg" in two


def test_the_report_thanks_every_school_and_counts_those_whose_reading_was_not_used(tmp_path, capsys, monkeypatch):
    net = simulate_network(30, EQUINOX, 29, blunder_fraction=0.2)
    camp = write_network(tmp_path, network_log_rows(net))
    code, _, err = run_cli(["report", camp, "-o", tmp_path / "r.html"], capsys, monkeypatch)
    assert code == 0, err
    text = html.unescape((tmp_path / "r.html").read_text())
    thanks = re.search(r"Thank you to every school that took part:</b> (.*?)\.</p>", text).group(1)
    assert sorted(thanks.split(", "), key=str.lower) == sorted((str(n) for n in net.name), key=str.lower)
    code, out, _ = run_cli(["reduce", "shadows", camp, "--json"], capsys, monkeypatch)
    reduced = {s["name"] for s in json.loads(out)["sites"]}
    missing = 30 - len(reduced)
    assert missing >= 1 and f"{missing} more school{'s' if missing != 1 else ''} sent a reading that was not used" in text
    # in the table of every school: each of them with its flags' codes
    listed = re.findall(r"<tr><td>([^<]*)</td>(?:(?!</tr>).)*?<td>not used: ([a-z, -]+)</td></tr>", text, flags=re.S)
    assert {name for name, _ in listed} == {str(n) for n in net.name} - reduced
    assert all(codes for _, codes in listed)
