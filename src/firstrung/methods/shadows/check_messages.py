"""The shadow check's flags in words: the diagnosis of each explained series, isolated bad rows, a Sun below\nthe horizon, readings far from noon and duplicate rows, each with the fix to ask the observer for.\n"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.flags import (
    Flag,
)
from firstrung.methods.shadows.altitude import MIN_ALTITUDE_DEG
from firstrung.methods.shadows.check_statistics import (
    _ARCMIN_PER_RAD,
    LENGTH_FACTORS,
    CheckSite,
    SeriesStatistic,
    _Hypothesis,
)
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.series_layout import group_median
from firstrung.numbers import median

#: Fewest rows for a time, longitude, latitude or edge hypothesis (the shape
#: of the series is needed); a length unit is judged from a single row.
MIN_ROWS_FOR_SHAPE = 3


#: Robust residual beyond which a row is an outlier: a warning from
#: OUTLIER_SIGMA, an error from OUTLIER_ERROR_SIGMA (two-sided normal
#: probabilities 7e-6 and 1e-15).
OUTLIER_SIGMA = 4.5


OUTLIER_ERROR_SIGMA = 8.0


#: Rows per series from which the residual spread is estimated from the data
#: (1.4826 MAD) and, when larger than stated, used to scale the outlier test.
MIN_ROWS_FOR_SPREAD = 8


#: A campaign is "noon-only" when the median reading is within this of noon [h];
#: then readings more than FAR_FROM_NOON_H from noon get a warning.
NOON_ONLY_MEDIAN_H = 1.0


FAR_FROM_NOON_H = 2.0


@dataclass
class _Context:
    site: CheckSite
    date: str
    file: str
    n: int
    statistic_logged: float
    statistic_best: float | None
    alternatives: tuple
    zone_offset_h: float
    rows: ShadowReadings
    rows_g: np.ndarray
    fit: SeriesStatistic
    g: int


def _plural(x: float, word: str) -> str:
    return f"{x:g} {word}" + ("" if abs(x) == 1 else "s")


def _row_span(rows_g_rows) -> str:
    r = np.sort(np.asarray(rows_g_rows))
    return f"row {r[0]}" if r.size == 1 else f"rows {r[0]}-{r[-1]}"


def _statistic_text(c: _Context) -> str:
    return (
        f"robust chi-square {c.statistic_logged:.1f} as logged against {c.statistic_best:.1f} "
        f"so explained, over {c.n} reading{'s' if c.n != 1 else ''}"
    )


def _flags_for_rows(c: _Context, code: str, severity: str, message: str, fix: str, fields: dict) -> list[Flag]:
    base_fields = {**fields, "statistic_logged": round(c.statistic_logged, 2)}
    if c.statistic_best is not None:
        base_fields["statistic_explained"] = round(c.statistic_best, 2)
    base_fields["series_rows"] = c.n
    return [
        Flag(c.file, int(c.rows.row[i]), c.site.id, code, severity, message, fix, str(c.rows.observer[i] or ""),
             dict(base_fields))
        for i in c.rows_g
    ]


_UNIT_GUESSES = {
    # (column unit, factor): what was probably typed
    ("cm", 10.0): "millimetres typed in a centimetre column",
    ("m", 100.0): "centimetres typed in a metre column",
    ("m", 1000.0): "millimetres typed in a metre column",
    ("mm", 0.1): "centimetres typed in a millimetre column",
    ("cm", 0.01): "metres typed in a centimetre column",
    ("mm", 0.001): "metres typed in a millimetre column",
    ("cm", 1 / 2.54): "inches typed in a centimetre column",
    ("mm", 1 / 25.4): "inches typed in a millimetre column",
    ("cm", 1 / 30.48): "feet typed in a centimetre column",
    ("mm", 0.01): "decimetres typed in a millimetre column",
}


def _explained_flags(h: _Hypothesis, c: _Context) -> list[Flag]:
    site, rows = c.site, c.rows
    where = f"{c.file} {_row_span(rows.row[c.rows_g])}"
    stat = _statistic_text(c)
    observer = str(rows.observer[c.rows_g[0]] or "") or "the observer"
    also = ""
    lon_alt = [a for a in c.alternatives if a == "longitude sign"]
    if lon_alt and h.code != "longitude-sign":
        also = (f"; a wrong longitude sign would fit as well ({site.longitude_deg:g} deg is close to a "
                "multiple of 7.5 deg), so check the campaign's longitude too")
    if h.code == "local-time-as-utc":
        offset = c.zone_offset_h
        message = (
            f"the readings at {site.id} on {c.date} fit the Sun when their times are read as local time "
            f"({site.timezone}, UTC{offset:+g} h), not UTC: local clock times were probably typed in the "
            f"time_utc column ({stat}){also}"
        )
        fix = (f"ask {observer} to confirm; then rename the column of {c.file} to time_local, or subtract "
               f"{_plural(offset, 'hour')} from {where}")
        return _flags_for_rows(c, h.code, "error", message, fix,
                               {"hours": -offset, "offset_hours": offset, "timezone": site.timezone})
    if h.code == "time-shift-hours":
        hours = h.hours
        direction = "later" if hours > 0 else "earlier"
        column = str(rows.time_column[c.rows_g[0]])
        if abs(hours) == 1 and column == "time_local":
            why = ("the clock was probably on standard time while daylight-saving time applied" if hours > 0
                   else "the clock was probably on daylight-saving time")
        elif abs(hours) == 1:
            why = "the conversion to UTC probably used the wrong offset (daylight-saving time?)"
        else:
            why = "the clock or the conversion to UTC was probably set to the wrong zone"
        message = (f"the readings at {site.id} on {c.date} fit the Sun exactly {_plural(abs(hours), 'hour')} "
                   f"{direction} than logged: {why} ({stat}){also}")
        verb = "add" if hours > 0 else "subtract"
        fix = f"ask {observer} which time the clock showed; if confirmed, {verb} {_plural(abs(hours), 'hour')} to {where}"
        return _flags_for_rows(c, h.code, "error", message, fix, {"hours": hours})
    if h.code == "longitude-sign":
        hours = 2.0 * site.longitude_deg / 15.0
        message = (
            f"the readings at {site.id} on {c.date} fit a longitude of {-site.longitude_deg:g} deg, not the "
            f"campaign's {site.longitude_deg:g} deg: apparent noon came {abs(hours) * 60:.0f} min "
            f"{'later' if hours > 0 else 'earlier'} than predicted, so the sign of longitude_deg is probably "
            f"wrong (east is positive) ({stat})"
        )
        fix = (f"check longitude_deg of site '{site.id}' in the campaign file against a map "
               f"(east positive); {-site.longitude_deg:g} fits these readings")
        return _flags_for_rows(c, h.code, "error", message, fix,
                               {"longitude_deg": site.longitude_deg, "fitted_longitude_deg": -site.longitude_deg,
                                "hours": round(hours, 4)})
    if h.code == "latitude-sign":
        message = (
            f"the readings at {site.id} on {c.date} fit a latitude of {-site.latitude_deg:g} deg, not the "
            f"campaign's {site.latitude_deg:g} deg: the sign of latitude_deg is probably wrong (north is "
            f"positive) ({stat})"
        )
        fix = f"check latitude_deg of site '{site.id}' in the campaign file (north positive)"
        return _flags_for_rows(c, h.code, "error", message, fix,
                               {"latitude_deg": site.latitude_deg, "fitted_latitude_deg": -site.latitude_deg})
    if h.code == "length-unit":
        f = h.factor
        column = str(rows.shadow_column[c.rows_g[0]])
        unit = column.rsplit("_", 1)[-1]
        size = f"{f:.4g} times" if f >= 1 else f"1/{1 / f:.4g} of"
        guess = _UNIT_GUESSES.get((unit, _nearest_factor(f)))
        guess_text = f": {guess}?" if guess else ": a unit mix-up?"
        message = (f"shadow lengths at {site.id} on {c.date} are {size} what the Sun allows{guess_text} "
                   f"({stat})")
        scale = f"divide the values of {where} by {f:.6g}" if f >= 1 else f"multiply the values of {where} by {1 / f:.6g}"
        fix = (f"ask {observer} in which unit the lengths were measured; the column is {column}; "
               f"{scale}, or give them in the right column")
        return _flags_for_rows(c, h.code, "error", message, fix, {"factor": float(f), "column": column})
    if h.angle is not None:
        return _angle_flags(h, c, where, stat, observer)
    if np.isfinite(rows.altitude_read_deg[c.rows_g]).all():
        return _limb_flags(h, c, stat, observer)
    # edge convention
    logged = sorted({str(e) for e in rows.edge[c.rows_g]})
    close = [a.split()[0] for a in c.alternatives if a.endswith(" edge")]
    also = f" (the {' or '.join(close)} edge fits almost as well)" if close else ""
    message = (
        f"the readings at {site.id} on {c.date} fit the {h.edge} edge of the shadow{also}, not the "
        f"{'/'.join(logged)} edge stated for them (the difference is the Sun's semi-diameter or "
        f"diameter, 16' or 32'; {stat})"
    )
    fix = (f"ask {observer} which edge was marked (sharp dark end, middle of the soft fringe, faint end) "
           f"and set edge = \"{h.edge}\" for these rows or for the site's gnomon")
    return _flags_for_rows(c, h.code, "error", message, fix, {"edge_logged": "/".join(logged), "edge": h.edge})


def _nearest_factor(f: float) -> float:
    for known in LENGTH_FACTORS:
        if abs(known / f - 1.0) < 1e-9:
            return known
    return f


def _mismatch_flags(c: _Context) -> list[Flag]:
    if c.n < MIN_ROWS_FOR_SHAPE:
        return []  # single rows are judged by the outlier test
    level = float(c.fit.level_rad[c.g]) * _ARCMIN_PER_RAD
    z = float(c.fit.level_rad[c.g] / c.fit.level_sigma_rad[c.g])
    candidates = ", ".join(c.alternatives)
    tail = (f"; several explanations fit about equally well: {candidates}" if len(c.alternatives) > 1
            else f"; the nearest usual mistake ({candidates}) does not fit well either" if c.alternatives
            else "; none of the usual mistakes (clock, zone, coordinates' signs, units, edge) explains them")
    message = (
        f"the readings at {c.site.id} on {c.date} do not fit the Sun: {abs(level):.1f}' "
        f"{'high' if level > 0 else 'low'} on average ({abs(z):.1f} sigma; robust chi-square "
        f"{c.statistic_logged:.1f} over {c.n} readings){tail}"
    )
    observer = str(c.rows.observer[c.rows_g[0]] or "") or "the observer"
    fix = (f"ask {observer} for the field sheet: the clock and its zone, the length unit, the gnomon's "
           "height and which shadow edge was marked")
    return _flags_for_rows(c, "series-mismatch", "error", message, fix,
                           {"level_arcmin": round(level, 2), "level_sigma": round(z, 2),
                            "candidates": list(c.alternatives)})


def _outlier_flags(sites, rows, group, n_groups, count, z, residual0, rand0, sys0, verdicts) -> list[Flag]:
    """Rows far from their series' fit (robust spread), or for series of one or two rows, from the Sun."""
    small = count[group] < MIN_ROWS_FOR_SHAPE
    spread = np.ones(n_groups)
    big = count >= MIN_ROWS_FOR_SPREAD
    if np.any(big):
        start = np.concatenate([[0], np.cumsum(count)[:-1]])
        mad = group_median(np.abs(z), group, n_groups, start, count)
        spread = np.where(big, np.maximum(1.0, 1.4826 * mad), 1.0)
    score = np.abs(z) / spread[group]
    direct = np.abs(residual0) / np.sqrt(rand0 + sys0)
    if np.count_nonzero(small) >= MIN_ROWS_FOR_SPREAD:
        # a network of single readings: their spread about the Sun, when larger than stated, scales
        # the test as a series' own spread does (schools state no errors; their readings scatter)
        d = (residual0 / np.sqrt(rand0 + sys0))[small]
        direct = direct / max(1.0, 1.4826 * median(np.abs(d - median(d))))
    score = np.where(small, direct, score)
    explained = np.array([v[0] == "explained" for v in verdicts])
    # in an unexplained series the whole series is flagged; rows are not tested one by one
    tested = ~np.array([v[0] in ("unexplained", "ambiguous") and c >= MIN_ROWS_FOR_SHAPE
                        for v, c in zip(verdicts, count, strict=True)])[group]
    hits = np.flatnonzero(tested & (score > OUTLIER_SIGMA))
    out = []
    for i in hits:  # flagged rows only
        site = sites[rows.site_index[i]]
        s = float(score[i])
        severity = "error" if s > OUTLIER_ERROR_SIGMA else "warning"
        against = "the Sun" if small[i] else "the rest of its series"
        if explained[group[i]] and not small[i]:
            against += " (after the series' own mistake is corrected)"
        out.append(
            Flag(
                str(rows.file[i]), int(rows.row[i]), site.id, "outlier", severity,
                f"this reading at {site.id} is {s:.1f} sigma off {against}: a misread or mistyped value?",
                f"ask {str(rows.observer[i] or '') or 'the observer'} to check this row against the field sheet "
                "(a digit typed wrong, a reading of another gnomon?)",
                str(rows.observer[i] or ""),
                {"sigma": round(s, 2)},
            )
        )
    return out


def _horizon_flags(sites, rows, altitude_deg, time_ok) -> list[Flag]:
    out = []
    for i in np.flatnonzero(time_ok & (altitude_deg < MIN_ALTITUDE_DEG)):
        site = sites[rows.site_index[i]]
        a = float(altitude_deg[i])
        below = a < 0.0
        message = (
            f"at the logged time ({np.datetime64(rows.time_utc[i], 's')}Z) the Sun was "
            + (f"{-a:.1f} deg below the horizon at {site.id}: no shadow can be cast" if below
               else f"only {a:.1f} deg high at {site.id}: the shadow is too long and too soft to use (below "
               f"{MIN_ALTITUDE_DEG:g} deg the reduction leaves it out)")
        )
        out.append(
            Flag(str(rows.file[i]), int(rows.row[i]), site.id, "sun-below-horizon", "error" if below else "warning",
                 message, "check the date and time of this row, and the time zone the clock was on",
                 str(rows.observer[i] or ""), {"altitude_deg": round(a, 3)})
        )
    return out


def _noon_flags(sites, rows, hour_angle_rad, time_ok) -> list[Flag]:
    hours = np.degrees(hour_angle_rad) / 15.0
    out = []
    for i in np.flatnonzero(time_ok & (np.abs(hours) > FAR_FROM_NOON_H)):
        site = sites[rows.site_index[i]]
        h = float(hours[i])
        out.append(
            Flag(str(rows.file[i]), int(rows.row[i]), site.id, "far-from-noon", "warning",
                 f"this reading at {site.id} was taken {abs(h):.1f} h {'after' if h > 0 else 'before'} local "
                 "apparent noon, in a campaign whose readings are otherwise near noon",
                 "check the time of this row (hour typed wrong?); if right, it is kept",
                 str(rows.observer[i] or ""), {"hours_from_noon": round(h, 3)})
        )
    return out


def _duplicate_flags(sites, rows) -> list[Flag]:
    """Second and later copies of a row with the same site, time and length."""
    n = len(rows)
    t = np.asarray(rows.time_utc, dtype="datetime64[ms]").astype(np.int64)
    length_um = np.round(np.asarray(rows.shadow_m) * 1e6).astype(np.int64)
    site_key = np.asarray(rows.site_index, np.int64)
    if n > 1 and _distinct_site_times(site_key, t):
        return []
    # equal keys side by side, each run in the rows' order (a stable sort): its first row is the original
    order = np.lexsort((length_um, t, site_key))
    starts = np.ones(n, bool)
    starts[1:] = (np.diff(site_key[order]) != 0) | (np.diff(t[order]) != 0) | (np.diff(length_um[order]) != 0)
    first_of = np.empty(n, np.int64)
    first_of[order] = order[np.flatnonzero(starts)][np.cumsum(starts) - 1]
    del order, starts
    out = []
    for i in np.flatnonzero(first_of != np.arange(n)):
        j = first_of[i]
        site = sites[rows.site_index[i]]
        out.append(
            Flag(str(rows.file[i]), int(rows.row[i]), site.id, "duplicate-row", "error",
                 f"same site, time and shadow length as {rows.file[j]} row {rows.row[j]}: a row entered twice?",
                 "delete the copy (or, if two readings were really taken, correct the time of one)",
                 str(rows.observer[i] or ""), {"duplicate_of": f"{rows.file[j]}:{rows.row[j]}"})
        )
    return out


def _distinct_site_times(site_key: np.ndarray, t: np.ndarray) -> bool:
    """Whether the rows' (site, time) pairs are sure to be all different: one key per pair, rising from
    row to row (a log written site by site in time order); False when that cannot be told at once."""
    low, high = int(t.min()), int(t.max())
    span = high - low + 1
    if int(site_key.min()) < 0 or (int(site_key.max()) + 1) * span >= 2**62:
        return False
    key = site_key * span + (t - low)
    return bool((key[1:] > key[:-1]).all())


def _pair_flags(h: _Hypothesis, c: _Context) -> list[Flag]:
    """The two mistakes of a pair, each flagged with its own fix, each saying the other is needed too."""
    flags = []
    for part, other in ((h.parts[0], h.parts[1]), (h.parts[1], h.parts[0])):
        for f in _explained_flags(part, c):
            message = (f.message + f"; together with a second mistake ({other.label}): neither alone fits the Sun, "
                       "both corrected do")
            fix = f.fix + f"; the {other.code} fix of these rows is needed as well"
            flags.append(Flag(f.file, f.row, f.site, f.code, f.severity, message, fix, f.observer,
                              {**f.fields, "together_with": other.label}))
    return flags


_EDGE_LIMB = {"umbra": "upper", "middle": "centre", "outer": "lower"}


def _angle_flags(h, c: _Context, where: str, stat: str, observer: str) -> list[Flag]:
    """An angle typed wrongly: a zenith distance in the altitude column, or degrees and minutes as decimals."""
    site = c.site
    if h.angle == "zenith":
        message = (f"the angles at {site.id} on {c.date} fit the Sun when read as zenith distances (90 deg "
                   f"minus the altitude), not altitudes ({stat})")
        fix = (f"ask {observer} what the instrument reads at the zenith; if it reads 0 there, rename the column "
               f"of {c.file} to zenith_distance_deg")
    else:
        message = (f"the angles at {site.id} on {c.date} fit the Sun when their decimals are read as arc minutes "
                   f"(41.30 as 41 deg 30'), not as fractions of a degree ({stat})")
        fix = (f"ask {observer}; if confirmed, write {where} in decimal degrees (41 deg 30' is 41.5), "
               "or as the instrument's degrees plus minutes / 60")
    return _flags_for_rows(c, h.code, "error", message, fix, {"typed_as": h.angle})


def _limb_flags(h, c: _Context, stat: str, observer: str) -> list[Flag]:
    """Angle readings that fit another limb of the Sun than the one stated."""
    logged = sorted({_EDGE_LIMB.get(str(e), str(e)) for e in c.rows.edge[c.rows_g]})
    limb = _EDGE_LIMB[h.edge]
    message = (f"the angles at {c.site.id} on {c.date} fit the Sun's {limb} limb, not the {'/'.join(logged)} "
               f"stated for them (the difference is the Sun's semi-diameter or diameter, 16' or 32'; {stat})")
    fix = (f"ask {observer} which part of the Sun the instrument was set on and set limb = \"{limb}\" for these "
           "rows or in the site's [site.angle_instrument]")
    return _flags_for_rows(c, "wrong-limb", "error", message, fix, {"limb_logged": "/".join(logged), "limb": limb})
