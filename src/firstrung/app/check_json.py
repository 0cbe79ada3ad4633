"""JSON of the log check (``check``): flags, per-series statistics and the summary."""

from __future__ import annotations

from firstrung.flags import CODES

_STATISTIC = (
    "robust chi-square of each series against the ephemeris: squared normalised residuals about a fitted "
    "level and clock offset, each capped at 3 sigma, plus the level squared over the series' systematic "
    "variance and the clock offset's prior penalty; an explanation is reported when it lowers the statistic "
    "by at least 12 and beats every other by 10"
)


def flag_to_json(flag) -> dict:
    """One flag: the contract keys, then severity, the fix, the observer and the code's own fields."""
    out = {
        "file": flag.file,
        "row": flag.row,
        "site": flag.site,
        "code": flag.code,
        "severity": flag.severity,
        "message": flag.message,
        "fix": flag.fix,
        "observer": flag.observer,
    }
    for key, value in flag.fields.items():
        if key not in out:
            out[key] = value
    return out


def check_run_to_json(run) -> dict:
    """The ``check`` result (see DESIGN section 4)."""
    errors = sum(f.severity == "error" for f in run.flags)
    # the summary's rows per site count every row read once: its totals are the log's
    flagged_rows = sum(s.flagged for s in run.summary if not s.observer)
    error_rows = sum(s.errors for s in run.summary if not s.observer)
    return {
        "campaign": run.campaign.name,
        "checked": list(run.kinds),
        "flags": [flag_to_json(f) for f in run.flags],
        "rows": {
            "read": run.rows_read,
            "accepted": run.rows_read - error_rows,
            "flagged": flagged_rows,
            "rejected": error_rows,
        },
        "counts": {
            "errors": errors,
            "warnings": len(run.flags) - errors,
            "by_code": {c: n for c in CODES if (n := sum(f.code == c for f in run.flags))},
        },
        "summary": [
            {
                "site": s.site,
                "observer": s.observer or None,
                "read": s.read,
                "accepted": s.accepted,
                "flagged": s.flagged,
                "errors": s.errors,
                "warnings": s.warnings,
            }
            for s in run.summary
        ],
        "series": [
            {
                "file": d.file,
                "site": d.site,
                "date": d.date,
                "rows": d.rows,
                "verdict": d.verdict,
                "statistic_logged": d.statistic_logged,
                "level_arcmin": d.level_arcmin,
                "level_sigma": d.level_sigma,
                "best_explanation": d.best,
                "statistic_best": d.statistic_best,
            }
            for d in run.series
        ],
        "noon_only": run.noon_only,
        "statistic": _STATISTIC,
    }
