"""From a campaign file to a reduction: read, validate, assemble, reduce.

These functions join the readers (``campaign``, ``logs``) to the pure
methods; they read files but never print and never write.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import ComputationError, InputError, RowProblem
from firstrung.methods.shadows.inputs import ShadowReadings, baseline_inputs, site_inputs
from firstrung.methods.shadows.log import read_shadow_logs, shadow_readings
from firstrung.methods.shadows.reduction import ShadowReduction, reduce_shadows


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
    #: The network's additions: the method, each pair's radius, each site's subsolar radius.
    network: object = None  # network_model.NetworkFit
    pairs: object = None  # pairs.NetworkPairs
    subsolar: dict | None = None  # site id -> (Measured or None, reason or None)
    #: The check's flags of the log (empty with --include-flagged) and the log as read, flagged rows included:
    #: what a school whose reading was not used is told (:mod:`firstrung.methods.shadows.unused`).
    flags: tuple = ()
    log: object = None  # log.ShadowLog


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
    readings, extra = shadow_readings(campaign, log)
    problems = tuple(log.problems) + tuple(extra)
    rows_read, notes = log.rows_read, tuple(log.notes)
    whole_log = log if campaign.row_site_ids else None  # only an open network's schools read the whole log
    flags, left_out = (), 0
    if not include_flagged:
        from firstrung.flags import checks_are_shared

        # the check takes the readings made above; the log is not kept beside them (a long log's columns
        # are the largest thing a reduction holds) unless a report is to check the same log again
        shared_log = log if checks_are_shared() else None
        del log
        if rows_read >= 100_000:  # the log's columns are gone: their memory back before the check's arrays
            from firstrung.memory import release_free_memory

            release_free_memory()
        flags, readings, left_out = _without_flagged(campaign, shared_log, readings, extra, rows_read)
        del shared_log
    else:
        del log
    if len(readings) == 0:
        first = f" (first: {problems[0]})" if problems else ""
        raise InputError(f"no usable shadow readings in the campaign's logs{first}", file=str(campaign_path),
                         problems=problems)
    try:
        reduction, network = _reduce(campaign, readings)
    except ComputationError as error:
        raise ComputationError(error.message, problems=problems) from None
    from firstrung.methods.shadows.pairs import network_pairs
    from firstrung.methods.shadows.subsolar import site_subsolar

    return ShadowRun(
        campaign, reduction, problems, rows_read, len(readings), readings, left_out, notes,
        network=network, pairs=network_pairs(reduction.sites, network.flagged), subsolar=site_subsolar(reduction.sites),
        flags=flags, log=whole_log,
    )


def _without_flagged(campaign: Campaign, log, readings: ShadowReadings, extra, rows_read: int):
    """The check's flags of the readings, the readings without the rows it flags as errors, and how many
    those are: what :func:`firstrung.flags.without_error_rows` leaves of the log, made into readings.

    ``log``: the log the readings were made from, when the check is to be shared with a later one
    (:func:`firstrung.flags.checks_shared`), else None.
    """
    from firstrung.methods.shadows.check import check_shadow_log, check_shadow_rows, check_sites

    if log is not None:
        flags = tuple(check_shadow_log(campaign, log, readings=(readings, extra))[0].flags)
    else:
        flags = tuple(check_shadow_rows(check_sites(campaign), readings, diagnoses=False).flags) if len(readings) else ()
    if rows_read >= 100_000:  # the check's many small objects are gone: give their memory back
        from firstrung.memory import release_free_memory

        release_free_memory()
    from firstrung.flags import without_error_rows

    kept, left_out = without_error_rows(campaign, readings, lambda *_: flags)  # the readings take a log's place
    return flags, kept, left_out


def is_open_network(campaign: Campaign, readings: ShadowReadings) -> bool:
    """True when the network method reduces the readings: sites from the log's rows, or a campaign of one site
    (a campaign of declared sites that is left with one by its refusals says so, it is not reduced alone)."""
    return bool(campaign.row_site_ids) or len(campaign.sites) == 1


def errors_stated(campaign: Campaign, readings: ShadowReadings) -> bool:
    """True when every site with readings states its errors (a ``[site.gnomon]`` or an angle instrument; a
    site from the log's rows states none)."""
    sites, from_rows = campaign.sites, set(campaign.row_site_ids)
    return all(sites[i].id not in from_rows and (sites[i].gnomon is not None or sites[i].angle_instrument is not None)
               for i in np.unique(readings.site_index))


def _reduce(campaign: Campaign, readings: ShadowReadings):
    """The reduction and what the network method adds (the classical fit for declared sites' series)."""
    from firstrung.methods.shadows.network_model import NetworkFit

    sites, baselines = site_inputs(campaign), baseline_inputs(campaign)
    if is_open_network(campaign, readings):
        from firstrung.methods.shadows.network import reduce_network

        return reduce_network(sites, readings, baselines, errors_stated=errors_stated(campaign, readings))
    from firstrung.methods.shadows.untimed import at_apparent_noon

    reduction = reduce_shadows(sites, at_apparent_noon(sites, readings)[0], baselines)
    return reduction, NetworkFit("network", False, None, reduction.outliers, {})
