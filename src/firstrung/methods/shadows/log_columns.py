"""Plain shadow rows read a column at a time: the fast path of the shadow log's reader.

A row is plain when its site is known, its time an ISO UTC time and its numbers plain decimals
within their limits; such rows are read here, a column at a time, and every other row takes the
full row checks of :mod:`firstrung.methods.shadows.log` (same values; a test compares the two
paths on the whole bad-input corpus). A chunk read from a plain file's bytes
(:class:`firstrung.csv_bytes.ByteChunk`) is read without a Python string per cell: times from
their bytes, and every other column through its distinct texts, each checked once.
"""

from __future__ import annotations

import numpy as np

from firstrung.campaign_model import EDGES, Campaign
from firstrung.constants import EPHEMERIS_FIRST_UTC, EPHEMERIS_LAST_UTC
from firstrung.distinct import distinct_texts, runs
from firstrung.memory import repeated_object
from firstrung.methods.shadows.log_forms import (
    LENGTH_FORM,
    fast_form_columns,
    mean_noons_utc,
    uses_forms,
)
from firstrung.patterns import pattern
from firstrung.tabular import Table

#: Largest accepted shadow length [m]; longer readings are typing errors.
SHADOW_LIMIT_M = 1000.0


#: Gnomon heights in a log must be below this [m].
GNOMON_LIMIT_M = 100.0


#: Accepted air temperatures for refraction [deg C].
TEMPERATURE_RANGE_C = (-80.0, 60.0)


#: Accepted air pressures for refraction [hPa].
PRESSURE_RANGE_HPA = (300.0, 1100.0)


_UNIT_FACTORS_M = {"m": 1.0, "cm": 0.01, "mm": 0.001}


def _unit_of(column: str) -> str:
    return column.rsplit("_", 1)[1]


_PLAIN_UTC_RE = pattern(r"^(\d{4}-\d{2}-\d{2})[T ](\d{2}:\d{2}(?::\d{2}(?:\.\d{1,3})?)?)(?:Z|\+00:00)?$")


_PLAIN_NUMBER_RE = pattern(r"^\d+(?:\.\d+)?$")


_SPAN_MS = (np.datetime64(EPHEMERIS_FIRST_UTC, "ms"), np.datetime64(EPHEMERIS_LAST_UTC, "ms"))


def _plain(cell: str, low: float, high: float, factor: float = 1.0) -> float | None:
    """A plain positive decimal within [low, high] after ``factor``, else None (the slow path decides)."""
    if not _PLAIN_NUMBER_RE().match(cell):
        return None
    value = float(cell) * factor
    return value if low <= value <= high else None


#: Longest cell the column checks look at as a plain number (longer ones go the long way).
_PLAIN_WIDTH = 32


def _codes(cells, width: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The cells no longer than ``width`` as a (cells, width) array of code points, their indices and lengths."""
    lengths = np.fromiter(map(len, cells), np.int64, len(cells))
    index = np.flatnonzero((lengths > 0) & (lengths <= width))
    width = int(lengths[index].max()) if index.size else 1  # as wide as the longest taken, no wider
    text = np.array(cells, dtype=object)[index].astype(f"<U{width}")
    return text.view(np.uint32).reshape(index.size, width), index, lengths[index]


def _plain_cells(cells: list[str], low: float, high: float, factor: float) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_plain` on a column, vectorised: the values (NaN where not plain) and where they are plain.

    Plain: digits, at most one point with digits on both sides (``^\\d+(?:\\.\\d+)?$``).
    """
    n = len(cells)
    values = np.full(n, np.nan)
    plain = np.zeros(n, bool)
    codes, index, lengths = _codes(cells, _PLAIN_WIDTH)
    if index.size:
        digit = codes - 48 < 10
        dot = codes == 46
        inside = np.arange(codes.shape[1])[None, :] < lengths[:, None]
        last = codes[np.arange(index.size), lengths - 1]
        good = (np.all(digit | dot | ~inside, axis=1) & (dot.sum(axis=1) <= 1)
                & (codes[:, 0] - 48 < 10) & (last - 48 < 10))
        pick = index[good]
        value = np.array(cells, dtype=object)[pick].astype(float) * factor
        ok = (value >= low) & (value <= high)
        values[pick[ok]] = value[ok]
        plain[pick[ok]] = True
    return values, plain


def _utc_times(cells: list[str]) -> np.ndarray:
    """Plain UTC times (as :data:`_PLAIN_UTC_RE` takes them) to datetime64[ms]; NaT for anything else.

    The usual ``YYYY-MM-DDTHH:MM:SSZ`` is read a column at a time by :func:`_usual_utc_bytes` (the byte
    reader's parser); other forms one by one.
    """
    n = len(cells)
    lengths = np.fromiter(map(len, cells), np.int64, n)
    index = np.flatnonzero(lengths == 20)
    t = np.full(n, np.datetime64("NaT"), dtype="datetime64[ms]")
    if index.size:
        picked = np.array(cells, dtype=object)[index].astype("<U20")
        ascii_ = (picked.view(np.uint32).reshape(index.size, 20) < 128).all(axis=1)
        index = index[ascii_]
        t[index], usual = _usual_utc_bytes(picked[ascii_].astype("S20"))
        done = index[usual]
    else:
        done = np.zeros(0, np.int64)
    rest = np.ones(n, bool)
    rest[done] = False
    plain_utc = _PLAIN_UTC_RE().match
    for k in np.flatnonzero(rest).tolist():
        m = plain_utc(cells[k])
        if m is not None:
            t[k] = _datetime_or_nat(f"{m.group(1)}T{m.group(2)}")
    return t


def _site_ids(campaign: Campaign, cells) -> tuple[np.ndarray, np.ndarray]:
    """Each site cell's site id (a cell may give the id or the name, as the row checks take it) and
    whether it names a site at all."""
    by_id = campaign._site_by_id
    ids = [c if c in by_id else (site.id if (site := campaign.site_matching(c)) is not None else "") for c in cells]
    sites = np.array(ids, dtype=object)
    return sites, sites != ""


def _fast_shadow_columns(table: Table, campaign: Campaign) -> tuple[dict | None, np.ndarray]:
    """Plain shadow rows (known site, ISO UTC time, plain numbers) of a columnar table, all at once.

    Returns their values and a mask of the rows read; the others go through
    the full row checks (:func:`_parse_shadow_row`) for their exact messages."""
    chosen = table.chosen
    if (getattr(table, "byte_columns", None) and chosen["time_utc"] == "time_utc" and chosen["shadow_m"] is not None
            and not uses_forms(chosen)):
        return fast_shadow_bytes(table, campaign)
    columns = table.columns
    n = len(table.numbers)
    handled = np.zeros(n, bool)
    if chosen["time_utc"] is None and chosen.get("date") is not None and chosen.get("altitude_deg") is None:
        # traces without times: each row at its date's mean noon, as the row checks place it
        sites, ok = _site_ids(campaign, columns[chosen["site"]])
        t, plain = mean_noons_utc(campaign, columns[chosen["date"]], sites)
        ok &= plain & (t >= _SPAN_MS[0]) & (t <= _SPAN_MS[1])
        return fast_form_columns(chosen, columns, ok, sites, t, SHADOW_LIMIT_M, untimed=True)
    if chosen["time_utc"] != "time_utc":
        return None, handled
    if chosen["shadow_m"] is None or uses_forms(chosen):  # angles and traces: their own plain rows
        sites, ok = _site_ids(campaign, columns[chosen["site"]])
        t = _utc_times(columns["time_utc"])
        ok &= ~np.isnat(t) & (t >= _SPAN_MS[0]) & (t <= _SPAN_MS[1])
        return fast_form_columns(chosen, columns, ok, sites, t, SHADOW_LIMIT_M)
    sites, ok = _site_ids(campaign, columns[chosen["site"]])
    t = _utc_times(columns["time_utc"])
    ok &= ~np.isnat(t) & (t >= _SPAN_MS[0]) & (t <= _SPAN_MS[1])
    shadow_column = chosen["shadow_m"]
    shadow_m, plain = _plain_cells(columns[shadow_column], 1e-300, SHADOW_LIMIT_M,
                                   _UNIT_FACTORS_M[_unit_of(shadow_column)])
    ok &= plain & (shadow_m > 0.0)
    gnomon_m = np.full(n, np.nan)
    gnomon_column = chosen.get("gnomon_m")
    if gnomon_column is not None:
        cells = columns[gnomon_column]
        given = np.fromiter((c != "" for c in cells), bool, n)
        value, plain = _plain_cells(cells, 1e-300, GNOMON_LIMIT_M * (1 - 1e-12), _UNIT_FACTORS_M[_unit_of(gnomon_column)])
        ok &= ~given | (plain & (value > 0.0))
        gnomon_m = np.where(given, value, np.nan)
    edge = np.full(n, None, dtype=object)
    edge_column = chosen.get("edge")
    if edge_column is not None:
        for k, cell in enumerate(columns[edge_column]):
            if cell:
                edge[k] = cell.lower()
                ok[k] &= edge[k] in EDGES
    weather = {}
    for slot, (low, high) in (("temperature_c", TEMPERATURE_RANGE_C), ("pressure_hpa", PRESSURE_RANGE_HPA)):
        values = np.full(n, np.nan)
        column = chosen.get(slot)
        if column is not None:
            for k, cell in enumerate(columns[column]):
                if cell == "":
                    continue
                value = _plain(cell.lstrip("-") if slot == "temperature_c" else cell, 0.0, max(abs(low), high))
                if value is None:
                    ok[k] = False
                    continue
                value = -value if cell.startswith("-") else value
                ok[k] &= low <= value <= high
                values[k] = value
        weather[slot] = values
    observer_column, note_column = chosen.get("observer"), chosen.get("note")
    blank = np.full(n, "", dtype=object)
    # names and notes repeat from row to row: one string object for each distinct text
    observer = _texts_shared(columns[observer_column]) if observer_column is not None else blank
    note = _texts_shared(columns[note_column]) if note_column is not None else blank
    return _length_rows(ok, sites, t, shadow_m, shadow_column, gnomon_m, edge, weather, observer, note), ok


def _texts_shared(cells: list[str]) -> np.ndarray:
    """A text column as an object array with one string object per distinct text (names and notes repeat)."""
    names, inverse = distinct_texts(np.array(cells, dtype=object))
    return names[inverse]


def _narrow(dtype, value):
    """A text column's dtype no wider than its one value (an empty angle column: 4 bytes a row, not 76)."""
    return f"<U{max(1, len(value))}" if isinstance(value, str) and np.dtype(dtype).kind == "U" else dtype


def _datetime_or_nat(text: str) -> np.datetime64:
    try:
        return np.datetime64(text, "ms")
    except ValueError:
        return np.datetime64("NaT", "ms")


_FORM_DTYPES = {"form": "<U6", "timed": bool, "altitude_deg": float, "angle_column": "<U19", "limb": object,
                "angle_sigma_deg": float, "tip_x_m": float, "tip_y_m": float}


# --- a chunk read from a plain file's bytes -------------------------------------------------------

#: Days in each month of a common year.
_MONTH_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def _usual_utc_bytes(cells: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``YYYY-MM-DDTHH:MM:SSZ`` cells (fixed-width bytes) as datetime64[ms], and which were of that form.

    The civil date and time are checked (month, day of the month, leap years, hours to 23, minutes and
    seconds to 59) and converted with integer arithmetic; other cells give NaT and False. A log's rows
    come day by day: a date is read once for each run of rows that share it.
    """
    n = cells.size
    t = np.full(n, np.datetime64("NaT"), dtype="datetime64[ms]")
    if n == 0 or cells.dtype.itemsize != 20:
        return t, np.zeros(n, bool)
    codes = cells.view(np.uint8).reshape(n, 20)
    found = runs((codes[1:, :10] != codes[:-1, :10]).any(axis=1))
    if found is not None:
        heads, lengths = found
        usual, days = (np.repeat(x, lengths) for x in _civil_days(codes[heads]))
    else:
        usual, days = _civil_days(codes)
    d = codes[:, 11:19] - np.uint8(48)  # a digit is 0-9, anything else wraps above
    usual &= ((d[:, [0, 1, 3, 4, 6, 7]] < 10).all(axis=1) & (codes[:, 10] == 84) & (codes[:, 13] == 58)
              & (codes[:, 16] == 58) & (codes[:, 19] == 90))
    hour, minute, second = (_number(d, p, p + 1) for p in (0, 3, 6))
    usual &= (hour <= 23) & (minute <= 59) & (second <= 59)
    ms = ((days * 24 + hour) * 60 + minute) * 60_000 + second * 1000
    t[usual] = ms[usual].astype("datetime64[ms]")
    return t, usual


def _number(digits: np.ndarray, *places: int) -> np.ndarray:
    """The decimal number written by the digits (0-9 each, uint8) in columns ``places`` of each row."""
    value = np.zeros(digits.shape[0], np.int64)
    for p in places:
        value *= 10
        value += digits[:, p]
    return value


def _civil_days(codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Whether each row's first ten bytes are a valid ``YYYY-MM-DD``, and its days since 1970-01-01 (the
    proleptic Gregorian calendar, as numpy's)."""
    d = codes[:, :10] - np.uint8(48)
    valid = (d[:, [0, 1, 2, 3, 5, 6, 8, 9]] < 10).all(axis=1) & (codes[:, 4] == 45) & (codes[:, 7] == 45)
    year, month, day = _number(d, 0, 1, 2, 3), _number(d, 5, 6), _number(d, 8, 9)
    leap = (year % 4 == 0) & ((year % 100 != 0) | (year % 400 == 0))
    month_days = _MONTH_DAYS[np.clip(month - 1, 0, 11)] + ((month == 2) & leap)
    valid &= (month >= 1) & (month <= 12) & (day >= 1) & (day <= month_days)
    y = year - (month <= 2)
    era = np.floor_divide(y, 400)
    yoe = y - era * 400
    doy = (153 * (month + np.where(month > 2, -3, 9)) + 2) // 5 + day - 1
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy
    return valid, era * 146097 + doe - 719468


def _weather(cell: str, slot: str, low: float, high: float) -> tuple[bool, float]:
    """A temperature or pressure cell as the column checks take it: whether plain and in range, and its value."""
    if cell == "":
        return True, np.nan
    value = _plain(cell.lstrip("-") if slot == "temperature_c" else cell, 0.0, max(abs(low), high))
    if value is None:
        return False, np.nan
    value = -value if cell.startswith("-") else value
    return low <= value <= high, value


def fast_shadow_bytes(table, campaign: Campaign) -> tuple[dict | None, np.ndarray]:
    """:func:`_fast_shadow_columns` for plain lengths with ISO UTC times, on a chunk read from bytes.

    Each text column is checked through its distinct texts (a log repeats its sites, lengths,
    observers and notes), times from their bytes; a row the chunk parsed alone (``irregular``)
    or with any cell not plain is left to the full row checks.
    """
    chosen, columns = table.chosen, table.byte_columns
    n = len(table.numbers)
    ok = ~table.irregular
    by_id = campaign._site_by_id

    def site_ids(texts):
        return np.array([c if c in by_id else (site.id if (site := campaign.site_matching(c)) is not None else "")
                         for c in texts], dtype=object)

    texts, inverse = table.distinct(chosen["site"])
    ids = site_ids(texts)
    ok &= (ids != "")[inverse]
    sites = _site_texts(ids, inverse, ok)
    t, usual = _usual_utc_bytes(columns["time_utc"])
    other = np.flatnonzero(ok & ~usual)
    if other.size:  # other plain spellings of a UTC time, one by one as the text reader takes them
        t[other] = _utc_times([columns["time_utc"][k].decode("utf-8").strip() for k in other.tolist()])
    ok &= ~np.isnat(t) & (t >= _SPAN_MS[0]) & (t <= _SPAN_MS[1])
    shadow_column = chosen["shadow_m"]
    factor = _UNIT_FACTORS_M[_unit_of(shadow_column)]
    whole, plain = _digit_cells(columns[shadow_column])  # lengths in whole units: no text, no sort
    shadow_m = whole * factor
    plain &= (shadow_m >= 1e-300) & (shadow_m <= SHADOW_LIMIT_M)
    shadow_m[~plain] = np.nan
    rest = np.flatnonzero(~plain)
    if rest.size:  # the others as _plain_cells takes them, each distinct text once
        texts, inverse = table.distinct(shadow_column, rest)
        shadow_m[rest], plain[rest] = (values[inverse] for values in _plain_cells(texts, 1e-300, SHADOW_LIMIT_M,
                                                                                   factor))
    ok &= plain & (shadow_m > 0.0)
    gnomon_m = np.full(n, np.nan)
    gnomon_column = chosen.get("gnomon_m")
    if gnomon_column is not None:
        texts, inverse = table.distinct(gnomon_column)
        value, plain = _plain_cells(texts, 1e-300, GNOMON_LIMIT_M * (1 - 1e-12), _UNIT_FACTORS_M[_unit_of(gnomon_column)])
        given = np.array([c != "" for c in texts], bool)[inverse]
        ok &= ~given | (plain & (value > 0.0))[inverse]
        gnomon_m = np.where(given, value[inverse], np.nan)
    edge = np.full(n, None, dtype=object)
    edge_column = chosen.get("edge")
    if edge_column is not None:
        texts, inverse = table.distinct(edge_column)
        words = np.array([c.lower() if c else None for c in texts], dtype=object)
        ok &= np.array([not c or c.lower() in EDGES for c in texts], bool)[inverse]
        edge = words[inverse]
    weather = {}
    for slot, (low, high) in (("temperature_c", TEMPERATURE_RANGE_C), ("pressure_hpa", PRESSURE_RANGE_HPA)):
        values = np.full(n, np.nan)
        column = chosen.get(slot)
        if column is not None:
            texts, inverse = table.distinct(column)
            read = [_weather(c, slot, low, high) for c in texts]
            ok &= np.array([good for good, _ in read], bool)[inverse]
            values = np.array([value for _, value in read], float)[inverse]
        weather[slot] = values
    blank = np.full(n, "", dtype=object)
    observer, note = (blank if chosen.get(slot) is None else _distinct_column(table, chosen[slot])
                      for slot in ("observer", "note"))
    return _length_rows(ok, sites, t, shadow_m, shadow_column, gnomon_m, edge, weather, observer, note), ok


def _site_texts(ids: np.ndarray, inverse: np.ndarray, ok: np.ndarray) -> np.ndarray:
    """Each row's site id (``ids[inverse]``) as a text array as wide as the longest id of the rows kept
    (``ok``), as ``ids[inverse][ok].astype(str)`` makes it, without a Python object per row."""
    kept = np.flatnonzero(np.bincount(inverse[ok], minlength=ids.size)) if ok.any() else np.zeros(0, np.int64)
    width = max([len(ids[k]) for k in kept.tolist()] + [1])
    return np.array(ids.tolist(), dtype=f"<U{width}")[inverse] if ids.size else np.zeros(inverse.size, "<U1")


def _digit_cells(cells: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Fixed-width byte cells (NUL after the text) made of 1 to 15 ASCII digits: their values as floats
    (exact, as ``float(text)`` gives them) and which cells they are (others: 0 and False)."""
    n, width = cells.size, cells.dtype.itemsize
    if n == 0 or width > 15:
        return np.zeros(n), np.zeros(n, bool)
    codes = cells.view(np.uint8).reshape(n, width)
    digits = codes - np.uint8(48)
    filled = codes != 0
    good = filled[:, 0] & ((digits < 10) | ~filled).all(axis=1)  # a NUL only ever follows the text
    value = np.zeros(n, np.int64)
    for p in range(width):
        value = np.where(filled[:, p], value * 10 + digits[:, p], value)
    return np.where(good, value, 0).astype(float), good


def _distinct_column(table, name: str) -> np.ndarray:
    """A text column of a byte chunk as an object array, one string object per distinct text."""
    texts, inverse = table.distinct(name)
    return np.array(texts, dtype=object)[inverse]


def _length_rows(ok, sites, t, shadow_m, shadow_column, gnomon_m, edge, weather, observer, note) -> dict:
    """The plain length rows kept (``ok``) as the log's columns, the other forms' columns filled."""
    m = int(ok.sum())
    return {
        "site": sites[ok].astype(str),
        "time_utc": t[ok],
        "time_column": np.full(m, "time_utc"),
        "shadow_m": shadow_m[ok],
        "shadow_column": repeated_object(shadow_column, m),
        "gnomon_m": gnomon_m[ok],
        "edge": edge[ok],
        "temperature_c": weather["temperature_c"][ok],
        "pressure_hpa": weather["pressure_hpa"][ok],
        "observer": observer[ok],
        "note": note[ok],
    } | {name: np.full(m, value, dtype=_narrow(_FORM_DTYPES[name], value)) for name, value in LENGTH_FORM.items()}
