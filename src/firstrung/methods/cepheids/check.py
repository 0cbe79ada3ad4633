"""Checks of light-curve logs.

- ``wrong-band`` (error): a magnitude in another band than the star's other magnitudes, or an
  observer's magnitudes (three or more) all offset from the light curve of the observer with the most (a band mixed up, or another
  comparison star); field ``offset_mag`` for the latter;
- ``period-alias`` (warning, on the star's first row: it concerns its whole light curve): the periodogram's second peak is a
  one-day alias of its highest, nearly as high: nightly sampling cannot tell them apart; or the
  period found is a one-day alias of the star's known ``period_days``;
- ``local-time-as-utc`` (error): local clock time typed as UTC (see :mod:`firstrung.star_checks`).
"""

from __future__ import annotations

import numpy as np

from firstrung.errors import ComputationError
from firstrung.flags import Flag, KindCheck, problem_flags

#: An observer's mean offset from the light curve beyond this is another band or comparison star [mag]
#: (Cepheid colours: B-V about 0.6-0.8, V-I about 0.8; common practice).
BAND_OFFSET_MAG = 0.25
#: A second peak at least this fraction of the highest is a competing alias [1].
ALIAS_POWER_RATIO = 0.8
#: An alias whose light curve's chi-square is within this of the best's competes with it [1].
ALIAS_CHI2_MARGIN = 9.0
#: Two frequencies this close to one cycle per day apart are one-day aliases [1/d].
ALIAS_TOLERANCE_PER_D = 0.03


def _alias_distance(f1, f2):
    """How far two frequencies are from being one-day aliases: f1 - f2 = +/-1 or f1 + f2 = 1 (the
    mirror about half a cycle per day) [1/d].

    >>> float(_alias_distance(0.8138, 0.1862)), round(float(_alias_distance(1.1862, 0.1862)), 6)
    (0.0, 0.0)
    """
    f1 = np.asarray(f1, dtype=float)
    return np.minimum(np.abs(np.abs(f1 - f2) - 1.0), np.abs(f1 + f2 - 1.0))


def _alias_flags(star, log, rows) -> list[Flag]:
    from firstrung.methods.cepheids.log import julian_date_utc
    from firstrung.methods.cepheids.reduction import fit_light_curve

    try:
        f, _, _, _, chi2, _, scale, power, _, freqs, pgram, harmonics, origin = fit_light_curve(
            julian_date_utc(log.time_utc[rows]), log.magnitude[rows], log.magnitude_sigma[rows])
    except ComputationError:
        return []
    first, first_row = str(log.file[rows[0]]), int(log.row[rows[0]])  # a finding about the whole light curve
    out = []
    t = julian_date_utc(log.time_utc[rows])
    width = 2.0 / max(float(np.ptp(t)), 1e-9)
    away = np.abs(freqs - f) > width
    is_peak = np.r_[False, (pgram[1:-1] > pgram[:-2]) & (pgram[1:-1] >= pgram[2:]), False]
    candidates = np.flatnonzero(away & is_peak & (_alias_distance(freqs, f) < ALIAS_TOLERANCE_PER_D))
    if candidates.size:
        from firstrung.methods.cepheids.reduction import refined_frequency

        k = candidates[np.argmax(pgram[candidates])]
        w = 1.0 / np.asarray(log.magnitude_sigma[rows], dtype=float) ** 2
        f_alias, chi2_alias = refined_frequency(t - origin, np.asarray(log.magnitude[rows], dtype=float), w,
                                                float(freqs[k]), float(freqs[1] - freqs[0]), harmonics)
        # the whole light curve (its harmonics too) at the alias, against the best: within 9 (3 sigma) of chi2
        # in the stated errors' units, the data cannot tell them apart (common practice)
        if pgram[k] >= ALIAS_POWER_RATIO * power and chi2_alias - chi2 < ALIAS_CHI2_MARGIN * scale**2:
            out.append(Flag(first, first_row, None, "period-alias", "warning",
                            f"{star.id}: the period {1 / f:.4f} d and its one-day alias {1 / f_alias:.4f} d fit "
                            f"almost equally well (chi-square {chi2:.1f} and {chi2_alias:.1f}): nightly sampling "
                            "cannot tell them apart",
                            "add magnitudes from another longitude or at other hours of the night", "",
                            {"period_days": round(1 / f, 5), "alias_period_days": round(1 / f_alias, 5)}))
    if star.period_days and abs(1 / f - star.period_days) > 0.05 * star.period_days and \
            _alias_distance(1 / star.period_days, f) < ALIAS_TOLERANCE_PER_D:
        out.append(Flag(first, first_row, None, "period-alias", "warning",
                        f"{star.id}: the period found, {1 / f:.4f} d, is a one-day alias of its known period "
                        f"{star.period_days:g} d", "add magnitudes at other hours of the night, or from another site",
                        "", {"period_days": round(1 / f, 5), "alias_period_days": star.period_days}))
    return out


def _band_flags(star, log, rows) -> list[Flag]:
    from firstrung.methods.cepheids.log import julian_date_utc, main_band
    from firstrung.methods.cepheids.reduction import design_matrix, fit_light_curve

    flags = []
    band = main_band(log.band[rows])
    for i in rows[log.band[rows] != band]:
        flags.append(Flag(str(log.file[i]), int(log.row[i]), str(log.site[i]) or None, "wrong-band", "error",
                          f"{star.id}: a magnitude in band {log.band[i]} among magnitudes in {band}",
                          f"reduce it apart, or correct its band if it was measured in {band}", str(log.observer[i]),
                          {"band": str(log.band[i]), "expected_band": band}))
    rows = rows[log.band[rows] == band]
    observers = np.asarray(log.observer[rows], dtype=str)
    names, counts = np.unique(observers, return_counts=True)
    if names.size < 2:
        return flags
    # the reference curve: the observer with the most magnitudes (all, when none has enough for a curve)
    main = names[np.argmax(counts)]
    reference = rows[observers == main] if counts.max() >= 10 else rows
    try:
        f, _, coef, *rest = fit_light_curve(julian_date_utc(log.time_utc[reference]), log.magnitude[reference],
                                            log.magnitude_sigma[reference])
    except ComputationError:
        return flags
    origin = rest[-1]
    for name in names[names != main]:
        mine = rows[observers == name]
        if mine.size < 3:
            continue
        t = julian_date_utc(log.time_utc[mine]) - origin
        offset = log.magnitude[mine] - design_matrix(t, f, (coef.size - 1) // 2) @ coef
        mean = float(np.mean(offset))
        if abs(mean) > BAND_OFFSET_MAG and abs(mean) > 5 * np.std(offset, ddof=1) / np.sqrt(mine.size):
            for i in mine:
                flags.append(Flag(
                    str(log.file[i]), int(log.row[i]), str(log.site[i]) or None, "wrong-band", "error",
                    f"{star.id}: {name or 'this observer'}'s magnitudes sit {abs(mean):.2f} mag "
                    f"{'fainter' if mean > 0 else 'brighter'} than {main or 'the main observer'}'s light curve "
                    f"in {band}: another band, or another comparison star?",
                    f"ask {name or 'the observer'} which filter and comparison star were used", name,
                    {"offset_mag": round(mean, 3)}))
    return flags


def log_flags(campaign, log) -> list[Flag]:
    """Flags for magnitudes in another band, one-day period aliases and local time typed as UTC."""
    from firstrung.star_checks import local_time_flags

    flags: list[Flag] = []
    if len(log) == 0:
        return flags
    stars = {s.id: s for s in campaign.stars}
    for sid in np.unique(np.asarray(log.star, dtype=str)):
        rows = np.flatnonzero(log.star == sid)
        flags += _band_flags(stars[sid], log, rows)
        from firstrung.methods.cepheids.log import main_band

        flags += _alias_flags(stars[sid], log, rows[log.band[rows] == main_band(log.band[rows])])
    return flags + local_time_flags(campaign, log, "magnitude")


def check_campaign(campaign) -> KindCheck:
    """Read the campaign's light-curve logs and check them: flags and refused rows."""
    from firstrung.methods.cepheids.log import read_light_curve_logs

    log = read_light_curve_logs(campaign)
    return KindCheck(tuple(log_flags(campaign, log)) + tuple(problem_flags(tuple(log.problems))))
