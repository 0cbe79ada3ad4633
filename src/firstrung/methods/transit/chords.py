"""The planet's chord across the Sun's disc as seen from each site: for the field sheet's chart and
the report's figure.

Positions are offsets of the planet's centre from the Sun's centre on the sky, east and north
(north: the true celestial pole of date), in units of the Sun's apparent radius seen from the
site. The chord of a site differs from the geocentric one by the parallax: a few hundredths of
the radius for Mercury, which is why the figure also draws each chord's offset from the
geocentric one, enlarged.
"""

from __future__ import annotations

import numpy as np

from firstrung.methods.transit.prediction import SUN_RADIUS_KM, Transits, site_itrs_km

#: Samples along each chord.
TRACK_SAMPLES = 61


def disc_offsets(transits: Transits, k: int, tt_jd, itrs_km: np.ndarray | None):
    """The planet's offset from the Sun's centre, east and north [Sun's radii], for sites and times.

    Parameters
    ----------
    transits : Transits
    k : int
        Which transit.
    tt_jd : numpy.ndarray, shape (n,)
        Instants [TT JD], one per site column (or per sample with ``itrs_km`` None).
    itrs_km : numpy.ndarray, shape (3, n), or None
        Each instant's site [km]; None for the geocentre.

    Returns
    -------
    east, north : numpy.ndarray, shape (n,)
    """
    geometry = transits.geometries[k]
    planet, sun, _ = geometry.topocentric(np.asarray(tt_jd, dtype=float), itrs_km)
    sun_distance = np.sqrt(np.sum(sun**2, axis=0))
    u_sun = sun / sun_distance
    u_planet = planet / np.sqrt(np.sum(planet**2, axis=0))
    pole = np.array([0.0, 0.0, 1.0])[:, None]
    east = np.cross(pole, u_sun, axis=0)
    east /= np.sqrt(np.sum(east**2, axis=0))
    north = np.cross(u_sun, east, axis=0)
    d = u_planet - u_sun
    radius_rad = np.arcsin(SUN_RADIUS_KM / sun_distance)
    return np.sum(d * east, axis=0) / radius_rad, np.sum(d * north, axis=0) / radius_rad


def site_chords(transits: Transits, k: int, latitude_deg, longitude_deg, elevation_m=0.0,
                samples: int = TRACK_SAMPLES):
    """Each site's chord from the geocentric C1 to C4: (times [TT JD], east, north), shapes (samples,), (n, samples).

    Also returns the geocentric chord as ``(east, north)`` of shape (samples,).
    """
    first = transits.contacts_tt_jd["C1"][k]
    last = transits.contacts_tt_jd["C4"][k]
    t = np.linspace(first, last, samples)
    itrs = site_itrs_km(latitude_deg, longitude_deg, elevation_m)
    n = itrs.shape[1]
    tt = np.tile(t, n)
    sites = np.repeat(itrs, samples, axis=1)
    east, north = disc_offsets(transits, k, tt, sites)
    geo_east, geo_north = disc_offsets(transits, k, t, None)
    return t, east.reshape(n, samples), north.reshape(n, samples), (geo_east, geo_north)


def planet_radius_on_disc(transits: Transits, k: int) -> float:
    """The planet's apparent radius in Sun's radii at greatest transit (geocentric) [1]."""
    return float(transits.planet_semidiameter_arcsec[k] / transits.sun_semidiameter_arcsec[k])


def chords_figure(transits: Transits, k: int, names, latitude_deg, longitude_deg, elevation_m=0.0):
    """The chords across the Sun's disc seen from each site, north up and east left as on the sky.

    Left: the whole disc with the geocentric chord and the planet at each geocentric contact.
    Right: each site's chord minus the geocentric one, enlarged, across the middle of the
    transit (the parallax the campaign measures).

    Returns
    -------
    matplotlib.figure.Figure
        Not shown and not saved; the caller decides.
    """
    from matplotlib.figure import Figure

    t, east, north, (ge, gn) = site_chords(transits, k, latitude_deg, longitude_deg, elevation_m)
    fig = Figure(figsize=(7.2, 3.6))
    ax = fig.add_subplot(1, 2, 1)
    theta = np.linspace(0, 2 * np.pi, 361)
    ax.fill(np.cos(theta), np.sin(theta), color="#fbe9b7", zorder=0)
    ax.plot(np.cos(theta), np.sin(theta), color="0.3", lw=1, label="the Sun's limb")
    ax.plot(-ge, gn, color="0.2", lw=1.2, label=f"{transits.planet[k].capitalize()}'s chord (geocentric)")
    rp = planet_radius_on_disc(transits, k)
    geo_contacts = np.array([transits.contacts_tt_jd[c][k] for c in ("C1", "C2", "C3", "C4")])
    ok = np.isfinite(geo_contacts)
    ce, cn = disc_offsets(transits, k, geo_contacts[ok], None)
    for x, y in zip(ce, cn, strict=True):
        ax.fill(-x + rp * np.cos(theta), y + rp * np.sin(theta), color="0.1")
    ax.set_aspect("equal")
    ax.set_xlim(-1.15, 1.15)
    ax.set_ylim(-1.15, 1.15)
    ax.set_xlabel("east ← → west (Sun's radii)")
    ax.set_ylabel("north (Sun's radii)")
    ax.legend(loc="lower left", fontsize=7, frameon=False)
    ax.set_title("the transit on the disc", fontsize=9)
    ax2 = fig.add_subplot(1, 2, 2)
    hours = (t - t[0]) * 24.0
    radius_arcsec = float(transits.sun_semidiameter_arcsec[k])
    for j, name in enumerate(names):
        # the offset of the site's chord from the geocentric one, perpendicular to the track
        de, dn = east[j] - ge, north[j] - gn
        along = np.gradient(ge), np.gradient(gn)
        norm = np.hypot(*along)
        perpendicular = (de * -along[1] + dn * along[0]) / norm
        ax2.plot(hours, perpendicular * radius_arcsec, lw=1, label=str(name))
    ax2.axhline(0.0, color="0.5", lw=0.6)
    ax2.set_xlabel("hours after geocentric C1")
    ax2.set_ylabel("chord shift from geocentric (″)")
    ax2.set_title("each site's chord, shifted by parallax", fontsize=9)
    ax2.legend(fontsize=7, frameon=False, ncol=2)
    fig.tight_layout()
    return fig


__all__ = ["chords_figure", "disc_offsets", "planet_radius_on_disc", "site_chords"]
