"""JSON of what the network method adds to ``reduce shadows`` (the Open networks Contract)."""

from __future__ import annotations

import math

import numpy as np

from firstrung.jsonout import number as _num
from firstrung.jsonout import quantity as _q

DESCRIPTIONS = {
    "network": "noon gnomon shadows: astronomical latitude against north-south arc",
    "subsolar": "noon gnomon shadow at one site against the subsolar point (the latitude where the Sun "
                "stood at the zenith that day)",
}


def _float(x: float) -> float | None:
    return x if math.isfinite(x) else None


def pairs_json(pairs, *, as_written: bool = False) -> list[dict]:
    """``pairs[]``: every pair as the Contract lists it, the radius a measured quantity.

    ``as_written``: the pairs made one at a time as the JSON text is written
    (:class:`firstrung.jsonout.JsonRows`), for a campaign with millions of them.
    """
    if pairs is None:
        return []
    value = np.round(pairs.radius_km, 1)
    sigma = np.round(pairs.sigma_km, 1)
    low = np.round(pairs.low_km, 1)
    high = np.round(pairs.high_km, 1)
    ns = np.round(pairs.north_south_km, 1)

    def rows(start: int = 0, stop: int | None = None):
        stop = len(value) if stop is None else stop
        return (
            {"sites": [a, b], "date": d, "north_south_km": _float(n),
             "radius_km": {"value": _float(v), "sigma": _float(s), "low": _float(lo), "high": _float(hi), "unit": "km"},
             "flagged": bool(f)}
            for a, b, d, n, v, s, lo, hi, f in zip(
                pairs.first[start:stop].tolist(), pairs.second[start:stop].tolist(), pairs.date[start:stop].tolist(),
                ns[start:stop].tolist(), value[start:stop].tolist(), sigma[start:stop].tolist(),
                low[start:stop].tolist(), high[start:stop].tolist(), pairs.flagged[start:stop].tolist(), strict=True)
        )

    if not as_written:
        return list(rows())

    def in_blocks(block: int = 65536):
        for start in range(0, len(value), block):
            yield from rows(start, start + block)

    from firstrung.jsonout import JsonRows

    return JsonRows(len(value), in_blocks)


def network_json(run, pairs: bool | str = True) -> dict:
    """The top-level keys the network method adds (``method`` and the rest)."""
    from firstrung.methods.shadows.pairs import pairs_summary

    net = run.network
    if net is None:
        return {"method": "network", "method_description": DESCRIPTIONS["network"]}
    out = {
        "method": net.method,
        "method_description": DESCRIPTIONS[net.method],
        "errors_from_scatter": net.errors_from_scatter,
        "scatter_per_site_arcmin": None if net.scatter_deg is None else _num(net.scatter_deg * 60.0, 3),
        "flagged_sites": list(net.flagged),
    }
    if run.pairs is not None:
        summary = pairs_summary(run.pairs)
        out["pairs_selection"] = run.pairs.selection
        out["pairs_summary"] = {k: (_num(v, 1) if k != "count" else v) for k, v in summary.items()}
        if pairs:
            out["pairs"] = pairs_json(run.pairs, as_written=pairs == "as-written")
    return out


def site_network_json(run, site_id: str, partners: dict) -> dict:
    """Per site: its subsolar radius (and why it has none), its partners and their median radius."""
    result, reason = (run.subsolar or {}).get(site_id, (None, None))
    count, median = partners.get(site_id, (0, None))
    out = {"subsolar_radius_km": None if result is None else _q(result), "subsolar_note": reason}
    out["partners"] = count
    out["partners_median_radius_km"] = _num(median, 1) if median is not None else None
    return out
