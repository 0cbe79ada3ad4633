"""Tests of firstrung.campaign: reading and checking the campaign TOML file.

All sites, names and numbers are invented.
"""

from pathlib import Path

import pytest

from firstrung.campaign import parse_campaign, read_campaign
from firstrung.campaign_model import Baseline, Campaign, EclipseSettings, Gnomon, Site
from firstrung.errors import InputError

VALID = """\
[campaign]
name = "Autumn shadow exchange"

[[site]]
id = "ridge"
name = "Ridge outreach dome <b>"
latitude_deg = 46.2
longitude_deg = 7.4
elevation_m = 620
timezone = "Europe/Zurich"

[site.gnomon]
height_m = 1.0
height_sigma_m = 0.0015
shadow_sigma_m = 0.003
edge = "middle"

[[site]]
id = "coast_2"
latitude_deg = -40.8
longitude_deg = -8
timezone = "UTC"

[site.gnomon]
height_m = 2

[[site]]
id = "hill-3"
latitude_deg = 41
longitude_deg = 180

[[baseline]]
sites = ["ridge", "coast_2"]
distance_km = 598.0
sigma_km = 2
bearing_deg = 178.0

[[baseline]]
sites = ["hill-3", "ridge"]
distance_km = 120
sigma_km = 0

[logs]
shadows = ["logs/shadows.csv", "logs/more.csv"]
eclipse = "logs/eclipse.csv"

[eclipse]
moon_diameter_arcmin = 31.2
moon_diameter_sigma_arcmin = 0.3
moon_sky_rate_deg_per_h = 0.55
"""

# The first site of a minimal campaign; tests append to it.
SITE = """\
[[site]]
id = "ridge"
latitude_deg = 46.2
longitude_deg = 7.4
"""


def write(tmp_path: Path, text: str, name: str = "campaign.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def error_text(tmp_path: Path, text: str) -> str:
    path = write(tmp_path, text)
    with pytest.raises(InputError) as info:
        read_campaign(path)
    message = str(info.value)
    assert "\n" not in message
    prefix = f"{path}:"
    assert message.startswith(prefix)
    return message[len(prefix) :].lstrip()


def test_valid_campaign_round_trip(tmp_path):
    path = write(tmp_path, VALID)
    before = path.read_bytes()
    campaign = read_campaign(path)
    assert path.read_bytes() == before
    assert campaign.name == "Autumn shadow exchange"
    assert campaign.path == path
    assert campaign.site_ids == ("ridge", "coast_2", "hill-3")
    assert campaign.sites[0] == Site(
        id="ridge",
        name="Ridge outreach dome <b>",
        latitude_deg=46.2,
        longitude_deg=7.4,
        elevation_m=620.0,
        timezone="Europe/Zurich",
        gnomon=Gnomon(height_m=1.0, height_sigma_m=0.0015, shadow_sigma_m=0.003, edge="middle"),
    )
    coast = campaign.site("coast_2")
    assert coast.name == "coast_2"
    assert coast.elevation_m == 0.0
    assert coast.gnomon == Gnomon(
        height_m=2.0, height_sigma_m=0.001, shadow_sigma_m=0.002, edge="umbra"
    )
    assert isinstance(coast.latitude_deg, float) and isinstance(coast.gnomon.height_m, float)
    hill = campaign.site("hill-3")
    assert hill.timezone is None and hill.gnomon is None and hill.zone is None
    assert campaign.site("ridge").zone.key == "Europe/Zurich"
    assert campaign.baselines == (
        Baseline(sites=("ridge", "coast_2"), distance_km=598.0, sigma_km=2.0, bearing_deg=178.0),
        Baseline(sites=("hill-3", "ridge"), distance_km=120.0, sigma_km=0.0, bearing_deg=None),
    )
    assert campaign.baseline("coast_2", "ridge") is campaign.baselines[0]
    assert campaign.baseline("coast_2", "hill-3") is None
    assert campaign.logs == {
        "shadows": (tmp_path / "logs/shadows.csv", tmp_path / "logs/more.csv"),
        "eclipse": (tmp_path / "logs/eclipse.csv",),
        "phases": (),
        "transits": (),
        "astrometry": (),
        "light_curves": (),
    }
    assert campaign.eclipse == EclipseSettings(
        moon_diameter_arcmin=31.2,
        moon_diameter_sigma_arcmin=0.3,
        moon_sky_rate_deg_per_h=0.55,
    )


def test_parse_campaign_gives_the_same_as_read_campaign(tmp_path):
    path = write(tmp_path, VALID)
    assert parse_campaign(VALID, path=path) == read_campaign(path)


def test_parse_campaign_without_path():
    campaign = parse_campaign(SITE + '[logs]\nphases = ["p.csv"]\n')
    assert isinstance(campaign, Campaign)
    assert campaign.path is None
    assert campaign.name == "campaign"
    assert campaign.logs["phases"] == (Path("p.csv"),)
    with pytest.raises(InputError) as info:
        parse_campaign("[[site]]\nid = 3\n")
    assert (
        str(info.value)
        == "<campaign>:site[1].id: expected a site id of letters, digits, '-' and '_', got 3"
    )


def test_missing_name_defaults_to_the_file_stem(tmp_path):
    assert read_campaign(write(tmp_path, SITE, "spring-2027.toml")).name == "spring-2027"
    text = "[campaign]\n" + SITE
    assert read_campaign(write(tmp_path, text, "spring-2027.toml")).name == "spring-2027"


def test_a_bom_is_accepted(tmp_path):
    path = tmp_path / "campaign.toml"
    path.write_bytes(b"\xef\xbb\xbf" + SITE.encode("utf-8"))
    assert read_campaign(path).site_ids == ("ridge",)


def test_no_such_file(tmp_path):
    path = tmp_path / "nothing.toml"
    with pytest.raises(InputError) as info:
        read_campaign(path)
    assert str(info.value) == f"{path}: no such file"


def test_not_utf8(tmp_path):
    path = tmp_path / "campaign.toml"
    path.write_bytes(SITE.replace("ridge", "r\xe9ge").encode("latin-1"))
    with pytest.raises(InputError) as info:
        read_campaign(path)
    assert str(info.value) == (
        f"{path}: not UTF-8 text (byte 0xe9 at offset 16); save the campaign file as UTF-8"
    )


def test_toml_syntax_error_gives_line_and_column(tmp_path):
    assert error_text(tmp_path, SITE + "elevation_m = = 3\n") == (
        "5:15: TOML syntax error: Invalid value"
    )


def test_toml_syntax_error_is_relative_to_the_given_path():
    with pytest.raises(InputError) as info:
        parse_campaign('[campaign]\nname = "x\n', path="campaign.toml")
    assert str(info.value) == "campaign.toml:2:10: TOML syntax error: Illegal character '\\n'"


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (
            '[campaign]\nname = "x"\n',
            "no [[site]] table; a campaign needs at least one site (id, latitude_deg, longitude_deg)",
        ),
        ('[site]\nid = "ridge"\n', "site: expected sites written as [[site]] (an array of tables)"),
        (
            "[campaign]\nname = 3\n" + SITE,
            "campaign.name: expected the campaign's name as text, got 3",
        ),
        ('[campaign]\ntitle = "x"\n' + SITE, "campaign.title: unknown key 'title' (allowed: name)"),
        (
            "[sites]\n" + SITE,
            "sites: unknown table 'sites' (allowed: campaign, site, baseline, logs, eclipse, star)",
        ),
        (
            "version = 2\n" + SITE,
            "version: unknown top-level key 'version' (allowed: campaign, site, baseline, logs, eclipse, star)",
        ),
    ],
)
def test_document_shape(tmp_path, text, expected):
    assert error_text(tmp_path, text) == expected


def site_error(tmp_path: Path, extra: str, replace: tuple[str, str] | None = None) -> str:
    """The error for a campaign whose second site gets ``extra`` lines."""
    second = SITE.replace('"ridge"', '"coast"')
    if replace is not None:
        second = second.replace(*replace)
    return error_text(tmp_path, SITE + second + extra)


@pytest.mark.parametrize(
    ("extra", "replace", "expected"),
    [
        (
            "",
            ('id = "coast"', 'id = "coast top"'),
            "site[2].id: expected a site id of letters, digits, '-' and '_', got 'coast top'",
        ),
        (
            "",
            ('id = "coast"', 'id = "ridge"'),
            "site[2].id: duplicate site id 'ridge' (already used by site[1])",
        ),
        (
            "",
            ('id = "coast"\n', ""),
            "site[2].id: missing; expected a short site id such as 'ridge'",
        ),
        (
            "",
            ("latitude_deg = 46.2", "latitude_deg = 95.0"),
            "site[2].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got 95.0",
        ),
        (
            "",
            ("latitude_deg = 46.2", "latitude_deg = -90.5"),
            "site[2].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got -90.5",
        ),
        (
            "",
            ("latitude_deg = 46.2", 'latitude_deg = "46.2"'),
            "site[2].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got '46.2'",
        ),
        (
            "",
            ("latitude_deg = 46.2", "latitude_deg = true"),
            "site[2].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got true",
        ),
        (
            "",
            ("latitude_deg = 46.2", "latitude_deg = nan"),
            "site[2].latitude_deg: expected a latitude between -90 and 90 degrees (+ north), got nan",
        ),
        (
            "",
            ("latitude_deg = 46.2\n", ""),
            "site[2].latitude_deg: missing; expected a latitude between -90 and 90 degrees (+ north)",
        ),
        (
            "",
            ("longitude_deg = 7.4", "longitude_deg = 187.4"),
            "site[2].longitude_deg: expected a longitude between -180 and 180 degrees (+ east), got 187.4",
        ),
        (
            "",
            ("longitude_deg = 7.4", "longitude_deg = -180.1"),
            "site[2].longitude_deg: expected a longitude between -180 and 180 degrees (+ east), got -180.1",
        ),
        (
            "elevation_m = 9500\n",
            None,
            "site[2].elevation_m: expected an elevation between -500 and 9000 m, got 9500",
        ),
        (
            "elevation_m = -600\n",
            None,
            "site[2].elevation_m: expected an elevation between -500 and 9000 m, got -600",
        ),
        (
            "elevation_m = inf\n",
            None,
            "site[2].elevation_m: expected an elevation between -500 and 9000 m, got inf",
        ),
        (
            'timezone = "Europe/Zurch"\n',
            None,
            "site[2].timezone: unknown IANA time zone 'Europe/Zurch'",
        ),
        ("timezone = 1\n", None, "site[2].timezone: unknown IANA time zone 1"),
        (
            "latitude = 46.2\n",
            None,
            "site[2].latitude: unknown key 'latitude' (allowed: id, name, latitude_deg, "
            "longitude_deg, elevation_m, timezone, gnomon, angle_instrument)",
        ),
        ('name = ""\n', None, "site[2].name: expected the site's name as text, got ''"),
    ],
)
def test_site_checks(tmp_path, extra, replace, expected):
    assert site_error(tmp_path, extra, replace) == expected


@pytest.mark.parametrize(
    ("gnomon", "expected"),
    [
        (
            "height_m = 0\n",
            "site[2].gnomon.height_m: expected a gnomon height of at least 0.001 m and below 100 m, got 0",
        ),
        (
            "height_m = -1.0\n",
            "site[2].gnomon.height_m: expected a gnomon height of at least 0.001 m and below 100 m, got -1.0",
        ),
        (
            "height_m = 100\n",
            "site[2].gnomon.height_m: expected a gnomon height of at least 0.001 m and below 100 m, got 100",
        ),
        (
            "edge = 'umbra'\n",
            "site[2].gnomon.height_m: missing; expected a gnomon height of at least 0.001 m and below 100 m",
        ),
        (
            "height_m = 1\nheight_sigma_m = -0.001\n",
            "site[2].gnomon.height_sigma_m: expected a non-negative number of metres, got -0.001",
        ),
        (
            "height_m = 1\nshadow_sigma_m = inf\n",
            "site[2].gnomon.shadow_sigma_m: expected a reading error of at least 1e-05 m (no shadow is read exactly), got inf",
        ),
        (
            "height_m = 1\nedge = 'tip'\n",
            "site[2].gnomon.edge: expected 'umbra', 'middle' or 'outer', got 'tip'",
        ),
        (
            "height_m = 1\nedge = 2\n",
            "site[2].gnomon.edge: expected 'umbra', 'middle' or 'outer', got 2",
        ),
        (
            "height_m = 1\nheight_cm = 100\n",
            "site[2].gnomon.height_cm: unknown key 'height_cm' (allowed: height_m, height_sigma_m, "
            "shadow_sigma_m, edge)",
        ),
    ],
)
def test_gnomon_checks(tmp_path, gnomon, expected):
    assert site_error(tmp_path, "[site.gnomon]\n" + gnomon) == expected


def test_gnomon_edge_is_case_insensitive(tmp_path):
    text = SITE + '[site.gnomon]\nheight_m = 1\nedge = "Outer"\n'
    assert read_campaign(write(tmp_path, text)).sites[0].gnomon.edge == "outer"


def test_gnomon_must_be_a_table(tmp_path):
    assert error_text(tmp_path, SITE + "gnomon = 1.0\n") == (
        "site[1].gnomon: expected a table written as [site.gnomon], got 1.0"
    )


TWO_SITES = SITE + SITE.replace('"ridge"', '"coast"')


@pytest.mark.parametrize(
    ("baseline", "expected"),
    [
        (
            'sites = ["ridge", "harbour"]\ndistance_km = 1\nsigma_km = 1\n',
            "baseline[1].sites: unknown site 'harbour' (known: ridge, coast)",
        ),
        (
            'sites = ["ridge", "ridge"]\ndistance_km = 1\nsigma_km = 1\n',
            'baseline[1].sites: expected two different site ids such as ["ridge", "coast"], got \'ridge\' twice',
        ),
        (
            'sites = ["ridge"]\ndistance_km = 1\nsigma_km = 1\n',
            'baseline[1].sites: expected two different site ids such as ["ridge", "coast"], got a list',
        ),
        (
            "distance_km = 1\nsigma_km = 1\n",
            'baseline[1].sites: missing; expected two different site ids such as ["ridge", "coast"]',
        ),
        (
            'sites = ["ridge", "coast"]\ndistance_km = 0\nsigma_km = 1\n',
            "baseline[1].distance_km: expected a positive distance in km, got 0",
        ),
        (
            'sites = ["ridge", "coast"]\nsigma_km = 1\n',
            "baseline[1].distance_km: missing; expected a positive distance in km",
        ),
        (
            'sites = ["ridge", "coast"]\ndistance_km = 598\nsigma_km = -2\n',
            "baseline[1].sigma_km: expected a non-negative uncertainty in km, got -2",
        ),
        (
            'sites = ["ridge", "coast"]\ndistance_km = 598\nsigma_km = 2\nbearing_deg = 360\n',
            "baseline[1].bearing_deg: expected a bearing from 0 up to (not including) 360 degrees, got 360",
        ),
        (
            'sites = ["ridge", "coast"]\ndistance_km = 598\nsigma_km = 2\nbearing_deg = -1\n',
            "baseline[1].bearing_deg: expected a bearing from 0 up to (not including) 360 degrees, got -1",
        ),
        (
            'sites = ["ridge", "coast"]\ndistance_km = 598\nsigma_km = 2\nlength_km = 3\n',
            "baseline[1].length_km: unknown key 'length_km' (allowed: sites, distance_km, sigma_km, bearing_deg)",
        ),
    ],
)
def test_baseline_checks(tmp_path, baseline, expected):
    assert error_text(tmp_path, TWO_SITES + "[[baseline]]\n" + baseline) == expected


def test_a_pair_has_one_baseline(tmp_path):
    one = '[[baseline]]\nsites = ["ridge", "coast"]\ndistance_km = 598\nsigma_km = 2\n'
    two = one.replace('["ridge", "coast"]', '["coast", "ridge"]')
    assert error_text(tmp_path, TWO_SITES + one + two) == (
        "baseline[2].sites: sites 'coast' and 'ridge' already have a baseline (baseline[1])"
    )


@pytest.mark.parametrize(
    ("logs", "expected"),
    [
        (
            'shadow = ["a.csv"]\n',
            "logs.shadow: unknown key 'shadow' (allowed: shadows, eclipse, phases, transits, astrometry, light_curves, date_order)",
        ),
        (
            "shadows = 3\n",
            'logs.shadows: expected a list of paths such as ["logs/shadows.csv"], got 3',
        ),
        (
            'shadows = ["a.csv", ""]\n',
            'logs.shadows: expected a list of paths such as ["logs/shadows.csv"], got a list',
        ),
    ],
)
def test_logs_checks(tmp_path, logs, expected):
    assert error_text(tmp_path, SITE + "[logs]\n" + logs) == expected


def test_missing_log_files_are_not_reported_here(tmp_path):
    campaign = read_campaign(write(tmp_path, SITE + '[logs]\nshadows = ["nowhere.csv"]\n'))
    assert campaign.logs["shadows"] == (tmp_path / "nowhere.csv",)


@pytest.mark.parametrize(
    ("eclipse", "expected"),
    [
        (
            "moon_diameter_arcmin = 0\n",
            "eclipse.moon_diameter_arcmin: expected a positive number in arcmin, got 0",
        ),
        (
            "moon_rate_deg_per_h = 0.5\nmoon_rate_sigma_deg_per_h = -0.1\n",
            "eclipse.moon_rate_sigma_deg_per_h: expected a non-negative number in deg/h, got -0.1",
        ),
        (
            "moon_diameter_sigma_arcmin = 0.3\n",
            "eclipse.moon_diameter_sigma_arcmin: given without eclipse.moon_diameter_arcmin",
        ),
        (
            "moon_rate_deg_per_h = 0.5\nmoon_sky_rate_deg_per_h = 0.55\n",
            "eclipse.moon_sky_rate_deg_per_h: give moon_rate_deg_per_h (relative to the Earth's "
            "shadow) or moon_sky_rate_deg_per_h (against the stars), not both",
        ),
        (
            "moon_rate = 0.5\n",
            "eclipse.moon_rate: unknown key 'moon_rate' (allowed: moon_diameter_arcmin, "
            "moon_diameter_sigma_arcmin, moon_rate_deg_per_h, moon_rate_sigma_deg_per_h, "
            "moon_sky_rate_deg_per_h, moon_sky_rate_sigma_deg_per_h, moon_site, moon_from_utc, moon_to_utc, "
            "moon_diameter_utc)",
        ),
    ],
)
def test_eclipse_checks(tmp_path, eclipse, expected):
    assert error_text(tmp_path, SITE + "[eclipse]\n" + eclipse) == expected


def test_site_lookup_refuses_unknown_ids(tmp_path):
    campaign = read_campaign(write(tmp_path, TWO_SITES))
    with pytest.raises(InputError) as info:
        campaign.site("harbour")
    assert str(info.value) == "unknown site 'harbour' (known: ridge, coast)"
