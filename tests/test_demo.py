"""The bundled demo: examples/ is exactly what it writes, and the ladder agrees with the reductions."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from firstrung.app.demo import demo_campaign_text, demo_logs
from firstrung.campaign import parse_campaign
from firstrung.cli import main

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def test_examples_folder_is_the_demo_campaign_and_its_simulated_logs():
    assert (EXAMPLES / "campaign.toml").read_text(encoding="utf-8") == demo_campaign_text()
    campaign = parse_campaign(demo_campaign_text(), path=EXAMPLES / "campaign.toml")
    for name, text in demo_logs(campaign).items():
        assert (EXAMPLES / "logs" / name).read_text(encoding="utf-8") == text, (
            f"examples/logs/{name} is stale: run firstrung demo -o examples (or the test's generator)"
        )


@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo")
    with pytest.raises(SystemExit) as done:
        main(["demo", "-o", str(folder)])
    assert done.value.code == 0
    return folder


def test_demo_writes_every_result_and_the_report(demo_folder):
    for name in ("campaign.toml", "logs/shadows.csv", "logs/eclipse.csv", "logs/phases.csv", "logs/transits.csv",
                 "logs/astrometry.csv", "logs/light_curves.csv", "check.json", "earth-radius.json", "moon-distance.json",
                 "sun-moon-ratio.json", "sun-parallax.json", "star-parallax.json", "cepheid-distances.json",
                 "ladder.json", "report.html"):
        assert (demo_folder / name).exists(), name
    html = (demo_folder / "report.html").read_text()
    # ladder, shadow fits, latitude line, eclipse, half moon, transit chords, parallax ellipse, light curve
    assert html.count("<svg") == 8
    check = json.loads((demo_folder / "check.json").read_text())
    # the demo's blunders (a clock an hour out, a mistyped reading, a duplicated row) are found
    codes = set(check["counts"]["by_code"])
    assert {"outlier", "duplicate-row", "contact-label"} <= codes  # and a C4 logged as C3
    assert codes & {"time-shift-hours", "local-time-as-utc"}


def test_ladder_agrees_with_the_separate_reductions(demo_folder):
    ladder = json.loads((demo_folder / "ladder.json").read_text())
    radius = json.loads((demo_folder / "earth-radius.json").read_text())["earth_radius_km"]
    moon = json.loads((demo_folder / "moon-distance.json").read_text())["eclipses"][0]
    ratio = json.loads((demo_folder / "sun-moon-ratio.json").read_text())["sun_moon_distance_ratio"]
    # the median of 1/k samples is 1/k: the same radius as reduce shadows (Monte Carlo noise only)
    assert ladder["earth_radius_km"]["value"] == pytest.approx(radius["value"], rel=2e-4)
    assert ladder["earth_radius_km"]["low"] == pytest.approx(radius["low"], rel=1e-3)
    assert ladder["moon_distance_km"]["value"] == pytest.approx(moon["moon_distance_km"]["value"], rel=1e-3)
    assert ladder["moon_distance_km"]["sigma"] == pytest.approx(moon["moon_distance_km"]["sigma"], rel=0.05)
    # the half-moon ratio is reduced (the ratio holds at the half moon, where the eclipse night's
    # Moon is carried by an exact factor), but the Sun comes from the transit of 2032 when present
    assert ratio["value"] > 0 and ladder["half_moon_distance_factor"] > 0
    transit = json.loads((demo_folder / "sun-parallax.json").read_text())
    assert ladder["sun_distance_method"] == "transit"
    # the median of 1/f samples is 1/f: the Sun's distance in au as reduce transit gives it
    assert ladder["sun_distance_au"]["value"] == pytest.approx(transit["sun_distance_au"]["value"], rel=2e-3)
    assert ladder["sun_distance_km"]["value"] == pytest.approx(transit["sun_distance_km"]["value"], rel=2e-3)
    # the demo's timings are simulated at DE421's distances (1 au) with 5 s errors: within 3 sigma
    p = transit["solar_parallax_arcsec"]
    assert abs(p["value"] - 8.794143) < 3 * p["sigma"]
    assert [t["date"] for t in transit["transits"]] == ["2032-11-13"]
    rejected = [t for t in transit["timings"] if not t["used"]]
    assert rejected == [] and len(transit["timings"]) == 19  # the mislabelled C4 was left out by the check
    # the parsec rung: each star as its own reduction gives it, and the steps that were measured
    stars = {s["id"]: s for s in ladder["stars"]}
    parallax = json.loads((demo_folder / "star-parallax.json").read_text())["stars"][0]
    cepheid = json.loads((demo_folder / "cepheid-distances.json").read_text())["stars"][0]
    assert stars["cyg61"]["distance_pc"]["value"] == pytest.approx(1000 / parallax["parallax_mas"]["value"], rel=2e-3)
    assert stars["dcep"]["distance_pc"]["value"] == pytest.approx(cepheid["distance_pc"]["value"], rel=2e-3)
    assert {"step": "the astronomical unit in km", "source": "measured by the campaign (transit rung)"} in stars["cyg61"]["steps"]
