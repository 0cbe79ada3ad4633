"""Figures for the report, as matplotlib Figures (matplotlib is imported only here, lazily).

The functions take plain arrays and results and return a Figure; they write
no file. :func:`to_svg` and :func:`to_png` render one deterministically (no
date in the metadata, fixed element ids), so the same report comes out byte
for byte the same.
"""

from __future__ import annotations

import io

import numpy as np


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams.update({
        "svg.hashsalt": "firstrung",
        "svg.fonttype": "none",
        "font.size": 9,
        "axes.grid": True,
        "grid.alpha": 0.3,
        "figure.dpi": 100,
    })
    return plt


def to_svg(fig) -> str:
    """SVG text of a figure, without the XML prologue, deterministic."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight", metadata={"Date": None, "Creator": "firstrung"})
    _plt().close(fig)
    text = buf.getvalue()
    return text[text.index("<svg"):]


def to_png(fig) -> bytes:
    """PNG bytes of a figure, deterministic."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight", dpi=120, metadata={"Software": "firstrung"})
    _plt().close(fig)
    return buf.getvalue()


def shadow_series_figure(series: list[dict], total: int | None = None):
    """Shadow length against time from noon for each site and day, with the fitted curve.

    ``series``: dicts with ``label``, ``minutes`` (readings, from the fitted
    apparent noon), ``shadow_m`` (readings), ``model_minutes`` and
    ``model_shadow_m`` (the fitted culmination's curve). ``total``: how many
    series the campaign has when only some are drawn (the title says so).
    """
    plt = _plt()
    n = max(len(series), 1)
    cols = min(3, n)
    rows = int(np.ceil(n / cols))
    fig, axes = plt.subplots(rows, cols, figsize=(7.0, 2.3 * rows), squeeze=False, sharex=True)
    for k, s in enumerate(series):
        ax = axes[k // cols][k % cols]
        ax.plot(s["minutes"], np.asarray(s["shadow_m"]) * 100, "o", ms=2.5, color="C0", label="readings")
        ax.plot(s["model_minutes"], np.asarray(s["model_shadow_m"]) * 100, "-", lw=1, color="C3", label="fit")
        ax.axvline(0.0, color="0.4", lw=0.8, ls="--")
        ax.set_title(s["label"], fontsize=8)
        if k % cols == 0:
            ax.set_ylabel("shadow (cm)")
        if k // cols == rows - 1:
            ax.set_xlabel("min from noon")
    for k in range(len(series), rows * cols):
        axes[k // cols][k % cols].set_visible(False)
    axes[0][0].legend(fontsize=6)
    title = "Shadow readings and the fitted culmination (dashed: the fitted local apparent noon)"
    if total is not None and total > len(series):
        title += f"\n{len(series)} of the {total} site-days drawn (the outlying sites first)"
    fig.suptitle(title, fontsize=9)
    fig.tight_layout()
    return fig


#: Sites named beside their points in the latitude figure (beyond it only the outliers are named).
NAMED_SITES = 30


def latitude_line_figure(position_km, latitude_deg, sigma_deg, names, outlier, intercept_deg, slope_deg_per_km):
    """Astronomical latitude against north-south position with the fitted line, and below it each
    site's residual from the line in arcminutes, where its error bar (1 sigma) is visible."""
    plt = _plt()
    x = np.asarray(position_km, float)
    y = np.asarray(latitude_deg, float)
    s = np.asarray(sigma_deg, float)
    out = np.asarray(outlier, bool)
    x0 = x - x.min()
    fig, (ax, rx) = plt.subplots(2, 1, figsize=(7.0, 4.2), sharex=True, gridspec_kw={"height_ratios": [3, 2]})
    ax.plot(x0[~out], y[~out], "o", ms=4, color="C0", label="sites (astronomical latitude)")
    if out.any():
        ax.plot(x0[out], y[out], "x", ms=6, color="C3", label="outliers (left out of the fit)")
    grid = np.linspace(x.min(), x.max(), 50)
    ax.plot(grid - x.min(), intercept_deg + slope_deg_per_km * grid, "-", lw=1, color="0.3",
            label=f"fit: R = {1 / np.radians(slope_deg_per_km):,.0f} km")
    named = np.ones(x.size, bool) if x.size <= NAMED_SITES else out  # many sites: only the outliers named
    for xi, yi, name in zip(x0[named], y[named], np.asarray(names, dtype=object)[named], strict=True):
        ax.annotate(name, (xi, yi), textcoords="offset points", xytext=(4, -10), fontsize=7)
    ax.set_ylabel("latitude (deg)")
    ax.set_title("Latitude from the Sun against distance along the meridian")
    ax.legend(fontsize=7, loc="upper left")
    resid = (y - (intercept_deg + slope_deg_per_km * x)) * 60.0
    rx.errorbar(x0[~out], resid[~out], yerr=s[~out] * 60.0, fmt="o", ms=4, capsize=3, color="C0",
                label="residual ± 1 sigma")
    if out.any():
        rx.errorbar(x0[out], resid[out], yerr=s[out] * 60.0, fmt="x", ms=6, capsize=3, color="C3")
    rx.axhline(0.0, color="0.3", lw=0.8)
    rx.set_ylabel("residual (arcmin)")
    rx.set_xlabel("north-south distance from the southernmost site (km)")
    rx.legend(fontsize=7, loc="upper left")
    fig.tight_layout()
    return fig


def ladder_figure(rows: list[dict]):
    """Each measured rung against the value it is compared with: the ratio with its 68 % interval.

    ``rows``: the ladder's comparison rows with a ``label``; the Sun's distance in au repeats the
    one in km and is left out. An interval with no upper bound is drawn as an arrow, and only
    then does the legend name arrows.
    """
    from matplotlib.lines import Line2D
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

    plt = _plt()
    rows = [r for r in rows if r["measured"] is not None and r.get("quantity") != "sun_distance_au"]
    fig, ax = plt.subplots(figsize=(7.0, 1.1 + 0.34 * max(len(rows), 1)))
    arrows = False
    spans = [1.0]
    for k, r in enumerate(rows):
        m = r["measured"]
        low = m["low"] / r["modern"]
        high = (m["high"] / r["modern"]) if m["high"] is not None else None
        spans += [low] + ([high] if high is not None else [])
        if m["value"] is not None:  # None: a lower bound only (no point, the arrow below)
            spans.append(m["value"] / r["modern"])
            ax.plot([m["value"] / r["modern"]], [k], "o", color="C0", ms=5, zorder=3)
        if high is None:
            arrows = True
            ax.annotate("", xy=(max(4.0, low * 4), k), xytext=(low, k),
                        arrowprops={"arrowstyle": "->", "color": "C0", "lw": 2})
        else:
            ax.plot([low, high], [k, k], "-", color="C0", lw=2.5)
    ax.axvline(1.0, color="C3", lw=1, ls="--")
    ax.set_yticks(range(len(rows)))
    ax.set_yticklabels([r["label"] for r in rows])
    ax.set_ylim(-0.6, len(rows) - 0.4)
    if min(spans) < 0.5 or max(spans) > 2.0 or arrows:
        ax.set_xscale("log")
        lo, hi = min(spans) / 1.3, max(max(spans) * 1.3, 4.5 if arrows else 0)
        ax.set_xlim(lo, hi)
        ticks = [t for t in (0.25, 0.5, 0.75, 1, 1.5, 2, 3, 4, 6, 8) if lo <= t <= hi]
        ax.xaxis.set_major_locator(FixedLocator(ticks))
        ax.xaxis.set_minor_locator(NullLocator())
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    handles = [Line2D([], [], color="C0", marker="o", lw=2.5, label="measured, with its 68 % interval"),
               Line2D([], [], color="C3", ls="--", label="modern value for this campaign's sites and dates")]
    if arrows:
        handles.append(Line2D([], [], color="C0", marker=">", lw=2, label="lower bound only (no upper bound)"))
    # the legend below the axes, where it can hide no point (inside, it covered the radius's)
    legend_inches = 0.3
    fig.legend(handles=handles, fontsize=7, loc="lower center", ncol=len(handles), frameon=False)
    ax.set_xlabel("measured / compared value (1 = agreement)")
    ax.set_title("What the campaign measured, against what a perfect measurement gives")
    fig.tight_layout(rect=(0.0, legend_inches / fig.get_figheight(), 1.0, 1.0))
    return fig
