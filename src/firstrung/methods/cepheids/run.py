"""Cepheids from a campaign file: the nights that cover the phase, and the reduction of the magnitudes.

- :func:`plan_cepheids` chooses, among the nights each star is well placed in a dark sky, the
  ones that spread its phase most evenly for its period;
- :func:`run_cepheids` reads the campaign's light-curve logs, leaves out the rows the check flags
  as errors, and gives each star's period, mean magnitude and distance.

These functions read files but never print and never write.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import ComputationError, InputError, RowProblem
from firstrung.methods.cepheids.log import julian_date_utc, main_band
from firstrung.methods.cepheids.reduction import CepheidFit, cepheid_distance
from firstrung.methods.cepheids.relations import DEFAULT_RELATION, relation, relation_for_band


@dataclass(frozen=True)
class StarNights:
    star: object
    period_days: float
    dates: np.ndarray
    time_utc: np.ndarray
    phase: np.ndarray
    rank: np.ndarray
    excluded: tuple[tuple[str, ...], ...]
    largest_gap: float


@dataclass(frozen=True)
class CepheidPlan:
    campaign: Campaign
    first_date: str
    last_date: str
    nights: int
    stars: tuple[StarNights, ...]


def spread_phases(phase: np.ndarray, count: int) -> np.ndarray:
    """Indices of ``count`` phases chosen one by one, each as far as can be from those chosen (the
    first is the earliest): an even cover of the cycle.

    >>> spread_phases(np.array([0.0, 0.05, 0.5, 0.52, 0.25, 0.8]), 4).tolist()
    [0, 2, 4, 5]
    """
    phase = np.asarray(phase, dtype=float)
    if phase.size == 0 or count <= 0:
        return np.zeros(0, dtype=int)
    chosen = [0]
    gap = np.abs((phase - phase[0] + 0.5) % 1.0 - 0.5)
    for _ in range(min(count, phase.size) - 1):
        gap[chosen] = -1.0
        k = int(np.argmax(gap))
        if gap[k] < 0:
            break
        chosen.append(k)
        gap = np.minimum(gap, np.abs((phase - phase[k] + 0.5) % 1.0 - 0.5))
    return np.array(sorted(chosen), dtype=int)


def plan_cepheids(campaign: Campaign, first_date: str, last_date: str, *, nights: int = 12,
                  period_days: float | None = None, star_id: str | None = None) -> CepheidPlan:
    """The nights of a range that cover each star's phase most evenly for its period.

    The period is ``period_days``, else the star's ``period_days`` in the campaign file.
    """
    from firstrung.methods.parallax.prediction import dark_hours_up
    from firstrung.methods.parallax.run import chosen_stars

    dates = np.arange(np.datetime64(first_date, "D"), np.datetime64(last_date, "D") + 1)
    out = []
    for star in chosen_stars(campaign, star_id):
        period = period_days or star.period_days
        if period is None:
            raise InputError(f"{star.id}: no period to plan for; give --period-days or period_days in its [[star]]")
        if campaign.sites:
            view = dark_hours_up(star.ra_deg, star.dec_deg, dates, campaign.sites)
            usable = view.dark_hours.max(axis=1) >= 1.0
            best = np.argmax(view.dark_hours, axis=1)
            t = view.best_time_utc[np.arange(dates.size), best]
        else:
            usable = np.ones(dates.size, bool)
            t = dates.astype("datetime64[ms]")
        jd = julian_date_utc(np.where(np.isnat(t), dates.astype("datetime64[ms]"), t))
        phase = ((jd - jd[0]) / period) % 1.0
        rank = np.full(dates.size, -1)
        rows = np.flatnonzero(usable)
        picked = rows[spread_phases(phase[rows], nights)]
        rank[picked] = np.arange(1, picked.size + 1)
        excluded = tuple(() if rank[k] > 0 else
                         (("the star is not above 30 deg for an hour of dark sky at any site",) if not usable[k]
                          else ("its phase is already covered by a chosen night",)) for k in range(dates.size))
        chosen = np.sort(phase[picked])
        gaps = np.diff(np.concatenate([chosen, chosen[:1] + 1.0])) if chosen.size else np.array([1.0])
        out.append(StarNights(star, period, dates, t, phase, rank, excluded, float(gaps.max())))
    return CepheidPlan(campaign, first_date, last_date, nights, tuple(out))


@dataclass(frozen=True)
class StarCepheid:
    star: object
    band: str
    fit: CepheidFit
    rows: np.ndarray


@dataclass(frozen=True)
class CepheidRun:
    campaign: Campaign
    stars: tuple[StarCepheid, ...]
    log: object
    problems: tuple[RowProblem, ...]
    rows_read: int
    rows_left_out_flagged: int
    notes: tuple[str, ...] = ()


def fit_star(star, log, rows, relation_name: str | None):
    """One star's fit from its rows in its main band (the relation: the one named, else the band's first)."""
    band = main_band(log.band[rows])
    rows = rows[log.band[rows] == band]
    chosen = relation(relation_name) if relation_name else relation_for_band(band)
    if chosen is None:
        raise InputError(f"{star.id}: no period-luminosity relation for band {band!r} (relations in V, I, K; "
                         f"default {DEFAULT_RELATION})")
    if chosen.band != band:
        raise InputError(f"--relation: {chosen.name} is for band {chosen.band}, but {star.id}'s magnitudes are in {band}")
    fit = cepheid_distance(julian_date_utc(log.time_utc[rows]), log.magnitude[rows], log.magnitude_sigma[rows],
                           chosen, extinction_mag=star.extinction_mag or 0.0,
                           extinction_sigma_mag=star.extinction_sigma_mag or 0.0)
    return band, fit, rows


def run_cepheids(campaign_path, *, relation_name: str | None = None, include_flagged: bool = False) -> CepheidRun:
    """Read the campaign's light-curve logs and fit every star that has enough magnitudes."""
    from firstrung.methods.cepheids.log import read_light_curve_logs

    if relation_name is not None:
        relation(relation_name)  # an unknown name is refused before any reading
    campaign = read_campaign(campaign_path)
    log = read_light_curve_logs(campaign)
    rows_read, left_out = log.rows_read, 0
    if not include_flagged and len(log):
        from firstrung.flags import without_error_rows
        from firstrung.methods.cepheids.check import log_flags

        log, left_out = without_error_rows(campaign, log, log_flags)
    stars, notes = [], []
    for star in campaign.stars:
        rows = np.flatnonzero(log.star == star.id)
        if rows.size == 0:
            continue
        try:
            band, fit, used = fit_star(star, log, rows, relation_name)
        except ComputationError as error:
            notes.append(f"{star.id}: {error}")
            continue
        stars.append(StarCepheid(star, band, fit, used))
    if not stars:
        why = notes[0] if notes else (str(log.problems[0]) if log.problems else "no usable magnitudes")
        raise InputError(f"no Cepheid could be reduced ({why})", file=str(campaign_path))
    return CepheidRun(campaign, tuple(stars), log, tuple(log.problems), rows_read, left_out, tuple(notes))
