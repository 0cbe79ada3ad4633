"""JSON of the half-moon rung: ``plan phases`` and ``reduce phases`` (DESIGN section 4)."""

from __future__ import annotations

import math

import numpy as np

from firstrung.errors import refused_rows
from firstrung.jsonout import number as _num
from firstrung.jsonout import quantity as _q
from firstrung.jsonout import time_z as _time

#: Rounding of ratios in JSON (far below any uncertainty).
_RATIO_DIGITS = 3


def _ratio(m) -> dict:
    return m.to_json(_RATIO_DIGITS)


def _minutes(delta) -> float:
    return round(float(np.asarray(delta, dtype="timedelta64[us]").astype(np.int64)) / 60e6, 2)


def phase_plan_to_json(plan) -> dict:
    """The ``plan phases`` result: every quarter of the range, ranked, with each site's windows."""
    from firstrung.methods.phases.run import local_time_iso, site_notes
    from firstrung.safety import PHASES_CAUTION

    q = plan.quarters
    w = plan.windows
    settings = plan.settings
    sites = plan.campaign.sites
    # every number converted once, vectorised (a year for 100 sites has ~5000 windows)
    rounded = {}
    if len(w):
        a = plan.at_window
        rounded = {
            "start": [_time(t) for t in w.start_utc],
            "end": [_time(t) for t in w.end_utc],
            "closest": [_time(t) for t in w.closest_utc],
            "duration": np.round((w.end_utc - w.start_utc).astype(np.int64) / 60e6, 2).tolist(),
            "offset": np.round(w.minutes_from_target, 2).tolist(),
            "contains": w.contains_target.tolist(),
            "sun": np.round(plan.window_sun_observed_altitude_deg, 3).tolist(),
            "moon": np.round(plan.window_moon_observed_altitude_deg, 3).tolist(),
            "elongation": np.round(a.elongation_deg, 4).tolist(),
            "fraction": np.round(a.illuminated_fraction, 4).tolist(),
            "cut": w.cut.tolist(),
        }
    by_pair: dict[tuple[int, int], list[int]] = {}
    for i, (k, j) in enumerate(zip(w.event.tolist(), w.site.tolist(), strict=True)):
        by_pair.setdefault((k, j), []).append(i)
    g = plan.at_dichotomy
    site_half = site_offset = site_e = site_ratio = site_sun = site_moon = []
    if len(q):
        site_half = [[_time(t) for t in row] for row in plan.site_dichotomy_utc]
        site_offset = np.round((plan.site_dichotomy_utc - q.dichotomy_utc[:, None]).astype(np.int64) / 60e6, 2).tolist()
        site_e = np.round(g.elongation_deg, 6).tolist()
        site_ratio = np.round(g.sun_distance_km / g.moon_distance_km, _RATIO_DIGITS).tolist()
        site_sun = np.round(plan.sun_observed_altitude_deg, 3).tolist()
        site_moon = np.round(plan.moon_observed_altitude_deg, 3).tolist()

    quarters = []
    for k in range(len(q)):
        site_entries = {}
        for j, s in enumerate(sites):
            windows = [
                {
                    "start_utc": rounded["start"][i],
                    "end_utc": rounded["end"][i],
                    "duration_min": rounded["duration"][i],
                    "contains_dichotomy": rounded["contains"][i],
                    "closest_utc": rounded["closest"][i],
                    "minutes_from_dichotomy": rounded["offset"][i],
                    "sun_altitude_deg": rounded["sun"][i],
                    "moon_altitude_deg": rounded["moon"][i],
                    "elongation_deg": rounded["elongation"][i],
                    "illuminated_fraction": rounded["fraction"][i],
                    "cut_by_search_span": rounded["cut"][i],
                }
                for i in by_pair.get((k, j), [])
            ]
            site_entries[s.id] = {
                "dichotomy_utc": site_half[k][j],
                "dichotomy_local": local_time_iso(plan.site_dichotomy_utc[k, j], s.timezone),
                "minutes_from_geocentric_dichotomy": site_offset[k][j],
                "elongation_deg": site_e[k][j],
                "sun_moon_distance_ratio": site_ratio[k][j],
                "sun_altitude_deg": site_sun[k][j],
                "moon_altitude_deg": site_moon[k][j],
                "half_moon_in_window": any(x["contains_dichotomy"] for x in windows),
                "notes": site_notes(plan, k, j),
                "windows": windows,
            }
        quarters.append({
            "quarter": str(q.quarter[k]),
            "quadrature_utc": _time(q.quadrature_utc[k]),
            "dichotomy_utc": _time(q.dichotomy_utc[k]),
            "dichotomy_minus_quadrature_min": round(float(q.dichotomy_minus_quadrature_s[k]) / 60.0, 2),
            "elongation_at_dichotomy_deg": _num(q.elongation_deg[k], 6),
            "apparent_elongation_at_dichotomy_deg": _num(q.apparent_elongation_deg[k], 6),
            "sun_moon_distance_ratio": _num(q.distance_ratio[k], _RATIO_DIGITS),
            "rank": int(plan.rank[k]) if plan.rank[k] > 0 else None,
            "excluded": list(plan.excluded[k]),
            "sites_with_half_moon_in_window": int(plan.sites_with_half_moon[k]),
            "sites_with_window": int(plan.sites_with_window[k]),
            "sites": site_entries,
        })
    return {
        "campaign": plan.campaign.name,
        "from": plan.first_date,
        "to": plan.last_date,
        "settings": {
            "min_altitude_deg": settings.min_altitude_deg,
            "min_sun_elongation_deg": settings.min_sun_elongation_deg,
            "search_half_span_h": settings.half_span_h,
        },
        "definitions": {
            "quadrature_utc": "almanac quarter: apparent geocentric ecliptic longitudes of Moon and Sun differ by 90 or 270 deg",
            "dichotomy_utc": "true half moon: Sun-Moon-Earth angle 90 deg, the Moon lit by the Sun's apparent place (geocentric)",
            "sites.dichotomy_utc": "true half moon seen from the site: Sun-Moon-observer angle 90 deg, the Moon lit by the Sun's apparent place",
            "windows": "Sun and Moon centres both above the minimum observed altitude (standard refraction) "
                       "and the Moon at least the minimum angle from the Sun",
        },
        "quarters": quarters,
        "caution": PHASES_CAUTION,
    }


def _estimate(x) -> dict:
    out = {
        "kind": x.kind,
        "site": x.site,
        "observer": x.observer,
        "quarter": x.quarter,
        "quadrature_utc": _time(x.quadrature_utc),
        "time_utc": _time(x.time_utc),
        "time_sigma_s": _num(x.time_sigma_s, 1),
        "site_dichotomy_utc": _time(x.site_dichotomy_utc),
        "minutes_from_site_dichotomy": _minutes(x.time_utc - x.site_dichotomy_utc),
        "elongation_deg": _q(x.elongation_deg),
        "sun_moon_distance_ratio": _ratio(x.sun_moon_distance_ratio),
        "expected_elongation_deg": _num(x.expected_elongation_deg, 6),
        "expected_ratio": _num(x.expected_ratio, _RATIO_DIGITS),
        "elongation_rate_deg_per_h": _num(x.rate_deg_per_h, 4),
        "rows": list(x.rows),
    }
    if x.corrections_deg:
        out["corrections_arcmin"] = {k: _num(v * 60.0, 3) for k, v in x.corrections_deg.items()}
    if x.fit is not None:
        f = x.fit
        out["fit"] = {
            "images": f.images,
            "slope": _num(f.slope, 4),
            "slope_free": f.slope_free,
            "chi2_per_dof": _num(f.chi2_per_dof, 3) if f.chi2_per_dof is not None else None,
        }
    return out


def _combined(c) -> dict:
    from firstrung.methods.phases.reduction import lower_bound_95

    return {
        "elongation_deg": {
            "value": _num(c.elongation_deg, 6), "sigma": _num(c.sigma_deg, 6),
            "low": _num(c.elongation_deg - c.sigma_deg, 6), "high": _num(c.elongation_deg + c.sigma_deg, 6),
            "unit": "deg",
        },
        "sun_moon_distance_ratio": _ratio(c.sun_moon_distance_ratio),
        "lower_bound_95": _num(lower_bound_95(c.elongation_deg, c.sigma_deg), _RATIO_DIGITS)
        if lower_bound_95(c.elongation_deg, c.sigma_deg) is not None else None,
        "estimates": c.estimates,
        "chi2_per_dof": _num(c.chi2_per_dof, 3) if c.chi2_per_dof is not None else None,
        "scale": _num(c.scale, 3),
    }


def statement(ratio: dict, elongation_deg: float | None = None, sigma_deg: float | None = None) -> str:
    """The result in words: the interval, the one-sided bound, or why no finite ratio fits.

    ``low`` alone is the ratio at E + sigma: the truth lies above it with 84 %
    probability (one-sided), not 68 %. When E - sigma is beyond 90 deg the
    data rule out every finite ratio (the angle at the Moon would be
    obtuse): that points to biased timings or angles, and is said so.
    """
    if ratio["low"] is None:
        if elongation_deg is not None and sigma_deg:
            z = (elongation_deg - 90.0) / sigma_deg
            return (f"no finite Sun/Moon distance ratio fits: E = {elongation_deg:.3f} ± {sigma_deg:.3f} deg lies "
                    f"{z:.1f} sigma beyond 90 deg, where the Sun would be on the near side of the right angle; "
                    "the timings or angles are probably biased (late first-quarter or early last-quarter "
                    "judgements, a mis-set instrument): check them")
        return ("no finite Sun/Moon distance ratio fits: E - sigma lies beyond 90 deg; the timings or angles are "
                "probably biased: check them")
    if ratio["high"] is None:
        return (f"D_sun/D_moon is at least {ratio['low']:.0f} (84 %, one-sided: the image of E + sigma); there is "
                "no upper bound: the elongation may reach 90 deg within its error")
    value = "infinite" if ratio["value"] is None else f"{ratio['value']:.0f}"
    return f"D_sun/D_moon = {value} (68 % interval {ratio['low']:.0f} to {ratio['high']:.0f})"


def phase_run_to_json(run) -> dict:
    """The ``reduce phases`` result (DESIGN section 4: ``sun_moon_distance_ratio``, ``elongation_deg``)."""
    from firstrung.safety import PHASES_CAUTION

    c = _combined(run.combined)
    ratio = c["sun_moon_distance_ratio"]
    interval = None
    if run.interval is not None:
        i = run.interval
        interval = {
            "first_to_last": i.first_to_last,
            "last_to_first": i.last_to_first,
            "uncorrected": {
                "elongation_deg": _q(i.uncorrected_elongation_deg),
                "sun_moon_distance_ratio": _ratio(i.uncorrected_ratio),
                "perfect_timings_ratio": None if i.uncorrected_perfect_ratio is None or not math.isfinite(i.uncorrected_perfect_ratio)
                else _num(i.uncorrected_perfect_ratio, _RATIO_DIGITS),
                "single_interval_spread_h": _num(i.interval_spread_h, 2) if i.interval_spread_h is not None else None,
                "note": "uniform lunar motion assumed: the Moon's uneven motion shifts single intervals by up to "
                        "about +/- 32 h (31.9 h at most in 2000-2050, DE421), far more than the 70 min the Sun's distance causes; "
                        "perfect_timings_ratio is what this method gives for exact timings of the same half moons",
            },
            "corrected": None if i.corrected_ratio is None else {
                "elongation_deg": _q(i.corrected_elongation_deg),
                "sun_moon_distance_ratio": _ratio(i.corrected_ratio),
                "note": "each half moon referred to the site's quadrature and the elongation's rate from the ephemeris (directions only)",
            },
        }
    expected = run.expected_ratio
    return {
        "campaign": run.campaign.name,
        "method": "half moon: right angle at the Moon, D_sun/D_moon = 1/cos E",
        "sun_moon_distance_ratio": ratio,
        "elongation_deg": c["elongation_deg"],
        "lower_bound_95": c["lower_bound_95"],
        "only_lower_bound": ratio["high"] is None,
        "statement": statement(ratio, run.combined.elongation_deg, run.combined.sigma_deg),
        "expected_ratio": _num(expected, _RATIO_DIGITS),
        "expected_elongation_deg": _num(run.expected_elongation_deg, 6),
        "ratio_to_expected": _num(ratio["value"] / expected, 4) if ratio["value"] is not None else None,
        "precision": {
            "within_10_percent": {
                "elongation_arcmin": _num(run.within_10_percent.elongation_sigma_arcmin, 3),
                "time_min": _num(run.within_10_percent.time_sigma_s / 60.0, 2),
            },
            "within_factor_2": {
                "elongation_arcmin": _num(run.within_factor_2.elongation_sigma_arcmin, 3),
                "time_min": _num(run.within_factor_2.time_sigma_s / 60.0, 2),
            },
            "achieved_elongation_arcmin": _num(run.combined.sigma_deg * 60.0, 3),
            "achieved_time_min": _num(run.combined.sigma_deg / run.rate_deg_per_h * 60.0, 2),
            "sentence": run.sentence,
        },
        "combination": {k: c[k] for k in ("estimates", "chi2_per_dof", "scale")},
        "by_kind": {kind: _combined(v) for kind, v in run.by_kind.items()},
        "estimates": [_estimate(x) for x in run.estimates],
        "interval_method": interval,
        "rows": {
            "read": run.rows_read,
            "accepted": run.rows_accepted,
            "refused": refused_rows(run.problems),
            "estimates": len(run.estimates),
            "left_out_flagged": run.rows_left_out_flagged,
        },
        "problems": [str(p) for p in run.problems],
        "assumptions": list(run.assumptions),
        "propagation": "Gaussian errors in E mapped through 1/cos E (exact for the 68 % interval); "
                       "sigma by linear propagation, given only when an upper bound exists",
        "caution": PHASES_CAUTION,
    }
