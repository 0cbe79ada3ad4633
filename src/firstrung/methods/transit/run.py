"""Transits from a campaign file: the plan, its calendar, and the reduction of the timings.

- :func:`plan_transits` lists the transits of a range with their geocentric
  contacts and each site's contacts, the Sun's altitude and the position angle;
  :func:`transits_ics` exports them as an RFC 5545 calendar.
- :func:`run_transit` reads the campaign's transit logs, leaves out the rows the
  check flags as errors, and fits the solar parallax.

These functions read files but never print and never write.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import InputError, RowProblem
from firstrung.methods.transit.prediction import (
    CONTACTS,
    SECONDS_PER_DAY,
    SiteContacts,
    Transits,
    contacts_at_sites,
    inferior_planet_transits,
    predicted_contacts_tt_jd,
)
from firstrung.safety import TRANSIT_CAUTION

if TYPE_CHECKING:  # the reduction is imported when a reduction runs, not for a plan
    from firstrung.methods.transit.reduction import TransitReduction

#: Below this altitude of the Sun's centre a contact is hard to time (haze, refraction's shimmer) [deg].
LOW_SUN_DEG = 10.0
#: Step of the parallax scale for the rate of each contact with it [1].
_RATE_STEP = 0.01


@dataclass(frozen=True)
class TransitPlan:
    """The transits of a range as a campaign sees them."""

    campaign: Campaign
    first_date: str
    last_date: str
    transits: Transits
    sites: tuple[SiteContacts, ...]  # one per transit


def plan_transits(campaign: Campaign, first_date: str, last_date: str) -> TransitPlan:
    """Every transit from ``first_date`` to ``last_date`` (UTC dates, included) and each site's view."""
    first = np.datetime64(first_date, "D").astype("datetime64[us]")
    last = (np.datetime64(last_date, "D") + np.timedelta64(1, "D")).astype("datetime64[us]") - np.timedelta64(1, "s")
    transits = inferior_planet_transits(first, last)
    lat = [s.latitude_deg for s in campaign.sites]
    lon = [s.longitude_deg for s in campaign.sites]
    elev = [s.elevation_m for s in campaign.sites]
    per = tuple(contacts_at_sites(transits, k, lat, lon, elev) for k in range(len(transits))) if lat else ()
    return TransitPlan(campaign, first_date, last_date, transits, per)


def transits_ics(plan: TransitPlan) -> bytes:
    """The plan's transits as an RFC 5545 calendar, each site's contacts and the solar caution in it."""
    from firstrung.calendar_export import CalendarEvent, events_to_ics
    from firstrung.jsonout import time_z

    events = []
    tr = plan.transits
    for k in range(len(tr)):
        start = tr.contacts_utc["C1"][k]
        end = tr.contacts_utc["C4"][k]
        lines = [f"Transit of {tr.planet[k].capitalize()}, greatest {time_z(tr.greatest_utc[k])} (geocentric)."]
        lines += [f"{c} {time_z(tr.contacts_utc[c][k])}" for c in CONTACTS if not np.isnat(tr.contacts_utc[c][k])]
        for j, s in enumerate(plan.campaign.sites):
            view = plan.sites[k]
            parts = []
            for c in CONTACTS:
                t = view.time_utc[c][j]
                if not np.isnat(t):
                    alt = view.sun_altitude_deg[c][j]
                    parts.append(f"{c} {time_z(t)} (Sun {alt:+.0f} deg{', below the horizon' if alt < 0 else ''})")
            lines.append(f"{s.id}: " + "; ".join(parts))
        lines.append(TRANSIT_CAUTION)
        stamp = str(np.datetime64(tr.greatest_utc[k], "s")).replace("-", "").replace(":", "")
        events.append(CalendarEvent(
            uid=f"transit-{tr.planet[k]}-{stamp}Z@firstrung", start_utc=start, end_utc=end,
            summary=f"Transit of {tr.planet[k].capitalize()}: time C1-C4 (solar filter or projection only)",
            description="\n".join(lines)))
    return events_to_ics(events, f"{plan.campaign.name}: transits")


@dataclass(frozen=True)
class TransitRun:
    """A campaign's transit reduction and what it rested on."""

    campaign: Campaign
    transits: Transits
    transit_of_row: np.ndarray
    reduction: TransitReduction
    log: object
    problems: tuple[RowProblem, ...]
    rows_read: int
    rows_left_out_flagged: int
    black_drop_sigma_s: dict
    clocks_fitted: bool


def run_transit(campaign_path, *, include_flagged: bool = False, black_drop_sigma_s: float | None = None,
                fit_clocks: bool = True) -> TransitRun:
    """Read the campaign's transit logs and fit the solar parallax.

    Parameters
    ----------
    campaign_path : path-like
    include_flagged : bool
        Keep the rows the check flags as errors.
    black_drop_sigma_s : float, optional
        Scatter of the black drop on internal contacts [s]; default per planet.
    fit_clocks : bool
        A free clock offset per site that timed two or more different contacts.
    """
    from firstrung.methods.transit.log import read_transit_logs
    from firstrung.methods.transit.reduction import (
        DEFAULT_BLACK_DROP_SIGMA_S,
        DEFAULT_TIME_SIGMA_S,
        reduce_transit_contacts,
    )
    from firstrung.methods.transit.rows import row_predictions

    campaign = read_campaign(campaign_path)
    log = read_transit_logs(campaign)
    rows_read = log.rows_read
    left_out = 0
    if not include_flagged and len(log):
        from firstrung.flags import without_error_rows
        from firstrung.methods.transit.check import log_flags

        log, left_out = without_error_rows(campaign, log, log_flags)
    problems = tuple(log.problems)
    if len(log) == 0:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no usable transit timings in the campaign's logs{first}", file=str(campaign_path))
    p = row_predictions(campaign, log)
    keep = p.transit >= 0
    transit, contact, itrs = p.transit[keep], p.contact[keep], p.itrs_km[:, keep]
    origin = float(np.nanmin(p.observed_tt_jd))
    observed_s = (p.observed_tt_jd[keep] - origin) * SECONDS_PER_DAY
    sigma = np.where(np.isfinite(log.time_sigma_s[keep]), log.time_sigma_s[keep], DEFAULT_TIME_SIGMA_S)
    drops = {name: (black_drop_sigma_s if black_drop_sigma_s is not None else DEFAULT_BLACK_DROP_SIGMA_S[name])
             for name in set(p.transits.planet)}
    drop = np.array([drops[p.transits.planet[k]] for k in transit], dtype=float)

    def predict(scale: float):
        a = predicted_contacts_tt_jd(p.transits, transit, contact, itrs, scale)
        b = predicted_contacts_tt_jd(p.transits, transit, contact, itrs, scale + _RATE_STEP)
        return (a - origin) * SECONDS_PER_DAY, (b - a) * SECONDS_PER_DAY / _RATE_STEP

    site = np.asarray(log.site[keep], dtype=object)
    # one black drop per instrument: the site and its observer
    instrument = np.array([f"{s}\x1f{o}" for s, o in zip(log.site[keep], log.observer[keep], strict=True)], dtype=object)
    reduction = reduce_transit_contacts(predict, observed_s, transit, contact, site, sigma, drop, fit_clocks=fit_clocks,
                                        instrument=instrument)
    return TransitRun(campaign, p.transits, p.transit, reduction, log.select(keep), problems, rows_read, left_out,
                      drops, fit_clocks)
