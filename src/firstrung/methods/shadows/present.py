"""JSON of the shadow reduction (``reduce shadows``)."""

from __future__ import annotations

from collections.abc import Sequence

from firstrung.errors import refused_rows
from firstrung.jsonout import number as _num
from firstrung.jsonout import quantity as _q
from firstrung.jsonout import time_z as _time


def shadow_run_to_json(run, *, pairs: bool | str = True, lazy_days: bool = False) -> dict:
    """The ``reduce shadows`` result (see DESIGN section 4); ``pairs=False`` leaves out the list of pairs
    (their summary stays), for the terminal and the report; ``pairs="as-written"`` makes them one at a
    time as the JSON text is written (:func:`firstrung.jsonout.write_json`). ``lazy_days``: each site's ``days`` a
    sequence that builds a day's dictionary when it is read (the terminal reads the days of the sites
    it shows; not for JSON text)."""
    from firstrung.methods.shadows.pairs import partners_of
    from firstrung.methods.shadows.present_network import network_json, site_network_json

    r = run.reduction
    partners = partners_of(run.pairs) if getattr(run, "pairs", None) is not None else {}
    sites = []
    for s in r.sites:
        sites.append(
            {
                "id": s.id,
                "name": s.name,
                "latitude_deg": s.latitude_deg,
                "longitude_deg": s.longitude_deg,
                "north_south_km": _num(s.north_south_km, 3),
                "astronomical_latitude_deg": _q(s.astronomical_latitude_deg),
                "residual_arcmin": _num(s.residual_arcmin, 3),
                "normalized_residual": _num(s.normalized_residual, 3),
                "outlier": s.outlier,
                "days": _Days(s.series) if lazy_days else [_day(d) for d in s.series],
            } | site_network_json(run, s.id, partners)
        )
    total = sum(t.sigma**2 for t in r.budget)
    warnings = {"warnings": list(r.warnings)} if r.warnings else {}
    return warnings | {
        "campaign": run.campaign.name,
        **network_json(run, pairs=pairs),
        "earth_radius_km": _q(r.earth_radius_km),
        "circumference_km": _q(r.circumference_km),
        "expected_radius_km": _num(r.expected_radius_km, 3),
        "meridional_radius_mid_latitude_km": _num(r.meridional_radius_mid_km, 3),
        "mean_radius_km": _num(r.mean_radius_km, 4),
        "ratio_to_expected": _num(r.earth_radius_km.value / r.expected_radius_km, 5),
        "sites": sites,
        "outliers": list(r.outliers),
        "error_budget": [
            {"source": t.source, "sigma_km": _num(t.sigma, 2), "share_percent": _num(100 * t.share(total), 1)}
            for t in r.budget
        ],
        "limited_by": r.budget[0].source if r.budget else None,
        "rows": {
            "read": run.rows_read,
            "accepted": run.rows_accepted,
            "used": r.readings_used,
            "refused": refused_rows(run.problems),
            "left_out_flagged": run.rows_left_out_flagged,
            "left_out": r.readings_left_out,
        },
        "problems": [str(p) for p in run.problems],
        "notes": list(run.notes),
        "chi2_per_dof": _num(r.chi2_per_dof, 3),
        "assumptions": list(r.assumptions),
        "propagation": r.propagation,
    }


def _day(d) -> dict:
    """One series (a site on one day) as the contract lists it."""
    return {
        "date": d.date,
        "readings": d.readings,
        "transit_utc": _time(d.transit_utc),
        "declination_deg": _num(d.declination_deg, 6),
        "culmination_altitude_deg": _q(d.culmination_altitude_deg),
        "zenith_distance_deg": _q(d.zenith_distance_deg),
        "sun_side": d.sun_side,
        "astronomical_latitude_deg": _q(d.latitude_deg),
        "clock_offset_s": _q(d.clock_offset_s),
        "apparent_noon_clock_utc": _time(d.apparent_noon_clock_utc),
        "implied_longitude_deg": _q(d.implied_longitude_deg),
        "chi2_per_dof": _num(d.chi2_per_dof, 3),
    } | _board(d)


class _Days(Sequence):
    """A site's days as :func:`_day` gives them, each built when it is read."""

    def __init__(self, series) -> None:
        self._series = series

    def __len__(self) -> int:
        return len(self._series)

    def __getitem__(self, k):
        if isinstance(k, slice):
            return [_day(d) for d in self._series[k]]
        return _day(self._series[k])


def _board(series) -> dict:
    """A timed trace's board, only for series that have one (plain lengths keep their keys)."""
    b = series.board
    if b is None:
        return {}
    return {"board": {
        "orientation_deg": _num(b.orientation_deg, 3),
        "orientation_sigma_deg": _num(b.orientation_sigma_deg, 3),
        "axes_mirrored": b.mirrored,
        "clock_from_directions_s": _num(b.clock_from_directions_s, 1),
        "directions_minus_lengths_s": _num(b.directions_minus_lengths_s, 1),
        "warning": b.warning,
    }}
