"""Property-based tests of the campaign and log readers (hypothesis).

For any byte string, and for any mutation of a valid file, a reader either
returns its result or raises firstrung's own ``InputError`` -- never another
exception -- and every message it gives is one line that names the file.

All sites and readings are invented.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from firstrung.campaign import parse_campaign, read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import InputError
from firstrung.methods.eclipse.log import EclipseLog, read_eclipse_logs
from firstrung.methods.phases.log import PhaseLog, read_phase_logs
from firstrung.methods.shadows.log import ShadowLog, read_shadow_logs

#: Examples per property: enough to reach the odd corners (quotes, separators,
#: encodings) in a few seconds; the corpus in tests/data/bad holds the cases
#: found so far.
EXAMPLES = 150

PROPERTY_SETTINGS = settings(
    max_examples=EXAMPLES,
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)

CAMPAIGN = """\
[campaign]
name = "Invented property campaign"

[[site]]
id = "ridge"
name = "Ridge dome"
latitude_deg = 46.2
longitude_deg = 7.4
elevation_m = 620
timezone = "Europe/Zurich"

[site.gnomon]
height_m = 1.0
height_sigma_m = 0.001
shadow_sigma_m = 0.002
edge = "umbra"

[[site]]
id = "coast"
latitude_deg = 40.8
longitude_deg = 8.5

[[baseline]]
sites = ["ridge", "coast"]
distance_km = 598.0
sigma_km = 2.0
bearing_deg = 178.0

[logs]
shadows = ["shadows.csv"]

[eclipse]
moon_diameter_arcmin = 31.2
"""

LOGS = {
    "shadows": (
        read_shadow_logs,
        ShadowLog,
        "site,time_local,shadow_cm,gnomon_m,edge,temperature_c,pressure_hpa,observer,note\n"
        "ridge,2027-03-20T12:38:00,103.8,1.0,umbra,5.5,950,T. Okafor,re-levelled\n"
        "ridge,2027-03-20T12:40:00,110.2,,middle,,,,\n"
        "# a comment\n"
        "ridge,2027-03-20T12:42:00,103.9,,,,,,\n",
    ),
    "eclipse": (
        read_eclipse_logs,
        EclipseLog,
        "site,time_utc,event,feature,time_sigma_s,observer\n"
        "coast,2029-06-26T01:32:40Z,U1,,5,M. Brandt\n"
        "coast,2029-06-26T01:41:05Z,immersion,Kepler,,M. Brandt\n",
    ),
    "phases": (
        read_phase_logs,
        PhaseLog,
        "site,time_utc,quarter,elongation_deg,illuminated_fraction,time_sigma_s,observer\n"
        "ridge,2027-01-15T18:40:00Z,first,89.6,,60,school team 2\n"
        "coast,2027-01-15T17:55:00Z,first,,0.47,,photo series A\n",
    ),
}

#: Bytes that matter to the readers, for mutations that insert them.
SPECIAL_BYTES = [
    b",",
    b";",
    b"\t",
    b'"',
    b"\n",
    b"\r",
    b"\r\n",
    b"#",
    b" ",
    b"\x00",
    b"\xef\xbb\xbf",
    b"\xff\xfe",
    b"\xe9",
    b"\xc3",
    b"=",
    b"[",
    b"]",
    b"[[",
    b"{",
    b"}",
    b"'",
    b".",
    b"e",
    b"-",
    b"+",
    b"inf",
    b"nan",
    b"9" * 30,
    b"\\",
    b"\xe2\x80\xa8",
]


@st.composite
def mutated(draw, valid: bytes) -> bytes:
    """A valid file with a few bytes deleted, replaced, inserted, duplicated or cut."""
    data = bytearray(valid)
    for _ in range(draw(st.integers(1, 4))):
        position = draw(st.integers(0, len(data)))
        kind = draw(st.sampled_from(["delete", "replace", "insert", "special", "repeat", "cut"]))
        if kind == "delete" and data:
            end = min(len(data), position + draw(st.integers(1, 8)))
            del data[position:end]
        elif kind == "replace" and position < len(data):
            data[position] = draw(st.integers(0, 255))
        elif kind == "insert":
            data[position:position] = draw(st.binary(min_size=1, max_size=6))
        elif kind == "special":
            data[position:position] = draw(st.sampled_from(SPECIAL_BYTES))
        elif kind == "repeat":
            end = min(len(data), position + draw(st.integers(1, 40)))
            data[position:position] = data[position:end]
        elif kind == "cut":
            del data[position:]
    return bytes(data)


def check_log(log, cls, label: str) -> None:
    """What every log result must satisfy, whatever the bytes were."""
    assert isinstance(log, cls)
    n = len(log)
    assert log.rows_read >= n
    assert len(log.file) == len(log.site) == len(log.time_utc) == n
    assert log.time_utc.dtype == np.dtype("datetime64[ms]")
    assert not np.isnat(log.time_utc).any()
    assert set(log.site.tolist()) <= {"ridge", "coast"}
    for problem in log.problems:
        text = str(problem)
        assert "\n" not in text and "\r" not in text
        assert text.startswith(label + ":")
    for note in log.notes:
        assert "\n" not in note and note.startswith(label + ": read as ")
    if cls is ShadowLog:
        assert np.all(log.shadow_m > 0) and np.all(np.isfinite(log.shadow_m))


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    path = tmp_path_factory.mktemp("properties")
    (path / "campaign.toml").write_text(CAMPAIGN, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def campaign(folder):
    return read_campaign(folder / "campaign.toml")


def read_bytes_as_log(folder, campaign, kind: str, data: bytes):
    reader, cls, _ = LOGS[kind]
    path = folder / f"{kind}.csv"
    path.write_bytes(data)
    log = reader(campaign, [path])
    check_log(log, cls, f"{kind}.csv")
    assert path.read_bytes() == data  # the reader never changes its input
    return log


def test_the_valid_logs_read_cleanly(folder, campaign):
    # The seeds of the mutations are themselves good files: every row kept.
    for kind, (_, _, text) in LOGS.items():
        log = read_bytes_as_log(folder, campaign, kind, text.encode("utf-8"))
        assert log.problems == () and log.notes == ()
        assert len(log) == log.rows_read == text.count("\n") - 1 - text.count("\n#")


@pytest.mark.parametrize("kind", sorted(LOGS))
@PROPERTY_SETTINGS
@given(data=st.binary(max_size=400))
def test_any_bytes_give_a_log(folder, campaign, kind, data):
    read_bytes_as_log(folder, campaign, kind, data)


@pytest.mark.parametrize("kind", sorted(LOGS))
@PROPERTY_SETTINGS
@given(data=st.data())
def test_any_mutation_of_a_valid_log_gives_a_log(folder, campaign, kind, data):
    valid = LOGS[kind][2].encode("utf-8")
    read_bytes_as_log(folder, campaign, kind, data.draw(mutated(valid)))


@pytest.mark.parametrize("kind", sorted(LOGS))
@PROPERTY_SETTINGS
@given(
    text=st.text(
        alphabet=st.sampled_from(list('site,time_utc;local\t"#\n\r 0123456789.:-TZe+U1fr'))
    )
)
def test_any_text_of_log_characters_gives_a_log(folder, campaign, kind, text):
    header = LOGS[kind][2].splitlines()[0]
    read_bytes_as_log(folder, campaign, kind, (header + "\n" + text).encode("utf-8"))


@pytest.mark.parametrize("encoding", ["utf-16", "utf-16-le", "utf-8-sig", "cp1252"])
@PROPERTY_SETTINGS
@given(data=st.data())
def test_mutations_of_other_encodings_give_a_log(folder, campaign, encoding, data):
    valid = LOGS["shadows"][2].replace(";", ",").encode(encoding)
    read_bytes_as_log(folder, campaign, "shadows", data.draw(mutated(valid)))


def read_bytes_as_campaign(folder, data: bytes) -> Campaign | None:
    path = folder / "mutated.toml"
    path.write_bytes(data)
    try:
        campaign = read_campaign(path)
    except InputError as error:
        text = str(error)
        assert "\n" not in text and "\r" not in text
        assert text.startswith(f"{path}:")
        return None
    assert path.read_bytes() == data
    assert isinstance(campaign, Campaign)
    assert len(campaign.sites) >= 1
    for site in campaign.sites:
        assert -90.0 <= site.latitude_deg <= 90.0 and -180.0 <= site.longitude_deg <= 180.0
        assert math.isfinite(site.elevation_m)
    return campaign


def test_the_valid_campaign_reads(folder):
    campaign = read_bytes_as_campaign(folder, CAMPAIGN.encode("utf-8"))
    assert campaign is not None and campaign.site_ids == ("ridge", "coast")


@PROPERTY_SETTINGS
@given(data=st.binary(max_size=400))
def test_any_bytes_give_a_campaign_or_an_input_error(folder, data):
    read_bytes_as_campaign(folder, data)


@settings(PROPERTY_SETTINGS, max_examples=3 * EXAMPLES)
@given(data=st.data())
def test_any_mutation_of_a_valid_campaign_gives_a_campaign_or_an_input_error(folder, data):
    read_bytes_as_campaign(folder, data.draw(mutated(CAMPAIGN.encode("utf-8"))))


KEY_VALUES = st.one_of(
    st.integers(min_value=-(10**400), max_value=10**400),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
    st.text(max_size=12),
    st.lists(st.text(max_size=6), max_size=3),
    st.just({}),
)


def toml_value(value) -> str:
    """A Python value written as TOML (inline)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value) if abs(value) < 10**4000 else "1"
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return '"' + "".join(c if c.isalnum() or c in " /_-." else "" for c in value) + '"'
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    return "{}"


CAMPAIGN_KEYS = [
    ("site", "id"),
    ("site", "latitude_deg"),
    ("site", "longitude_deg"),
    ("site", "elevation_m"),
    ("site", "timezone"),
    ("site", "name"),
    ("site.gnomon", "height_m"),
    ("site.gnomon", "edge"),
    ("site.gnomon", "shadow_sigma_m"),
    ("baseline", "sites"),
    ("baseline", "distance_km"),
    ("baseline", "sigma_km"),
    ("baseline", "bearing_deg"),
    ("logs", "shadows"),
    ("eclipse", "moon_diameter_arcmin"),
    ("campaign", "name"),
]


@PROPERTY_SETTINGS
@given(key=st.sampled_from(CAMPAIGN_KEYS), value=KEY_VALUES)
def test_any_value_of_a_known_key_gives_a_campaign_or_an_input_error(key, value):
    table, name = key
    header = {"site": "[[site]]", "site.gnomon": "[site.gnomon]", "baseline": "[[baseline]]"}.get(
        table, f"[{table}]"
    )
    lines = CAMPAIGN.splitlines()
    start = lines.index(header)
    for k in range(start + 1, len(lines)):
        if lines[k].startswith(f"{name} =") or not lines[k].strip() or lines[k].startswith("["):
            break
    replacement = f"{name} = {toml_value(value)}"
    if lines[k].startswith(f"{name} ="):
        lines[k] = replacement
    else:
        lines.insert(k, replacement)
    try:
        campaign = parse_campaign("\n".join(lines) + "\n", path="campaign.toml")
    except InputError as error:
        assert "\n" not in str(error) and str(error).startswith("campaign.toml:")
        return
    assert isinstance(campaign, Campaign)
