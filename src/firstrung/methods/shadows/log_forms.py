"""The other ways a shadow log records the noon Sun (the design's "More ways to record the noon Sun"):
an angle instead of a length, and the shadow tip's position on the board (a trace).

A row gives exactly one of a shadow length, an angle (``altitude_deg`` or
``zenith_distance_deg``, with ``limb`` and ``angle_sigma_deg``) or a tip
position (``tip_x`` and ``tip_y`` in ``mm``, ``cm`` or ``m``, from the point
under the gnomon's tip). A trace row may go without a time when the file has
a ``date`` column; such a trace needs :data:`MIN_TRACE_POINTS` points a day.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import LIMBS
from firstrung.errors import RowProblem, row_ranges
from firstrung.patterns import pattern
from firstrung.tabular import Row, Slot

#: Fewest points of a trace without times: a conic through the tip's path needs five.
MIN_TRACE_POINTS = 5

#: Largest stated error of one angle reading [deg]; more is a unit typed wrongly.
ANGLE_SIGMA_LIMIT_DEG = 10.0

ANGLE_COLUMNS = ("altitude_deg", "zenith_distance_deg")
TIP_X_COLUMNS = ("tip_x_mm", "tip_x_cm", "tip_x_m")
TIP_Y_COLUMNS = ("tip_y_mm", "tip_y_cm", "tip_y_m")
_FACTORS_M = {"m": 1.0, "cm": 0.01, "mm": 0.001}
_LIMB_WORDS = {"center": "centre", "middle": "centre"}

FORM_SLOTS = (
    Slot(ANGLE_COLUMNS, numeric=True),
    Slot(("limb",)),
    Slot(("angle_sigma_deg",), numeric=True),
    Slot(TIP_X_COLUMNS, numeric=True),
    Slot(TIP_Y_COLUMNS, numeric=True),
    Slot(("date",)),
)


@dataclass(frozen=True)
class FormVariant:
    """One way of recording a reading, as the collection point offers it: its own form on the kind's page.

    ``needs`` are the first names of the slots a reading of this form must fill; ``leaves_out`` the
    first names of the slots it does not show (every other slot of the log is offered, optional).
    """

    key: str
    title: str
    needs: tuple[str, ...]
    leaves_out: tuple[str, ...]
    #: Words for a slot's alternative columns where they are not units (``altitude_deg``: "altitude").
    choice_words: tuple[tuple[str, str], ...] = ()


#: The shadow log's forms at the collection point: a length, an angle, a tip's position.
FORM_VARIANTS = (
    FormVariant("length", "Shadow length", ("shadow_m",),
                ("altitude_deg", "limb", "angle_sigma_deg", "tip_x_mm", "tip_y_mm", "date")),
    FormVariant("angle", "The Sun's altitude (quadrant, clinometer, theodolite)", ("altitude_deg",),
                ("shadow_m", "gnomon_m", "edge", "tip_x_mm", "tip_y_mm", "date"),
                (("altitude_deg", "altitude"), ("zenith_distance_deg", "zenith distance"))),
    FormVariant("trace", "Shadow tip on the board (x, y from the plumb point)", ("tip_x_mm", "tip_y_mm"),
                ("shadow_m", "altitude_deg", "limb", "angle_sigma_deg", "date")),
)

#: Columns that make a length column unnecessary, and a time column (``date`` for untimed traces).
INSTEAD_OF_LENGTH = ANGLE_COLUMNS + TIP_X_COLUMNS + TIP_Y_COLUMNS
INSTEAD_OF_TIME = ("date",)

#: What the reader returns for a row in the plain length form.
LENGTH_FORM = {
    "form": "length", "timed": True, "altitude_deg": math.nan, "angle_column": "", "limb": None,
    "angle_sigma_deg": math.nan, "tip_x_m": math.nan, "tip_y_m": math.nan,
}


def uses_forms(chosen: dict) -> bool:
    """Whether a file has any column of the other forms (else the plain reader does it all)."""
    return any(chosen.get(slot.names[0]) is not None for slot in FORM_SLOTS)


def row_form(row: Row) -> str | None:
    """Which form the row's filled cells give, or ``None`` after a problem (none or two given)."""
    given = []
    if row.column("shadow_m") is not None and row.cell("shadow_m") != "":
        given.append(row.column("shadow_m"))
    if row.column("altitude_deg") is not None and row.cell("altitude_deg") != "":
        given.append(row.column("altitude_deg"))
    for slot in ("tip_x_mm", "tip_y_mm"):
        if row.column(slot) is not None and row.cell(slot) != "":
            given.append(row.column(slot))
    tips = [name for name in given if name.startswith("tip_")]
    others = [name for name in given if not name.startswith("tip_")]
    if len(others) + (1 if tips else 0) > 1:
        row.problem(given[1], f"a row gives a length, an angle or a tip position, not two of them (got {', '.join(given)})")
        return None
    if others:
        return "length" if others[0].startswith("shadow_") else "angle"
    if tips:
        return "trace"
    column = row.column("shadow_m") or row.column("altitude_deg") or row.column("tip_x_mm")
    row.problem(column, "expected a shadow length, an angle or a tip position, got empty cells")
    return None


_PLAIN_SIGNED_RE = pattern(r"^-?\d+(?:\.\d+)?$")


def fast_form_row(chosen: dict, cells: dict, site_id: str, t, limit_m: float) -> dict | None:
    """A plain angle or timed trace row (ISO UTC time checked by the caller, plain numbers, nothing else
    unusual) read without the full checks; ``None`` sends it through them (same results)."""
    if chosen.get("date") is not None or chosen.get("shadow_m") is not None or chosen.get("gnomon_m") is not None:
        return None
    if any(chosen.get(k) is not None and cells.get(chosen[k], "") for k in ("edge", "temperature_c", "pressure_hpa")):
        return None
    values = dict(LENGTH_FORM, site=site_id, time_utc=t, time_column="time_utc", shadow_m=math.nan,
                  shadow_column="", gnomon_m=math.nan, edge=None, temperature_c=math.nan, pressure_hpa=math.nan,
                  observer=cells.get(chosen["observer"], "") if chosen.get("observer") else "",
                  note=cells.get(chosen["note"], "") if chosen.get("note") else "")
    angle_column, x_column, y_column = chosen.get("altitude_deg"), chosen.get("tip_x_mm"), chosen.get("tip_y_mm")
    angle = cells.get(angle_column, "") if angle_column else ""
    x, y = (cells.get(c, "") if c else "" for c in (x_column, y_column))
    if angle and not x and not y:
        if not _PLAIN_SIGNED_RE().match(angle) or (chosen.get("angle_sigma_deg") and cells.get(chosen["angle_sigma_deg"])):
            return None
        value = float(angle)
        limb = cells.get(chosen["limb"], "").strip().lower() if chosen.get("limb") else ""
        if not 0.0 <= value <= 90.0 or (limb and limb not in LIMBS):
            return None
        values.update(form="angle", altitude_deg=90.0 - value if angle_column == "zenith_distance_deg" else value,
                      angle_column=angle_column, limb=limb or None)
        return values
    if x and y and not angle and _PLAIN_SIGNED_RE().match(x) and _PLAIN_SIGNED_RE().match(y):
        factor_x, factor_y = _FACTORS_M[x_column.rsplit("_", 1)[1]], _FACTORS_M[y_column.rsplit("_", 1)[1]]
        tip_x, tip_y = float(x) * factor_x, float(y) * factor_y
        if abs(tip_x) > limit_m or abs(tip_y) > limit_m:
            return None
        values.update(form="trace", tip_x_m=tip_x, tip_y_m=tip_y)
        return values
    return None


def fast_form_columns(chosen: dict, columns: dict, ok, sites, t, limit_m: float, *, untimed: bool = False):
    """Plain angle and timed-trace rows of a columnar table, a column at a time: their values and a mask.

    ``ok`` marks the rows whose site and ISO UTC time the caller found plain.
    A row is plain when it gives only an angle (a plain number within 0-90
    deg, a known limb word or none, no stated sigma) or only both tip
    coordinates (plain numbers within ``limit_m``), and the file has no
    length, gnomon, date, edge or weather column; every other row takes the
    full row checks (same results: a test compares both). ``untimed``: a file
    of traces with a date and no time column (``t`` each date's mean noon);
    only tip positions are plain there.
    """
    n = ok.size
    if any(chosen.get(k) is not None for k in ("shadow_m", "gnomon_m", "edge", "temperature_c",
                                                "pressure_hpa", "angle_sigma_deg") + (() if untimed else ("date",))):
        return None, np.zeros(n, bool)
    blank = [""] * n

    def numbers(column):
        cells = columns[column] if column is not None else blank
        given = np.fromiter(map(bool, cells), bool, n)
        plain_number = _PLAIN_SIGNED_RE().match
        plain = np.fromiter((bool(plain_number(c)) for c in cells), bool, n)
        values = np.array([float(c) if p else np.nan for c, p in zip(cells, plain, strict=True)])
        return given, plain, values

    angle_column, x_column, y_column = chosen.get("altitude_deg"), chosen.get("tip_x_mm"), chosen.get("tip_y_mm")
    a_given, a_plain, a_value = numbers(angle_column)
    x_given, x_plain, x_value = numbers(x_column)
    y_given, y_plain, y_value = numbers(y_column)
    limb_cells = columns[chosen["limb"]] if chosen.get("limb") is not None else blank
    limb = np.array([c.strip().lower() or None for c in limb_cells], dtype=object)
    limb_ok = np.fromiter((x is None or x in LIMBS for x in limb), bool, n)
    angle = a_given & ~x_given & ~y_given & a_plain & (a_value >= 0.0) & (a_value <= 90.0) & limb_ok
    fx = _FACTORS_M[x_column.rsplit("_", 1)[1]] if x_column else 1.0
    fy = _FACTORS_M[y_column.rsplit("_", 1)[1]] if y_column else 1.0
    tip_x, tip_y = x_value * fx, y_value * fy
    with np.errstate(invalid="ignore"):
        trace = (~a_given & x_plain & y_plain & (np.abs(tip_x) <= limit_m) & (np.abs(tip_y) <= limit_m))
    ok = ok & (trace if untimed else angle | trace)
    m = int(ok.sum())
    altitude = np.where(angle, 90.0 - a_value if angle_column == "zenith_distance_deg" else a_value, np.nan)
    blank_text = np.full(n, "", dtype=object)
    observer = np.array(columns[chosen["observer"]], dtype=object) if chosen.get("observer") else blank_text
    note = np.array(columns[chosen["note"]], dtype=object) if chosen.get("note") else blank_text
    return {
        "site": sites[ok].astype(str), "time_utc": t[ok], "time_column": np.full(m, None if untimed else "time_utc"),
        "shadow_m": np.full(m, np.nan), "shadow_column": np.full(m, "", dtype=object), "gnomon_m": np.full(m, np.nan),
        "edge": np.full(m, None, dtype=object), "temperature_c": np.full(m, np.nan),
        "pressure_hpa": np.full(m, np.nan), "observer": observer[ok], "note": note[ok],
        "form": np.where(angle, "angle", "trace")[ok].astype("<U6"), "timed": np.full(m, not untimed),
        "altitude_deg": altitude[ok], "angle_column": np.where(angle, angle_column or "", "")[ok].astype("<U19"),
        "limb": np.where(angle, limb, None)[ok], "angle_sigma_deg": np.full(m, np.nan),
        "tip_x_m": np.where(trace, tip_x, np.nan)[ok], "tip_y_m": np.where(trace, tip_y, np.nan)[ok],
    }, ok


_PLAIN_DATE_RE = pattern(r"^\d{4}-\d{2}-\d{2}$")


def _day_or_nat(text: str) -> np.datetime64:
    try:
        return np.datetime64(text, "D")
    except ValueError:
        return np.datetime64("NaT", "D")


def mean_noons_utc(campaign, cells, sites) -> tuple[np.ndarray, np.ndarray]:
    """12:00 local mean time of each plain ISO date cell at its row's site, as UTC [ms], and which were plain.

    The column-at-a-time twin of :func:`firstrung.spreadsheet.mean_noon_utc`
    (other date spellings and unknown sites go the long way).
    """
    n = len(cells)
    plain_date = _PLAIN_DATE_RE().match
    plain = np.fromiter((bool(plain_date(c)) for c in cells), bool, n) & (sites != "")
    days = np.full(n, "NaT", dtype="<U10")
    days[plain] = np.asarray(cells, dtype=object)[plain].astype(str)
    try:
        day = days.astype("datetime64[D]")
    except ValueError:  # a date that does not exist: that row alone goes the long way, which says so
        day = np.array([_day_or_nat(text) for text in days], dtype="datetime64[D]")
    longitude = {site.id: site.longitude_deg for site in campaign.sites}
    lon = np.array([longitude.get(site, 0.0) for site in sites], float)
    shift = np.round(lon / 15.0 * 3600e3).astype(np.int64).astype("timedelta64[ms]")
    t = day.astype("datetime64[ms]") + np.timedelta64(12 * 3600 * 1000, "ms") - shift
    return t, plain & ~np.isnat(t)


def angle_cells(row: Row) -> dict:
    """An angle row's altitude as read [deg], limb and stated error."""
    column = row.column("altitude_deg")
    zenith = column == "zenith_distance_deg"
    what = "a zenith distance" if zenith else "an altitude"
    value = row.number("altitude_deg", f"{what} between 0 and 90 degrees", lambda x: 0.0 <= x <= 90.0, required=True)
    limb = None
    text = row.cell("limb")
    if text:
        limb = _LIMB_WORDS.get(text.strip().lower(), text.strip().lower())
        if limb not in LIMBS:
            row.problem("limb", f"expected limb lower, centre or upper, got {text!r}")
    sigma = row.number(
        "angle_sigma_deg", f"a positive number of degrees below {ANGLE_SIGMA_LIMIT_DEG:g}",
        lambda x: 0.0 < x < ANGLE_SIGMA_LIMIT_DEG,
    )
    values = dict(LENGTH_FORM)
    values.update(
        form="angle", altitude_deg=90.0 - value if zenith else value, angle_column=column, limb=limb,
        angle_sigma_deg=sigma,
    )
    return values


def trace_cells(row: Row, limit_m: float) -> dict:
    """A trace row's tip position on the board [m]."""
    values = dict(LENGTH_FORM)
    values["form"] = "trace"
    for slot, key in (("tip_x_mm", "tip_x_m"), ("tip_y_mm", "tip_y_m")):
        column = row.column(slot)
        if column is None:
            row.problem(None, f"expected both tip_x and tip_y columns for a trace, {slot[:5]} is missing")
            continue
        unit = column.rsplit("_", 1)[1]
        values[key] = row.number(
            slot, f"a distance on the board within {limit_m:g} m, in {unit}",
            lambda x, u=unit: abs(x) * _FACTORS_M[u] <= limit_m, factor=_FACTORS_M[unit], required=True,
        )
    return values


def short_traces(file, row, site, time_utc, timed, form) -> tuple[np.ndarray, list[RowProblem]]:
    """Rows of traces without times that have too few points a day, and one problem per trace.

    Returns a mask of the rows to keep and the problems.
    """
    keep = np.ones(len(row), bool)
    problems: list[RowProblem] = []
    untimed = (~np.asarray(timed, bool)) & (np.asarray(form) == "trace")
    if not untimed.any():
        return keep, problems
    day = np.asarray(time_utc).astype("datetime64[D]").astype(str)
    keys = np.char.add(np.char.add(np.asarray(file, str), "\x1f"), np.char.add(np.char.add(np.asarray(site, str), "\x1f"), day))
    names, inverse, counts = np.unique(keys[untimed], return_inverse=True, return_counts=True)
    for k, (name, count) in enumerate(zip(names, counts, strict=True)):
        if count >= MIN_TRACE_POINTS:
            continue
        picked = np.flatnonzero(untimed)[inverse == k]
        keep[picked] = False
        label, site_id, date = name.split("\x1f")
        rows = ("row " if picked.size == 1 else "rows ") + row_ranges(np.asarray(row)[picked])
        problems.append(RowProblem(
            label, int(np.asarray(row)[picked[0]]), None,
            f"a trace without times at site '{site_id}' on {date} has {count} point(s) ({rows}); "
            f"expected at least {MIN_TRACE_POINTS} to find the shortest shadow",
        ))
    return keep, problems


def angle_instruments(campaign, log, site_index) -> dict:
    """Each row's angle error, limb and index correction: the log's own, else the site's instrument's."""
    from firstrung.campaign_model import AngleInstrument

    instruments = [s.angle_instrument or AngleInstrument() for s in campaign.sites]
    sigma = np.array([i.sigma_deg for i in instruments], float)[site_index]
    limb = np.array([i.limb for i in instruments], dtype="<U6")[site_index]
    row_limb = np.asarray(log.limb, dtype=object)
    given = np.not_equal(row_limb, None) if len(log) else np.zeros(0, bool)  # a column at a time, in C
    row_sigma = np.asarray(log.angle_sigma_deg, float)
    limb = limb.copy()
    limb[given] = row_limb[given].astype(str)
    return {
        "angle_sigma_deg": np.where(np.isfinite(row_sigma), row_sigma, sigma),
        "limb": limb,
        "index_correction_deg": np.array([i.index_correction_deg for i in instruments], float)[site_index],
        "index_sigma_deg": np.array([i.index_correction_sigma_deg for i in instruments], float)[site_index],
    }
