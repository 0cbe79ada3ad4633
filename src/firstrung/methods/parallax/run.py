"""Parallax from a campaign file: the plan of a star's epochs and the reduction of its positions.

- :func:`plan_parallax` lists dates of a range with each star's parallax displacement and
  the hours it is well placed in a dark sky at each site;
- :func:`run_parallax` reads the campaign's astrometry logs, leaves out the rows the check
  flags as errors, and fits each star's parallax, proper motion and place.

These functions read files but never print and never write.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import ComputationError, InputError, RowProblem
from firstrung.methods.parallax.reduction import ParallaxFit, fit_parallax


@dataclass(frozen=True)
class StarPlan:
    """One star's dates: parallax factors, displacement, night view, rank (None: excluded) and why."""

    star: object
    catalogue: object
    dates: np.ndarray
    f_ra: np.ndarray
    f_dec: np.ndarray
    displacement_mas: np.ndarray
    view: object
    rank: np.ndarray
    excluded: tuple[tuple[str, ...], ...]


@dataclass(frozen=True)
class ParallaxPlan:
    campaign: Campaign
    first_date: str
    last_date: str
    step_days: int
    stars: tuple[StarPlan, ...]


def chosen_stars(campaign: Campaign, star_id: str | None):
    if not campaign.stars:
        raise InputError("no [[star]] in the campaign file: name a target (id, name, ra_deg, dec_deg)",
                         file=str(campaign.path) if campaign.path else None)
    if star_id is None:
        return campaign.stars
    star = campaign.star_matching(star_id)
    if star is None:
        raise InputError(f"--star: unknown star {star_id!r} (known: {', '.join(s.id for s in campaign.stars)})")
    return (star,)


def plan_parallax(campaign: Campaign, first_date: str, last_date: str, *, step_days: int = 7,
                  star_id: str | None = None) -> ParallaxPlan:
    """Every ``step_days`` from ``first_date`` to ``last_date``: each star's parallax displacement
    (for its catalogue parallax) and the dark hours it stands well placed at each site; dates
    ranked by displacement among those that some site can use (all, for a campaign without sites)."""
    from firstrung.ephemeris.stars import parallax_factors
    from firstrung.methods.parallax.prediction import dark_hours_up
    from firstrung.star_catalogue import campaign_star_entry

    dates = np.arange(np.datetime64(first_date, "D"), np.datetime64(last_date, "D") + 1, step_days)
    out = []
    for star in chosen_stars(campaign, star_id):
        entry = campaign_star_entry(star)
        f_ra, f_dec = parallax_factors(star.ra_deg, star.dec_deg, dates.astype("datetime64[ms]"))
        parallax = entry.parallax_mas if entry is not None else 1.0
        displacement = parallax * np.hypot(f_ra, f_dec)
        view = dark_hours_up(star.ra_deg, star.dec_deg, dates, campaign.sites)
        usable = view.dark_hours.max(axis=1) >= 1.0 if campaign.sites else np.ones(dates.size, bool)
        excluded = tuple(() if ok else ("the star is not above 30 deg for an hour of dark sky at any site",)
                         for ok in usable)
        rank = np.full(dates.size, -1)
        order = [k for k in np.argsort(-displacement, kind="stable") if usable[k]]
        rank[order] = np.arange(1, len(order) + 1)
        out.append(StarPlan(star, entry, dates, f_ra, f_dec, displacement, view, rank, excluded))
    return ParallaxPlan(campaign, first_date, last_date, step_days, tuple(out))


@dataclass(frozen=True)
class StarParallax:
    """One star's fit and the rows it rests on."""

    star: object
    catalogue: object
    fit: ParallaxFit
    rows: np.ndarray  # indices into the run's log


@dataclass(frozen=True)
class ParallaxRun:
    campaign: Campaign
    stars: tuple[StarParallax, ...]
    log: object
    problems: tuple[RowProblem, ...]
    rows_read: int
    rows_left_out_flagged: int
    notes: tuple[str, ...] = ()


def fit_star(star, log, rows, earth_au=None, years=None) -> ParallaxFit:
    """Fit one star from its rows of an astrometry log (parallax factors from DE421's Earth).

    ``earth_au`` (3, rows) and ``years``: the Earth's barycentric place and the Julian epoch of
    every row of the log, when computed once for all the stars.
    """
    from firstrung.ephemeris.stars import earth_barycentric_au, factors_from_earth, julian_year_tt

    t = np.asarray(log.time_utc[rows], dtype="datetime64[ms]")
    earth = earth_barycentric_au(t) if earth_au is None else earth_au[:, rows]
    f_ra, f_dec = factors_from_earth(star.ra_deg, star.dec_deg, earth)
    epochs = julian_year_tt(t) if years is None else years[rows]
    return fit_parallax(log.ra_deg[rows], log.dec_deg[rows], log.sigma_arcsec[rows], epochs, f_ra, f_dec)


def run_parallax(campaign_path, *, include_flagged: bool = False) -> ParallaxRun:
    """Read the campaign's astrometry logs and fit every star that has enough epochs.

    Raises
    ------
    InputError
        When no star could be fitted (the first reason given).
    """
    from firstrung.methods.parallax.log import read_astrometry_logs
    from firstrung.star_catalogue import campaign_star_entry

    campaign = read_campaign(campaign_path)
    log = read_astrometry_logs(campaign)
    rows_read, left_out = log.rows_read, 0
    if not include_flagged and len(log):
        from firstrung.flags import without_error_rows
        from firstrung.methods.parallax.check import log_flags

        log, left_out = without_error_rows(campaign, log, log_flags)
    stars, notes = [], []
    from firstrung.ephemeris.stars import earth_barycentric_au, julian_year_tt

    t = np.asarray(log.time_utc, dtype="datetime64[ms]")
    earth, years = (earth_barycentric_au(t), julian_year_tt(t)) if len(log) else (None, None)
    for star in campaign.stars:
        rows = np.flatnonzero(log.star == star.id)
        if rows.size == 0:
            continue
        try:
            fit = fit_star(star, log, rows, earth, years)
        except ComputationError as error:
            notes.append(f"{star.id}: {error}")
            continue
        stars.append(StarParallax(star, campaign_star_entry(star), fit, rows))
    if not stars:
        why = notes[0] if notes else (str(log.problems[0]) if log.problems else "no usable astrometry rows")
        raise InputError(f"no parallax could be fitted ({why})", file=str(campaign_path))
    return ParallaxRun(campaign, tuple(stars), log, tuple(log.problems), rows_read, left_out, tuple(notes))
