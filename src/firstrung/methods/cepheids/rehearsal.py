"""Rehearsal light-curve logs: a Cepheid's magnitudes night after night, from a light curve of
stated period, mean magnitude and amplitude, plus a seeded Gaussian error (same campaign, range
and seed, same rows).

The shape is a typical Cepheid's of a five-day period in V: Fourier amplitude ratios R21 = 0.40,
R31 = 0.20 and phase differences phi21 = 4.4, phi31 = 2.6 rad (Simon & Lee 1981, ApJ 248, 291,
their figures for P near 5 d; values read from memory), scaled to the stated peak-to-peak range.
Defaults are delta Cephei's: period 5.366 d, mean V 3.954, range 3.48-4.37 in V (GCVS, from
memory), maximum light at JD 2436075.445 (GCVS, from memory).
"""

from __future__ import annotations

import numpy as np

LOG_COLUMNS = ("site", "star", "time_utc", "magnitude", "magnitude_sigma", "band", "observer")
#: delta Cephei (GCVS and the DDO Cepheid database; from memory).
DELTA_CEP_PERIOD_D = 5.366
DELTA_CEP_MEAN_V = 3.954
DELTA_CEP_RANGE_V = 0.89
DELTA_CEP_MAXIMUM_JD = 2436075.445
_AMPLITUDES = np.array([1.0, 0.40, 0.20])
_PHASES = np.array([0.0, 4.4, 2.6])
#: Julian date of the Unix epoch, 1970-01-01T00:00 UTC [d].
UNIX_EPOCH_JD = 2440587.5


def light_curve_mag(phase, mean_mag: float, range_mag: float) -> np.ndarray:
    """The template's magnitude at phases (0 = maximum light) with the stated mean and range [mag].

    >>> m = light_curve_mag(np.linspace(0, 1, 1001), 3.954, 0.89)
    >>> round(float(m.max() - m.min()), 3), bool(m[0] < 3.954)
    (0.89, True)
    """
    phase = np.asarray(phase, dtype=float)
    k = np.arange(1, 4)
    fine = np.linspace(0.0, 1.0, 2001)

    def shape(p):  # in magnitudes: brighter is smaller
        return -(_AMPLITUDES * np.cos(2 * np.pi * k * np.asarray(p)[..., None] + _PHASES)).sum(axis=-1)

    s = shape(fine)
    zero = fine[np.argmin(s)]  # the template's own maximum light
    s_phase = shape(phase + zero)
    return mean_mag + (s_phase - s.mean()) * range_mag / (s.max() - s.min())


def rehearsal_rows(campaign, first_date, last_date, seed: int, *, sigma_mag: float = 0.02, band: str = "V",
                   period_days: float | None = None, mean_magnitude: float = DELTA_CEP_MEAN_V,
                   range_mag: float = DELTA_CEP_RANGE_V, star_id: str | None = None):
    """One magnitude of each Cepheid every night some site sees it in a dark sky (within an hour of its
    highest then; a campaign without sites, within three hours of 00:00 UTC).

    The stars: ``star_id``'s, else every star with a ``period_days`` (every star when ``period_days``
    is given).
    """
    from firstrung.methods.parallax.prediction import dark_hours_up
    from firstrung.methods.parallax.run import chosen_stars

    rng = np.random.default_rng(seed)
    dates = np.arange(np.datetime64(first_date, "D"), np.datetime64(last_date, "D") + 1)
    rows = []
    stars = chosen_stars(campaign, star_id)
    if star_id is None and period_days is None:
        stars = tuple(s for s in stars if s.period_days is not None)
    for star in stars:
        period = period_days or star.period_days or DELTA_CEP_PERIOD_D
        if campaign.sites:
            view = dark_hours_up(star.ra_deg, star.dec_deg, dates, campaign.sites)
            usable = view.dark_hours.max(axis=1) >= 1.0
            best = np.argmax(view.dark_hours[usable], axis=1)
            t = view.best_time_utc[usable][np.arange(best.size), best]
            sites = [campaign.sites[j].id for j in best]
        else:
            t, sites = dates.astype("datetime64[ms]"), [""] * dates.size
        # observers do not all observe at the same hour: up to an hour either side of the star's best
        # (without sites, of 00:00 UTC, three hours either side: a night)
        spread_ms = 3600_000.0 if campaign.sites else 3 * 3600_000.0
        t = t.astype("datetime64[ms]") + np.round(rng.uniform(-spread_ms, spread_ms, t.size)).astype("timedelta64[ms]")
        jd = t.astype(np.int64) / 86_400_000.0 + UNIX_EPOCH_JD
        phase = ((jd - DELTA_CEP_MAXIMUM_JD) / period) % 1.0
        m = light_curve_mag(phase, mean_magnitude, range_mag) + rng.normal(0.0, sigma_mag, jd.size)
        for k in range(jd.size):
            rows.append({"site": sites[k], "star": star.id, "time_utc": str(np.datetime64(t[k], "s")) + "Z",
                         "magnitude": f"{m[k]:.3f}", "magnitude_sigma": f"{sigma_mag:g}", "band": band,
                         "observer": f"rehearsal {sites[k] or 'photometer'}"})
    rows.sort(key=lambda r: (r["time_utc"], r["star"]))
    return rows
