"""What a site's phone form shows: a field per column of the log, its choices, the site's predictions.

Fields come from the log's column slots (:class:`firstrung.tabular.Slot`): a
slot with one name is one field named as the column; a slot with several
(``time_local``/``time_utc``, ``shadow_mm``/``shadow_cm``/``shadow_m``) is a
value field ``value:<first name>`` and a choice ``column:<first name>``
(local time by default where the site has a zone). A POST may also name the
columns directly (the contract).
"""

from __future__ import annotations

import datetime as dt
import functools
from dataclasses import dataclass
from zoneinfo import ZoneInfo

import numpy as np

from firstrung.bounded import Bounded
from firstrung.collect.kinds import LogKind
from firstrung.patterns import pattern
from firstrung.tabular import TIME_COLUMNS

#: Choices of columns whose cells are a word from a list (the readers' own lists, common to the methods).
CHOICES = {
    "event": ("U1", "U2", "U3", "U4", "immersion", "emersion", "C1", "C2", "C3", "C4"),
    "quarter": ("first", "last"),
    "edge": ("umbra", "middle", "outer"),
    "limb": ("lower", "centre", "upper"),
}
_UNIT_WORDS = {"m": "m", "cm": "cm", "mm": "mm", "deg": "degrees", "s": "s", "c": "deg C", "hpa": "hPa",
               "arcmin": "arcmin"}
_CONTROL_RE = pattern(r"[\x00-\x1f\x7f]+")
#: Columns a log row may carry its own site with (open networks): not asked on a known site's page.
_SITE_POSITION = ("latitude_deg", "longitude_deg", "elevation_m", "timezone")


@dataclass(frozen=True)
class Field:
    """One field of a form."""

    name: str  # the form's field name
    label: str
    kind: str  # "time", "number", "choice", "text"
    required: bool
    choices: tuple[str, ...] = ()
    columns: tuple[str, ...] = ()  # for a slot with several names: the names offered
    default_column: str = ""
    column_words: tuple[str, ...] = ()  # how each offered column reads in its choice (its unit by default)


def label_of(column: str) -> str:
    """A column name as a form's label.

    >>> label_of("shadow_mm"), label_of("time_sigma_s"), label_of("observer")
    ('Shadow (mm)', 'Time sigma (s)', 'Observer')
    """
    words = column.split("_")
    unit = _UNIT_WORDS.get(words[-1]) if len(words) > 1 else None
    text = " ".join(words[:-1] if unit else words).capitalize()
    return f"{text} ({unit})" if unit else text


def fields(kind: LogKind, zone: str | None, form=None) -> list[Field]:
    """The fields of a kind's form, required ones first.

    ``form`` is one of the kind's ways of recording a reading (its ``forms``): its
    own fields only, those it needs required.

    >>> from firstrung.collect.kinds import log_kind
    >>> shadows = log_kind("shadows")
    >>> [f.name for f in fields(shadows, None, shadows.forms[1]) if f.required]
    ['value:time_utc', 'value:altitude_deg']
    >>> [f.column_words for f in fields(shadows, None, shadows.forms[1]) if f.name == 'value:altitude_deg']
    [('altitude', 'zenith distance')]
    """
    out = []
    left_out = form.leaves_out if form is not None else ()
    needs = form.needs if form is not None else ()
    words = dict(form.choice_words) if form is not None else {}
    for slot in kind.slots:
        first = slot.names[0]
        if slot.names == ("site",) or first in left_out or first in _SITE_POSITION:
            continue  # a site's page knows its site (a school's own position is for the log's rows)
        required = slot.required and not (form is not None and set(slot.unless) & set(needs)) or first in needs
        if slot.names == TIME_COLUMNS:
            default = "time_local" if zone is not None else "time_utc"
            out.append(Field(f"value:{first}", "Time", "time", required, (), slot.names, default,
                             tuple("local clock" if c == "time_local" else "UTC" for c in slot.names)))
        elif len(slot.names) > 1:
            default = next((n for n in slot.names if n.endswith("_cm")), first)
            out.append(Field(f"value:{first}", label_of(first).split(" (")[0], "number" if slot.numeric else "text",
                             required, (), slot.names, default,
                             tuple(words.get(c, c.rsplit("_", 1)[1]) for c in slot.names)))
        elif first in CHOICES:
            out.append(Field(first, label_of(first), "choice", required, CHOICES[first]))
        else:
            out.append(Field(first, label_of(first), "number" if slot.numeric else "text", required))
    return sorted(out, key=lambda f: not f.required)


def forms(kind: LogKind, zone: str | None) -> list[tuple[object | None, list[Field]]]:
    """Each way of recording a reading of a kind with its fields: one form, or one per ``kind.forms``."""
    if not kind.forms:
        return [(None, fields(kind, zone))]
    return [(form, fields(kind, zone, form)) for form in kind.forms]


def clean(text: str) -> str:
    """A form's cell: control characters (line ends, tabs) as spaces, no surrounding spaces."""
    return _CONTROL_RE().sub(" ", text).strip()


def cells_from_form(kind: LogKind, form: list[tuple[str, str]]) -> tuple[dict[str, str], tuple[str, str] | None]:
    """The log cells a posted form gives, or the field that cannot be read and why.

    >>> from firstrung.collect.kinds import log_kind
    >>> cells_from_form(log_kind("shadows"), [("value:time_utc", "2027-03-20T12:38"),
    ...     ("column:time_utc", "time_local"), ("value:shadow_m", "103.8"), ("column:shadow_m", "shadow_cm"),
    ...     ("observer", " T. O.\\n")])
    ({'time_local': '2027-03-20T12:38', 'shadow_cm': '103.8', 'observer': 'T. O.'}, None)
    """
    values: dict[str, str] = {}
    for name, value in form:
        if name in values:
            return {}, (name.split(":")[-1], "given twice")
        values[name] = clean(value)
    cells: dict[str, str] = {}
    for slot in kind.slots:
        first = slot.names[0]
        if f"value:{first}" in values:
            column = values.get(f"column:{first}", first)
            if column not in slot.names:
                return {}, (first, f"expected a column of {', '.join(slot.names)}, got {column[:40]!r}")
            if values[f"value:{first}"]:
                cells[column] = values[f"value:{first}"]
        for name in slot.names:
            if values.get(name):
                if name in cells:
                    return {}, (name, "given twice")
                cells[name] = values[name]
    return cells, None


def local_now(zone: str | None, now: dt.datetime) -> str:
    """The time to fill a form's time field with: the site's clock (UTC without a zone), to the minute."""
    here = now.astimezone(ZoneInfo(zone)) if zone else now.astimezone(dt.UTC)
    return here.strftime("%Y-%m-%dT%H:%M")


# --- what the site may expect ------------------------------------------------------------------


@dataclass(frozen=True)
class Noon:
    """The Sun's transit on one date at one site: its time and airless altitude, semi-diameter, declination."""

    time: dt.datetime
    altitude_deg: float
    semidiameter_deg: float
    declination_deg: float


#: Transits already computed, by (site, date); at most 50,000 (the oldest dropped first).
_NOONS: dict = Bounded(50_000)


def prepare_noons(sites, dates) -> None:
    """Compute the transit of each (site, date) not yet known, in one vectorised call (sites at once)."""
    from firstrung import ephemeris

    wanted = [(s, d) for s, d in zip(sites, dates, strict=True) if (s, d) not in _NOONS]
    if not wanted:
        return
    t = ephemeris.solar_transit(np.array([d for _, d in wanted], dtype="datetime64[D]"),
                                np.array([s.latitude_deg for s, _ in wanted]),
                                np.array([s.longitude_deg for s, _ in wanted]),
                                np.array([s.elevation_m for s, _ in wanted]))
    times = t.time_utc.astype("datetime64[s]").astype(str)
    for k, key in enumerate(wanted):
        _NOONS[key] = Noon(dt.datetime.fromisoformat(times[k]).replace(tzinfo=dt.UTC), float(t.altitude_deg[k]),
                           float(t.semidiameter_deg[k]), float(t.declination_deg[k]))


def prepare_today(sites, now: dt.datetime) -> None:
    """The transits of every site on its own clock's date of ``now`` (the forms' predictions, ready at once)."""
    sites = list(sites)
    prepare_noons(sites, [local_now(s.timezone, now)[:10] for s in sites])


def _noon(site, date: str) -> Noon:
    """The Sun's transit on a date at a site (its time aware, in UTC)."""
    if (site, date) not in _NOONS:
        prepare_noons([site], [date])
    return _NOONS[(site, date)]


def _clock(noon: dt.datetime, zone: str | None, minutes: float = 0.0) -> str:
    t = noon + dt.timedelta(minutes=minutes)
    return t.astimezone(ZoneInfo(zone)).strftime("%H:%M:%S") if zone else t.strftime("%H:%M:%S UTC")


def _noon_line(site, date: str, noon: dt.datetime) -> str:
    return f"Local apparent noon on {date}: {_clock(noon, site.timezone)}" + (
        f" ({site.timezone})" if site.timezone else "")


def _noon_shadow(site, noon: Noon) -> tuple[float, str, float]:
    """The shortest shadow [m] of the site's gnomon, its direction and the Sun's refracted altitude [deg],
    as the day's field sheet gives them."""
    from firstrung.methods.shadows.sheet import noon_shadow

    g = site.gnomon
    return noon_shadow(g.height_m, g.edge, site.latitude_deg, noon.altitude_deg, noon.semidiameter_deg,
                       noon.declination_deg)


@functools.lru_cache(maxsize=4096)
def _shadow_hints(site, date: str) -> tuple[str, ...]:
    g = site.gnomon
    if g is None:
        return (f"No gnomon for {site.id} in the campaign file: give its height with each reading.",)
    noon = _noon(site, date)
    length, direction, altitude = _noon_shadow(site, noon)
    return (
        _noon_line(site, date, noon.time),
        f"Shortest shadow then: {length * 100:.1f} cm of a {g.height_m * 100:.1f} cm gnomon "
        f"({g.edge} edge), pointing {direction}; the Sun {altitude:.1f}° high",
    )


@functools.lru_cache(maxsize=4096)
def _angle_hints(site, date: str) -> tuple[str, ...]:
    """What an instrument set on the Sun reads at noon: altitudes of the centre and both limbs, refracted."""
    from firstrung.refraction import apparent_from_true_altitude_deg

    noon = _noon(site, date)
    true, sd = noon.altitude_deg, noon.semidiameter_deg
    lower, centre, upper = (float(apparent_from_true_altitude_deg(true + k * sd)) for k in (-1, 0, 1))
    return (
        _noon_line(site, date, noon.time),
        f"The Sun's altitude then, as an instrument reads it (refraction included): {centre:.2f}° at its centre, "
        f"{lower:.2f}° on its lower limb, {upper:.2f}° on its upper limb (zenith distance of the centre "
        f"{90.0 - centre:.2f}°)",
        "Never sight the Sun through the instrument: align it by its own shadow or a projected image.",
    )


#: A trace's marks, as the blank trace sheet asks for them: every 10 minutes, 2 hours either side of noon.
TRACE_STEP_MIN, TRACE_HALF_SPAN_MIN = 10, 120


@functools.lru_cache(maxsize=4096)
def _trace_hints(site, date: str) -> tuple[str, ...]:
    """When to mark the tip, and where the noon mark falls from the plumb point."""
    noon = _noon(site, date)
    lines = [_noon_line(site, date, noon.time)]
    lines.append(f"Mark the shadow's tip every {TRACE_STEP_MIN} minutes from "
                 f"{_clock(noon.time, site.timezone, -TRACE_HALF_SPAN_MIN)[:5]} to "
                 f"{_clock(noon.time, site.timezone, TRACE_HALF_SPAN_MIN)[:5]}, at least 5 marks on both sides of noon")
    g = site.gnomon
    if g is not None:
        length, direction, _ = _noon_shadow(site, noon)
        lines.append(f"At noon the tip falls about {length * 100:.1f} cm {direction} of the plumb "
                     f"point (the gnomon's tip {g.height_m * 100:.1f} cm above the board)")
    return tuple(lines)


#: Predictions shown beside a kind's form, by log kind and form (a kind without an entry shows none).
HINTS = {"shadows": {None: _shadow_hints, "length": _shadow_hints, "angle": _angle_hints, "trace": _trace_hints}}


def hints(kind: str, site, date: str, form: str | None = None) -> tuple[str, ...]:
    """The predictions beside one form of a kind: for an angle, the Sun's altitude, never a length."""
    maker = HINTS.get(kind, {}).get(form)
    if maker is None:
        return ()
    try:
        return maker(site, date)
    except Exception:  # a prediction that cannot be made (a date past the ephemeris) hides the hint only
        return ()


def caution(kind: str) -> str:
    """The safety caution printed with a kind's form (the solar one for any kind not named here).

    >>> "safety officer" in caution("shadows") and "safety officer" in caution("transits")
    True
    """
    from firstrung import safety

    return {"eclipse": safety.ECLIPSE_NOTE, "phases": safety.PHASES_CAUTION,
            "transits": f"{safety.TRANSIT_CAUTION} {safety.TRANSIT_CAUTION_MORE}",
            "astrometry": safety.STARS_NOTE, "light_curves": safety.STARS_NOTE}.get(kind, safety.SOLAR_CAUTION_FULL)
