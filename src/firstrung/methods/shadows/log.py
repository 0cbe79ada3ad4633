"""The shadow log: its columns and row parsing (on :mod:`firstrung.tabular`), and each row's gnomon,
edge and errors filled in from the campaign.

Columns (the design's contract): ``site``, ``time_utc`` or ``time_local``, exactly one of
``shadow_m``/``shadow_cm``/``shadow_mm`` (returned in metres), optional ``gnomon_m|cm|mm``,
``edge``, ``temperature_c``, ``pressure_hpa``, ``observer``, ``note``.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from firstrung.campaign_model import EDGES, Campaign
from firstrung.csv_cells import cell_text
from firstrung.distinct import distinct_texts, shared_texts
from firstrung.errors import RowProblem
from firstrung.log_record import TimedRows
from firstrung.methods.shadows.inputs import ShadowReadings
from firstrung.methods.shadows.log_columns import (
    _UNIT_FACTORS_M,
    GNOMON_LIMIT_M,
    PRESSURE_RANGE_HPA,
    SHADOW_LIMIT_M,
    TEMPERATURE_RANGE_C,
    _fast_shadow_columns,
    _unit_of,
)
from firstrung.methods.shadows.log_forms import (
    FORM_SLOTS,
    FORM_VARIANTS,
    INSTEAD_OF_LENGTH,
    INSTEAD_OF_TIME,
    LENGTH_FORM,
    angle_cells,
    angle_instruments,
    row_form,
    short_traces,
    trace_cells,
    uses_forms,
)
from firstrung.open_sites import POSITION_SLOTS, without_refused_rows
from firstrung.tabular import COMMON_DTYPES, TIME_COLUMNS, Row, Slot, read_columns
from firstrung.times import quoted

_UNIT_WORDS = {"m": "metres", "cm": "centimetres", "mm": "millimetres"}


@dataclass(frozen=True)
class ShadowLog(TimedRows):
    """The good rows of shadow logs, as equal-length arrays, and the problems found.

    Attributes
    ----------
    file, row, site, time_utc, time_column
        As in :class:`~firstrung.log_record.TimedRows` (``site``: the site id).
    shadow_m : numpy.ndarray of float
        Shadow length [m], converted from the column's unit.
    shadow_column : numpy.ndarray of str (object: one shared text)
        The length column it came from (``shadow_m``, ``shadow_cm`` or ``shadow_mm``).
    gnomon_m : numpy.ndarray of float
        Gnomon height from the log [m]; NaN when absent (use the campaign's).
    edge : numpy.ndarray of object
        Marked edge (``"umbra"``, ``"middle"``, ``"outer"``) or ``None`` when absent.
    temperature_c : numpy.ndarray of float
        Air temperature [deg C]; NaN when absent.
    pressure_hpa : numpy.ndarray of float
        Air pressure [hPa]; NaN when absent.
    observer, note : numpy.ndarray of object
        Free text; ``''`` when absent.
    problems, rows_read, ignored_columns, notes
        As in :class:`~firstrung.log_record.TimedRows`.
    """

    shadow_m: np.ndarray
    shadow_column: np.ndarray
    gnomon_m: np.ndarray
    edge: np.ndarray
    temperature_c: np.ndarray
    pressure_hpa: np.ndarray
    observer: np.ndarray
    note: np.ndarray
    #: The other forms (see :mod:`firstrung.methods.shadows.log_forms`): ``form`` is
    #: ``"length"``, ``"angle"`` or ``"trace"``; ``timed`` False for a trace without times
    #: (its ``time_utc`` is the date's mean noon); ``altitude_deg`` the angle as read, as an
    #: altitude [deg]; ``limb``, ``angle_sigma_deg``; ``tip_x_m``, ``tip_y_m`` [m]. Filled for
    #: plain lengths when not given.
    form: np.ndarray | None = None
    timed: np.ndarray | None = None
    altitude_deg: np.ndarray | None = None
    angle_column: np.ndarray | None = None
    limb: np.ndarray | None = None
    angle_sigma_deg: np.ndarray | None = None
    tip_x_m: np.ndarray | None = None
    tip_y_m: np.ndarray | None = None

    def __post_init__(self) -> None:
        n = len(self.row)
        for name, fill, dtype in _FORM_FILLS:
            if getattr(self, name) is None:
                object.__setattr__(self, name, np.full(n, fill, dtype=dtype))


_FORM_FILLS = (
    ("form", "length", "<U6"), ("timed", True, bool), ("altitude_deg", np.nan, float),
    ("angle_column", "", "<U19"), ("limb", None, object), ("angle_sigma_deg", np.nan, float),
    ("tip_x_m", np.nan, float), ("tip_y_m", np.nan, float),
)


LOG_SLOTS = (
    Slot(("site",), required=True),
    Slot(TIME_COLUMNS, required=True, unless=INSTEAD_OF_TIME),
    Slot(("shadow_m", "shadow_cm", "shadow_mm"), required=True, numeric=True, unless=INSTEAD_OF_LENGTH),
    Slot(("gnomon_m", "gnomon_cm", "gnomon_mm"), numeric=True),
    Slot(("edge",)),
    Slot(("temperature_c",), numeric=True),
    Slot(("pressure_hpa",), numeric=True),
    Slot(("observer",)),
    Slot(("note",)),
) + FORM_SLOTS + POSITION_SLOTS

#: The ways a reading of this log is recorded, each its own form at the collection point.
LOG_FORMS = FORM_VARIANTS



def _parse_shadow_row(row: Row, campaign: Campaign) -> dict:
    forms = uses_forms(row.table.chosen)
    form = row_form(row) if forms else "length"
    # a trace, or a length or angle read at noon with no time given (a date alone): see ``untimed``
    site_id, t = row.site_and_time(campaign, untimed=True)
    shadow_column = row.column("shadow_m")
    shadow_m = math.nan
    if form == "length":
        shadow_m = _length_m(row, shadow_column)
    gnomon_m = _gnomon_m(row)
    values = LENGTH_FORM if not forms else (
        angle_cells(row) if form == "angle" else trace_cells(row, SHADOW_LIMIT_M) if form == "trace" else dict(LENGTH_FORM)
    )
    values = dict(values, timed=row.timed)
    return _common_cells(row, site_id, t, shadow_m, shadow_column, gnomon_m) | values


def _length_m(row: Row, shadow_column: str) -> float:
    unit = _unit_of(shadow_column)
    shadow_m = row.number(
        "shadow_m",
        f"a positive number of {_UNIT_WORDS[unit]}",
        lambda x: x > 0.0,
        factor=_UNIT_FACTORS_M[unit],
        required=True,
    )
    if shadow_m > SHADOW_LIMIT_M:
        row.problem(
            shadow_column,
            f"expected a shadow length of at most {SHADOW_LIMIT_M:g} m, "
            f"got {quoted(row.cell('shadow_m'))} ({shadow_m:g} m)",
        )
    return shadow_m


def _gnomon_m(row: Row) -> float:
    gnomon_m = math.nan
    gnomon_column = row.column("gnomon_m")
    if gnomon_column is not None:
        gnomon_unit = _unit_of(gnomon_column)
        gnomon_m = row.number(
            "gnomon_m",
            f"a positive number of {_UNIT_WORDS[gnomon_unit]}",
            lambda x: x > 0.0,
            factor=_UNIT_FACTORS_M[gnomon_unit],
        )
        if gnomon_m >= GNOMON_LIMIT_M:
            row.problem(
                gnomon_column,
                f"expected a gnomon height below {GNOMON_LIMIT_M:g} m, "
                f"got {quoted(row.cell('gnomon_m'))} ({gnomon_m:g} m)",
            )
    return gnomon_m


def _common_cells(row: Row, site_id, t, shadow_m, shadow_column, gnomon_m) -> dict:
    edge_text = row.cell("edge")
    edge = None
    if edge_text:
        edge = edge_text.lower()
        if edge not in EDGES:
            row.problem("edge", f"expected edge umbra, middle or outer, got {quoted(edge_text)}")
    low_c, high_c = TEMPERATURE_RANGE_C
    temperature_c = row.number(
        "temperature_c",
        f"a temperature between {low_c:g} and {high_c:g} degrees Celsius",
        lambda x: low_c <= x <= high_c,
    )
    low_hpa, high_hpa = PRESSURE_RANGE_HPA
    pressure_hpa = row.number(
        "pressure_hpa",
        f"a pressure between {low_hpa:g} and {high_hpa:g} hPa",
        lambda x: low_hpa <= x <= high_hpa,
    )
    return {
        "site": site_id,
        "time_utc": t,
        "time_column": row.column("time_utc"),
        "shadow_m": shadow_m,
        "shadow_column": shadow_column or "",
        "gnomon_m": gnomon_m,
        "edge": edge,
        "temperature_c": temperature_c,
        "pressure_hpa": pressure_hpa,
        "observer": cell_text(row, "observer"),
        "note": cell_text(row, "note"),
    }


@dataclass(frozen=True)
class ShadowInstruments:
    """Each shadow row's gnomon and errors, the log's own values first, else the campaign's.

    ``ok`` marks the rows that have a gnomon height at all (a row of a site
    without ``[site.gnomon]`` must give ``gnomon_m``); ``problems`` says why
    the others are refused.
    """

    ok: np.ndarray
    site_index: np.ndarray
    gnomon_m: np.ndarray
    gnomon_sigma_m: np.ndarray
    shadow_sigma_m: np.ndarray
    edge: np.ndarray
    problems: tuple[RowProblem, ...]
    angle: dict | None = None  # each row's angle_sigma_deg, limb, index_correction_deg, index_sigma_deg


def shadow_instruments(campaign: Campaign, log: ShadowLog) -> ShadowInstruments:
    """The gnomon, edge and stated errors of every row, with the campaign's defaults filled in.

    Per-site values are gathered once and indexed by each row's site, so the
    cost does not grow with a loop over rows.
    """
    from firstrung.campaign_model import DEFAULT_HEIGHT_SIGMA_M, DEFAULT_SHADOW_SIGMA_M

    index = {s.id: i for i, s in enumerate(campaign.sites)}
    ids, inverse = distinct_texts(np.asarray(log.site, dtype=str))
    site_index = np.array([index[s] for s in ids], dtype=int)[inverse] if len(log) else np.zeros(0, int)
    gnomons = [s.gnomon for s in campaign.sites]
    has = np.array([g is not None for g in gnomons], bool)
    height = np.array([g.height_m if g is not None else np.nan for g in gnomons], float)
    height_sigma = np.array([g.height_sigma_m if g is not None else DEFAULT_HEIGHT_SIGMA_M for g in gnomons], float)
    shadow_sigma = np.array([g.shadow_sigma_m if g is not None else DEFAULT_SHADOW_SIGMA_M for g in gnomons], float)
    site_edge = np.array([g.edge if g is not None else "umbra" for g in gnomons], dtype=object)
    row_height = np.asarray(log.gnomon_m, float)
    ok = has[site_index] | np.isfinite(row_height) | (np.asarray(log.form) == "angle")
    problems = tuple(
        RowProblem(
            str(log.file[k]), int(log.row[k]), "gnomon_m",
            f"site '{log.site[k]}' has no [site.gnomon] in the campaign file; give gnomon_m in the log or add it",
        )
        for k in np.flatnonzero(~ok)
    )
    row_edge = np.asarray(log.edge, dtype=object)
    given = (np.not_equal(row_edge, None) & np.not_equal(row_edge, "")) if len(log) else np.zeros(0, bool)
    return ShadowInstruments(
        ok=ok,
        site_index=site_index,
        gnomon_m=np.where(np.isfinite(row_height), row_height, height[site_index]),
        gnomon_sigma_m=height_sigma[site_index],
        shadow_sigma_m=shadow_sigma[site_index],
        edge=np.where(given, row_edge, site_edge[site_index]) if len(log) else np.zeros(0, dtype=object),
        problems=problems,
        angle=angle_instruments(campaign, log, site_index),
    )


def read_shadow_logs(
    campaign: Campaign, paths: Iterable[str | os.PathLike[str]] | None = None
) -> ShadowLog:
    """Read shadow logs: the good rows and a problem for each bad one.

    Parameters
    ----------
    campaign : Campaign
        Gives the known sites, their time zones and the default files.
    paths : path-like or iterable of path-like, optional
        Files to read instead of the campaign's ``[logs] shadows``.

    Returns
    -------
    ShadowLog
        Never raises on bad content: problems are in ``problems``.

    Notes
    -----
    Columns: ``site``, ``time_utc`` or ``time_local``, exactly one of
    ``shadow_m``/``shadow_cm``/``shadow_mm``; optional
    ``gnomon_m``/``gnomon_cm``/``gnomon_mm``, ``edge``, ``temperature_c``,
    ``pressure_hpa``, ``observer``, ``note``.
    """
    dtypes = dict(COMMON_DTYPES, file=object)  # a file's name and a column's: one shared text, not a copy a row
    dtypes.update(
        shadow_m=float,
        shadow_column=object,
        gnomon_m=float,
        edge=object,
        temperature_c=float,
        pressure_hpa=float,
        observer=object,
        note=object,
        form="<U6",
        timed=bool,
        altitude_deg=float,
        angle_column="<U19",
        limb=object,
        angle_sigma_deg=float,
        tip_x_m=float,
        tip_y_m=float,
    )
    columns, problems, rows_read, ignored, notes = read_columns(
        campaign, "shadows", paths, LOG_SLOTS, _parse_shadow_row, _fast_shadow_columns, dtypes
    )
    keep, short = short_traces(columns["file"], columns["row"], columns["site"], columns["time_utc"],
                               columns["timed"], columns["form"])
    if short:
        columns = {name: values[keep] for name, values in columns.items()}
        problems = sorted(list(problems) + short, key=lambda p: (p.file, p.row or 0))
    columns, problems = without_refused_rows(campaign, columns, problems)
    return ShadowLog(
        **columns,
        problems=tuple(problems),
        rows_read=rows_read,
        ignored_columns=ignored,
        notes=notes,
    )


def shadow_readings(campaign: Campaign, log: ShadowLog) -> tuple[ShadowReadings, list[RowProblem]]:
    """The good rows of a :class:`~firstrung.methods.shadows.log.ShadowLog` with the campaign's defaults filled in.

    Rows of a site without a gnomon and without ``gnomon_m`` in the log cannot
    be checked against the Sun; each becomes a problem.

    >>> from firstrung.campaign import parse_campaign
    >>> from firstrung.methods.shadows.log import ShadowLog
    >>> c = parse_campaign('[[site]]\\nid = "a"\\nlatitude_deg = 45.0\\nlongitude_deg = 7.0\\n'
    ...                    '[site.gnomon]\\nheight_m = 1.0\\n')
    >>> empty = ShadowLog(*[np.array([])] * 13)
    >>> len(shadow_readings(c, empty)[0])
    0
    """
    inst = shadow_instruments(campaign, log)
    ok, site_index, height, edge = inst.ok, inst.site_index, inst.gnomon_m, inst.edge
    height_sigma, shadow_sigma, problems = inst.gnomon_sigma_m, inst.shadow_sigma_m, list(inst.problems)
    readings = ShadowReadings(
        file=shared_texts(np.asarray(log.file)[ok]),
        row=np.asarray(log.row, dtype=np.int64)[ok],
        site_index=site_index[ok],
        time_utc=np.asarray(log.time_utc, dtype="datetime64[ms]")[ok],
        time_column=shared_texts(np.asarray(log.time_column)[ok]),
        shadow_m=np.where(np.asarray(log.form) == "trace", np.hypot(log.tip_x_m, log.tip_y_m), log.shadow_m)[ok],
        shadow_column=shared_texts(np.asarray(log.shadow_column)[ok]),
        gnomon_m=height[ok],
        edge=edge[ok],
        shadow_sigma_m=shadow_sigma[ok],
        gnomon_sigma_m=height_sigma[ok],
        temperature_c=np.asarray(log.temperature_c, float)[ok],
        pressure_hpa=np.asarray(log.pressure_hpa, float)[ok],
        observer=np.asarray(log.observer, dtype=object)[ok],
        **_form_columns(log, inst, ok),
    )
    return readings, problems


def _form_columns(log: ShadowLog, inst, ok) -> dict:
    """The other forms' columns of the readings; a trace's length is its tip's distance from the plumb point."""
    form = np.asarray(log.form)
    if not (form != "length").any():  # plain lengths: only whether each has a time (a date alone: noon)
        timed = np.asarray(log.timed, bool)
        return {} if timed.all() else {"timed": timed[ok]}
    columns = {name: np.asarray(values)[ok] for name, values in inst.angle.items()}
    columns.update(
        form=form[ok], timed=np.asarray(log.timed, bool)[ok], altitude_read_deg=np.asarray(log.altitude_deg, float)[ok],
        tip_x_m=np.asarray(log.tip_x_m, float)[ok], tip_y_m=np.asarray(log.tip_y_m, float)[ok],
    )
    return columns

