"""From a campaign file to a reduction: read, validate, assemble, reduce.

These functions join the readers (``campaign``, ``logs``) to the pure
methods; they read files but never print and never write.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..campaign import DEFAULT_HEIGHT_SIGMA_M, DEFAULT_SHADOW_SIGMA_M, Campaign, read_campaign
from ..errors import InputError, RowProblem
from ..logs import ShadowLog, read_shadow_logs
from ..methods.shadows import (
    BaselineInput,
    ShadowReadings,
    ShadowReduction,
    SiteInput,
    reduce_shadows,
)


@dataclass(frozen=True)
class ShadowRun:
    """A shadow reduction with what was read and what was refused."""

    campaign: Campaign
    reduction: ShadowReduction
    problems: tuple[RowProblem, ...]
    rows_read: int
    rows_accepted: int
    readings: ShadowReadings | None = None
    rows_left_out_flagged: int = 0
    notes: tuple[str, ...] = ()


def site_inputs(campaign: Campaign) -> tuple[SiteInput, ...]:
    """The campaign's sites as the methods take them."""
    return tuple(
        SiteInput(s.id, s.name, s.latitude_deg, s.longitude_deg, s.elevation_m) for s in campaign.sites
    )


def baseline_inputs(campaign: Campaign) -> tuple[BaselineInput, ...]:
    """The campaign's surveyed baselines, by site index."""
    index = {s.id: i for i, s in enumerate(campaign.sites)}
    return tuple(
        BaselineInput(index[b.sites[0]], index[b.sites[1]], b.distance_km, b.sigma_km, b.bearing_deg)
        for b in campaign.baselines
    )


def shadow_readings(campaign: Campaign, log: ShadowLog) -> tuple[ShadowReadings, list[RowProblem]]:
    """Fill in each row's gnomon, edge and errors from the campaign; refuse rows that lack a gnomon."""
    index = {s.id: i for i, s in enumerate(campaign.sites)}
    problems: list[RowProblem] = []
    n = len(log)
    site_index = np.array([index[s] for s in log.site], dtype=int) if n else np.zeros(0, int)
    gnomons = [campaign.sites[i].gnomon for i in site_index]
    has_gnomon = np.array([g is not None for g in gnomons], bool)
    row_height = np.asarray(log.gnomon_m, float)
    ok = has_gnomon | np.isfinite(row_height)
    for k in np.flatnonzero(~ok):
        problems.append(
            RowProblem(
                str(log.file[k]), int(log.row[k]), "gnomon_m",
                f"site '{log.site[k]}' has no [site.gnomon] in the campaign file; give gnomon_m in the log or add it",
            )
        )
    default_height = np.array([g.height_m if g is not None else np.nan for g in gnomons], float)
    height = np.where(np.isfinite(row_height), row_height, default_height)
    height_sigma = np.array([g.height_sigma_m if g is not None else DEFAULT_HEIGHT_SIGMA_M for g in gnomons], float)
    shadow_sigma = np.array([g.shadow_sigma_m if g is not None else DEFAULT_SHADOW_SIGMA_M for g in gnomons], float)
    default_edge = np.array([g.edge if g is not None else "umbra" for g in gnomons], dtype=object)
    row_edge = np.asarray(log.edge, dtype=object)
    edge = np.where(np.array([e is not None and e != "" for e in row_edge], bool), row_edge, default_edge)
    readings = ShadowReadings(
        site_index=site_index[ok],
        time_utc=np.asarray(log.time_utc)[ok],
        shadow_m=np.asarray(log.shadow_m, float)[ok],
        gnomon_m=height[ok],
        edge=edge[ok] if n else np.zeros(0, dtype=object),
        shadow_sigma_m=shadow_sigma[ok],
        gnomon_sigma_m=height_sigma[ok],
        temperature_c=np.asarray(log.temperature_c, float)[ok],
        pressure_hpa=np.asarray(log.pressure_hpa, float)[ok],
        row_label=np.array([f"{f}:{r}" for f, r in zip(log.file, log.row, strict=True)], dtype=object)[ok],
    )
    return readings, problems


def run_shadows(campaign_path, *, include_flagged: bool = False) -> ShadowRun:
    """Read the campaign and its shadow logs and reduce them to the Earth's radius.

    Rows that ``firstrung check`` flags as errors (blunders) are left out and
    counted, unless ``include_flagged``.

    Raises
    ------
    InputError
        The campaign file is unreadable, or no log file could be read at all.
    ComputationError
        Too few usable sites.
    """
    campaign = read_campaign(campaign_path)
    if not campaign.logs.get("shadows"):
        raise InputError("the campaign file lists no shadow logs ([logs] shadows = [...])", file=str(campaign_path))
    log = read_shadow_logs(campaign)
    left_out = 0
    if not include_flagged:
        from ..checks import without_error_rows

        log, left_out = without_error_rows(campaign, log)
    readings, extra = shadow_readings(campaign, log)
    problems = tuple(log.problems) + tuple(extra)
    if len(readings) == 0:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no usable shadow readings in the campaign's logs{first}", file=str(campaign_path))
    reduction = reduce_shadows(site_inputs(campaign), readings, baseline_inputs(campaign))
    return ShadowRun(
        campaign, reduction, problems, log.rows_read, len(readings), readings, left_out, tuple(log.notes)
    )
