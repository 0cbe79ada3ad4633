"""The schools of a network whose reading was not used, and what each is told: why, and what to check.

A school sends one row; when ``check`` flags it as a blunder, a reader refuses
it, the reduction leaves it out (the Sun too low, too far from noon) or the
network fit finds it far off the line, the school still wants its result
back. :func:`unused_schools` names every such school with its rows as logged
and each reason in plain words, with what to check before measuring again
(:data:`CHECK_BEFORE_AGAIN`); :mod:`firstrung.methods.shadows.school_sheets`
gives each a page beside the network's result.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: What a flag's code means for a school, in plain words (the flag's own message gives the numbers).
PLAIN_WORDS = {
    "outlier": "your reading disagrees with where the Sun stood at your school at that time by far more "
               "than a reading error",
    "length-unit": "your shadow's length is about ten times what the Sun allows: millimetres typed in the "
                   "centimetre column, or centimetres in the metre column",
    "sun-below-horizon": "at the time logged the Sun was below or close to your horizon: the time, the date "
                         "or the school's position is off",
    "far-from-noon": "the time logged is hours from your local noon, when the shadow is shortest",
    "local-time-as-utc": "the time logged looks like your clock's local time written as UTC",
    "time-shift-hours": "the time logged is whole hours off: a time zone or summer time mix-up",
    "longitude-sign": "the school's longitude seems to have the wrong sign (east is +, west is -)",
    "latitude-sign": "the school's latitude seems to have the wrong sign (north is +, south is -)",
    "edge-convention": "the shadow seems measured to another edge than the one logged",
    "duplicate-row": "the same row was sent twice",
    "bad-value": "a cell of the row could not be read",
    "unknown-site": "the school's name matches no site of the campaign",
    "refused": "the row could not be used as sent",
    "left-out": "at the time logged the Sun was lower than 5 degrees or more than 3 hours from your noon, "
                "where a shadow says little about the latitude",
    "network-outlier": "your latitude from the shadow lies far from the line the other schools make "
                       "(more than 3.5 times the network's scatter), so it was left out of the network's fit",
}
#: What to check before measuring again, by code (then the checks every school makes).
CHECK_BEFORE_AGAIN = {
    "outlier": "read the shadow's length and the gnomon's height again from your field sheet, and that the "
               "figures typed are the ones measured",
    "length-unit": "the unit of the length column: shadow_cm holds centimetres, shadow_m metres",
    "sun-below-horizon": "that the time is in UTC, the date is the day of the reading, and the latitude and "
                         "longitude are the school's",
    "far-from-noon": "that the time is in UTC (not the local clock) and that you read near local noon",
    "local-time-as-utc": "that the time column holds UTC: subtract your time zone's offset from the clock",
    "time-shift-hours": "the time zone and summer time of the clock you read",
    "longitude-sign": "the longitude's sign: east of Greenwich is +, west is -",
    "latitude-sign": "the latitude's sign: north of the equator is +, south is -",
    "edge-convention": "which edge of the shadow you marked (the dark core's end, or the faint outer end) and "
                       "log it in the edge column",
    "bad-value": "the cell the message names",
    "unknown-site": "the school's name and the position columns of the row",
    "refused": "the cells the message names",
    "left-out": "that the time is in UTC and that you read within an hour or so of local noon",
    "network-outlier": "the shadow, the gnomon's height, the time and the school's coordinates against your "
                       "field sheet",
}
#: The checks every school makes before measuring again (common practice for a gnomon measurement).
EVERY_TIME = ("the board is level (a spirit level, or water that does not run) and the gnomon plumb",
              "the shadow is measured from the foot of the gnomon to the edge of the shadow",
              "the clock is set to the right time, and the row gives it in UTC",
              "the school's latitude and longitude are read from a map (north and east positive)")


@dataclass(frozen=True)
class Reason:
    """Why a school's reading was not used: the code, its plain words and the message's detail."""

    code: str
    plain: str
    detail: str


@dataclass(frozen=True)
class UnusedSchool:
    """A school none of whose readings counted in the network's result (or left out of its fit)."""

    site_id: str | None
    name: str
    latitude_deg: float | None
    longitude_deg: float | None
    rows: tuple[dict, ...]  # each: date, time, reading, gnomon (as logged) or where (file:row) alone
    reasons: tuple[Reason, ...]

    @property
    def checks(self) -> tuple[str, ...]:
        """What to check before measuring again: each reason's check (said to the school, where the
        check's fix speaks to the coordinator), then :data:`EVERY_TIME`."""
        own = []
        for r in self.reasons:
            text = CHECK_BEFORE_AGAIN.get(r.code, CHECK_BEFORE_AGAIN["refused"])
            if text not in own:
                own.append(text)
        return tuple(own) + EVERY_TIME


def rows_by_key(keys) -> dict:
    """The indices of each distinct key of ``keys``, in order: one sort, whatever the number of keys.

    >>> {k: v.tolist() for k, v in rows_by_key(["b", "a", "b"]).items()}
    {'a': [1], 'b': [0, 2]}
    """
    keys = np.asarray(keys, dtype=object)
    if keys.size == 0:
        return {}
    order = np.argsort(keys.astype(str), kind="stable")
    ordered = keys[order]
    starts = np.r_[0, np.flatnonzero(ordered[1:] != ordered[:-1]) + 1, ordered.size]
    return {ordered[a]: order[a:b] for a, b in zip(starts[:-1], starts[1:], strict=True)}


def _reason(code: str, detail: str) -> Reason:
    return Reason(code, PLAIN_WORDS.get(code, PLAIN_WORDS["refused"]), detail)


def _logged_rows(log, rows) -> list[dict]:
    from firstrung.jsonout import time_z

    out = []
    for k in rows:
        t = time_z(log.time_utc[k]) if not np.isnat(log.time_utc[k]) else ""
        if str(log.form[k]) == "angle" and np.isfinite(log.altitude_deg[k]):
            reading = f"Sun's altitude {log.altitude_deg[k]:.2f}°"
        else:
            reading = f"shadow {log.shadow_m[k] * 100:.1f} cm" if np.isfinite(log.shadow_m[k]) else "shadow -"
        gnomon = f"gnomon {log.gnomon_m[k] * 100:.1f} cm" if np.isfinite(log.gnomon_m[k]) else ""
        out.append({"date": t[:10], "time": (t[11:-1] + " UTC") if t and bool(log.timed[k]) else "(no time)",
                    "reading": reading, "gnomon": gnomon, "where": f"{log.file[k]}:{log.row[k]}"})
    return out


def unused_schools(run) -> tuple[UnusedSchool, ...]:
    """Every school of ``run`` (a :class:`~firstrung.methods.shadows.run.ShadowRun`) whose reading was not
    used, in the log's order, then those left out of the network's fit, each with its reasons.

    Schools of a campaign's declared ``[[site]]`` tables are left out: only a school of an open network
    (its rows carry its site) or the lone site of a one-site campaign gets a page of its own.
    """
    campaign, red = run.campaign, run.reduction
    used = {s.id for s in red.sites}
    from_rows = set(campaign.row_site_ids)
    by_id = {s.id: s for s in campaign.sites}
    schools: dict[str, dict] = {}  # key: site id, or the name in lower case for a refused row's school

    def school(key, name, site_id):
        return schools.setdefault(key, {"name": name, "site_id": site_id, "rows": [], "where": [], "reasons": []})

    log = run.log
    if log is not None and len(log):
        sites = np.asarray(log.site, dtype=object)
        for k in np.flatnonzero(~np.isin(sites, list(used))):
            sid = str(sites[k])
            if sid in from_rows:
                school(sid, by_id[sid].name, sid)["rows"].append(int(k))
    flag_of: dict[tuple[str, int], list] = {}
    for f in run.flags:
        flag_of.setdefault((f.file, f.row), []).append(f)
    for entry in schools.values():
        seen = set()
        for k in entry["rows"]:
            for f in flag_of.get((str(log.file[k]), int(log.row[k])), []):
                if (f.code, f.message) not in seen:
                    seen.add((f.code, f.message))
                    entry["reasons"].append(_reason(f.code, f.message))
        if not entry["reasons"]:
            entry["reasons"].append(_reason("left-out", "the reduction left the reading out"))
    _add_refused(run, schools, used, school)
    out = [UnusedSchool(e["site_id"], e["name"], *(_position(by_id.get(e["site_id"]))),
                        tuple(_logged_rows(log, e["rows"])) + tuple({"where": w} for w in e["where"]),
                        tuple(e["reasons"])) for e in schools.values()]
    flagged = set(run.network.flagged) if run.network is not None else set()
    rows_of = rows_by_key(log.site) if log is not None else {}
    for s in red.sites:
        if (s.outlier or s.id in flagged) and s.id in from_rows:
            detail = f"{abs(s.residual_arcmin):,.1f}′ from the network's line"
            rows = rows_of.get(s.id, [])
            out.append(UnusedSchool(s.id, s.name, s.latitude_deg, s.longitude_deg, tuple(_logged_rows(log, rows)),
                                    (_reason("network-outlier", detail),)))
    return tuple(out)


def _position(site) -> tuple[float | None, float | None]:
    return (None, None) if site is None else (site.latitude_deg, site.longitude_deg)


def _add_refused(run, schools, used, school) -> None:
    """The schools of the rows a reader refused, named by the rows' site cells (read again, those rows only)."""
    from firstrung.open_sites import site_cells

    problems = [p for p in run.problems if p.row is not None]
    if not problems or not run.campaign.row_site_ids:
        return
    keys = {(p.file, r) for p in problems for r in (p.rows or (p.row,))}
    names = site_cells(run.campaign, keys)
    for p in problems:
        for r in p.rows or (p.row,):
            name = names.get((p.file, r))
            if not name:
                continue
            site = run.campaign.site_matching(name)
            if site is not None and site.id in used:
                continue  # another of its rows counted
            entry = school(site.id if site is not None else name.lower(), site.name if site else name,
                           site.id if site else None)
            entry["where"].append(f"{p.file}, row {r}, as sent")
            detail = f"{p.column}: {p.message}" if p.column else p.message  # its rows are listed above
            if all(x.detail != detail for x in entry["reasons"]):
                entry["reasons"].append(_reason("refused", detail))
