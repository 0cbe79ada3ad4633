"""Tests of firstrung.times: UTC and local time parsing, zones, the ephemeris span."""

import numpy as np
import pytest

from firstrung.errors import FirstrungError, InputError
from firstrung.times import (
    TimeFormatError,
    check_zone,
    in_ephemeris_span,
    parse_local,
    parse_utc,
    to_iso_z,
)

UTC_MESSAGE = "expected an ISO 8601 UTC time such as 2027-03-20T11:38:00Z, got "


@pytest.mark.parametrize(
    "text",
    [
        "2027-03-20T11:38:00Z",
        "2027-03-20T11:38:00+00:00",
        "2027-03-20T11:38:00-00:00",
        "2027-03-20T11:38:00",
        "2027-03-20 11:38:00",
        "2027-03-20T11:38",
        "2027-03-20T11:38Z",
        " 2027-03-20T11:38:00.000Z ",
    ],
)
def test_parse_utc_accepts_the_usual_spellings(text):
    assert parse_utc(text) == np.datetime64("2027-03-20T11:38:00", "ms")


def test_parse_utc_returns_milliseconds_rounded():
    t = parse_utc("2027-03-20T11:38:00.1236Z")
    assert t.dtype == np.dtype("datetime64[ms]")
    assert t == np.datetime64("2027-03-20T11:38:00.124")
    assert parse_utc("2027-03-20T11:38:59.9996") == np.datetime64("2027-03-20T11:39:00.000")


def test_parse_utc_refuses_a_non_zero_offset():
    with pytest.raises(TimeFormatError) as info:
        parse_utc("2027-03-20T12:38:00+01:00")
    assert str(info.value) == (
        UTC_MESSAGE + "'2027-03-20T12:38:00+01:00' (offset +01:00 is not UTC; "
        "convert it to UTC or give time_local)"
    )


@pytest.mark.parametrize("text", ["abc", "", "2027-03-20", "20270320T113800Z", "2027-03-20T25:00"])
def test_parse_utc_refuses_non_times(text):
    with pytest.raises(TimeFormatError) as info:
        parse_utc(text)
    assert str(info.value).startswith(UTC_MESSAGE + repr(text))


def test_parse_utc_refuses_impossible_dates():
    with pytest.raises(TimeFormatError) as info:
        parse_utc("2027-02-30T10:00:00Z")
    assert str(info.value) == UTC_MESSAGE + "'2027-02-30T10:00:00Z' (no such date or time)"


def test_time_format_error_is_an_input_error():
    assert issubclass(TimeFormatError, InputError)
    assert issubclass(TimeFormatError, ValueError)
    assert issubclass(TimeFormatError, FirstrungError)


def test_parse_local_converts_to_utc():
    # Europe/Zurich is on CET (UTC+1) on 2027-03-20 and on CEST (UTC+2) in July.
    assert parse_local("2027-03-20T12:38:00", "Europe/Zurich") == np.datetime64(
        "2027-03-20T11:38:00", "ms"
    )
    assert parse_local("2027-07-01 13:00", "Europe/Zurich") == np.datetime64(
        "2027-07-01T11:00:00", "ms"
    )
    assert parse_local("2027-03-20T12:38:00.250", "America/New_York") == np.datetime64(
        "2027-03-20T16:38:00.250", "ms"
    )


def test_parse_local_refuses_a_time_in_the_spring_gap():
    with pytest.raises(TimeFormatError) as info:
        parse_local("2027-03-28T02:30", "Europe/Zurich")
    assert str(info.value) == (
        "local time 2027-03-28T02:30:00 does not exist in Europe/Zurich: the clocks jump "
        "forward over it (daylight saving starts); check the clock, or give time_utc"
    )


def test_parse_local_refuses_a_time_in_the_autumn_overlap():
    with pytest.raises(TimeFormatError) as info:
        parse_local("2027-10-31T02:30", "Europe/Zurich")
    assert str(info.value) == (
        "local time 2027-10-31T02:30:00 is ambiguous in Europe/Zurich: the clocks go back "
        "and it happens twice (daylight saving ends), at 2027-10-31T00:30:00Z and "
        "2027-10-31T01:30:00Z; give time_utc"
    )


def test_parse_local_accepts_times_just_outside_the_gap_and_overlap():
    assert parse_local("2027-03-28T03:00", "Europe/Zurich") == np.datetime64("2027-03-28T01:00")
    assert parse_local("2027-10-31T03:00", "Europe/Zurich") == np.datetime64("2027-10-31T02:00")


@pytest.mark.parametrize("text", ["2027-03-20T12:38:00Z", "2027-03-20T12:38:00+01:00"])
def test_parse_local_refuses_an_offset(text):
    with pytest.raises(TimeFormatError) as info:
        parse_local(text, "Europe/Zurich")
    assert str(info.value) == (
        "expected an ISO 8601 local time without offset such as 2027-03-20T12:38:00, got "
        f"{text!r} (time_local must have no offset; give times with an offset as time_utc in UTC)"
    )


def test_parse_local_refuses_an_unknown_zone():
    with pytest.raises(InputError) as info:
        parse_local("2027-03-20T12:38:00", "Europe/Zurch")
    assert str(info.value) == "unknown IANA time zone 'Europe/Zurch'"


def test_check_zone():
    assert check_zone("Europe/Zurich").key == "Europe/Zurich"
    assert check_zone("UTC").key == "UTC"


@pytest.mark.parametrize("name", ["Mars/Olympus", "", "Europe", "../etc/passwd", "not a zone"])
def test_check_zone_refuses_unknown_names(name):
    with pytest.raises(InputError) as info:
        check_zone(name)
    assert str(info.value) == f"unknown IANA time zone {name!r}"


def test_in_ephemeris_span_scalar_and_array():
    assert bool(in_ephemeris_span(np.datetime64("2027-03-20T11:38")))
    t = np.array(
        ["1899-07-28T23:59", "1899-07-29T00:00", "2053-10-08T00:00", "2053-10-08T00:01", "NaT"],
        dtype="datetime64[ms]",
    )
    assert in_ephemeris_span(t).tolist() == [False, True, True, False, False]


def test_to_iso_z():
    t = np.datetime64("2027-03-20T11:37:59.600", "ms")
    assert to_iso_z(t) == "2027-03-20T11:38:00Z"
    assert to_iso_z(t, milliseconds=True) == "2027-03-20T11:37:59.600Z"
    assert to_iso_z(np.datetime64("2027-03-20T11:37:59.499")) == "2027-03-20T11:37:59Z"
    assert to_iso_z(np.datetime64("1950-01-01T00:00:00.500")) == "1950-01-01T00:00:01Z"
    assert to_iso_z(np.datetime64("2027-03-20", "D")) == "2027-03-20T00:00:00Z"


def test_to_iso_z_round_trips_parse_utc():
    text = "2029-06-26T01:32:40Z"
    assert to_iso_z(parse_utc(text)) == text


def test_to_iso_z_refuses_nat():
    with pytest.raises(InputError):
        to_iso_z(np.datetime64("NaT"))


def test_parse_utc_accepts_a_decimal_comma_in_the_seconds():
    # ISO 8601:2004 section 4.2.2.4 allows a comma (its preferred sign) before the fraction.
    assert parse_utc("2027-03-20T11:38:00,25Z") == np.datetime64("2027-03-20T11:38:00.250")
    assert parse_local("2027-03-20T12:38:00,5", "Europe/Zurich") == np.datetime64(
        "2027-03-20T11:38:00.500"
    )


def test_long_text_is_cut_in_messages():
    with pytest.raises(TimeFormatError) as info:
        parse_utc("2" * 500)
    assert str(info.value) == UTC_MESSAGE + "'22222222222222222222...' (500 characters)"
