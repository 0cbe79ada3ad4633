"""The Cepheid field sheet for one site and night (``sheet --kind cepheids``): the parallax method's
night sheet with rows for magnitudes (:mod:`firstrung.methods.parallax.sheet`)."""

from __future__ import annotations


def site_sheet(campaign, site_id: str, day: str, paper: str, blind: bool = False) -> tuple[str, str | None]:
    """One site's Cepheid sheet for the night of a day: its HTML (and no warning)."""
    from firstrung.methods.parallax.sheet import render_star_sheet

    return render_star_sheet(campaign, campaign.site(site_id), day, paper, blind=blind, kind="cepheids"), None
