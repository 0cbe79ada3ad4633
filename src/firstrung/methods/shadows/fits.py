"""The shadow reduction's fits: one site's series for its latitude and clock offset, the sites' positions\nalong the meridian (WGS84 arcs or surveyed baselines), and the line of latitude against position.\n"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from firstrung.geodesy import (
    baseline_north_south_km,
    geodesic_inverse,
    meridian_arc_m,
)
from firstrung.methods.shadows.inputs import (
    _FIT_ITERATIONS,
    CLOCK_PRIOR_SIGMA_S,
    POSITION_SIGMA_KM,
    BaselineInput,
    SiteInput,
)


@dataclass(frozen=True)
class SeriesFit:
    """Fitted astronomical latitude and clock correction of each series (site and day)."""

    latitude_rad: np.ndarray
    clock_correction_s: np.ndarray  # seconds to ADD to the logged times
    covariance: np.ndarray  # shape (n_series, 2, 2) in (rad, s)
    chi2: np.ndarray
    count: np.ndarray
    gain_latitude: np.ndarray  # per reading: d(latitude)/d(altitude of that reading)
    latitude_information: np.ndarray  # the latitude's normal-equation entry: 1/variance with the clock known


def fit_series(
    group,
    n_groups,
    altitude_rad,
    sigma_rad,
    declination_rad,
    hour_angle_rad,
    declination_rate_rad_s,
    hour_angle_rate_rad_s,
    latitude_guess_rad,
    clock_prior_sigma_s=CLOCK_PRIOR_SIGMA_S,
) -> SeriesFit:
    """Fit latitude and clock correction for every series at once (Gauss-Newton).

    Model of reading k of series g: ``sin a_k = sin(phi) sin(dec) + cos(phi)
    cos(dec) cos(H)`` with ``dec = dec_k + dec'_k u`` and ``H = H_k + H'_k u``,
    u the clock correction of the series. The parameter arrays may carry a
    leading axis of samples (Monte Carlo): ``altitude_rad`` of shape (S, n).

    Parameters
    ----------
    group : int array (n,)
        Series of each reading, 0..n_groups-1.
    altitude_rad, sigma_rad : arrays (..., n)
        True altitude of the Sun's centre and its reading error [rad].
    declination_rad, hour_angle_rad : arrays (n,)
        Apparent topocentric declination and hour angle at the logged time [rad].
    declination_rate_rad_s, hour_angle_rate_rad_s : arrays (n,)
        Their rates [rad/s].
    latitude_guess_rad : array (n_groups,)
        Starting latitude, which also picks the side of the Sun (the site's
        geodetic latitude).

    Returns
    -------
    SeriesFit
    """
    alt = np.atleast_2d(altitude_rad)
    n_samples = alt.shape[0]
    weight = 1.0 / np.broadcast_to(sigma_rad, alt.shape) ** 2
    lat = np.broadcast_to(latitude_guess_rad, (n_samples, n_groups)).copy()
    u = np.zeros((n_samples, n_groups))
    flat = (np.arange(n_samples)[:, None] * n_groups + group[None, :]).ravel()
    size = n_samples * n_groups
    prior = 1.0 / clock_prior_sigma_s**2

    def sums(values):
        return np.bincount(flat, weights=values.ravel(), minlength=size).reshape(n_samples, n_groups)

    def normal_terms(lat, u):
        """Residuals, weighted partial derivatives and normal-equation sums at (lat, u).

        The same numbers as the spherical formula written out term by term, each product formed once and
        the arrays reused in place (a long log's fit spends its time moving whole columns): ``cos(phi)
        sin(dec)`` and ``sin(phi) cos(dec)`` serve both partial derivatives, ``cos(phi) cos(dec)`` the model
        and the hour angle's (``-x * y == -(x * y)`` exactly), ``weight * d_lat`` and ``weight * d_u`` every sum.
        """
        u_k = u[:, group]
        dec = declination_rate_rad_s * u_k
        dec += declination_rad
        ha = np.multiply(hour_angle_rate_rad_s, u_k, out=u_k)
        ha += hour_angle_rad
        # the latitude's sine and cosine once per series, then to its readings (the same numbers as per reading)
        sin_lat, cos_lat = np.sin(lat)[:, group], np.cos(lat)[:, group]
        sin_dec = np.sin(dec)
        cos_dec = np.cos(dec, out=dec)
        a = cos_lat * sin_dec  # cos(phi) sin(dec)
        b = sin_lat * cos_dec  # sin(phi) cos(dec)
        cc = np.multiply(cos_lat, cos_dec, out=cos_lat)  # cos(phi) cos(dec)
        ss = np.multiply(sin_lat, sin_dec, out=sin_lat)  # sin(phi) sin(dec)
        del sin_dec, cos_dec
        cos_ha = np.cos(ha)
        sin_ha = np.sin(ha, out=ha)
        # sin a = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H)
        model = np.multiply(cc, cos_ha)
        model += ss
        del ss
        np.clip(model, -1.0, 1.0, out=model)
        np.arcsin(model, out=model)
        cos_alt = np.cos(model)
        np.maximum(cos_alt, 1e-9, out=cos_alt)
        # d(a)/d(phi) = (cos(phi) sin(dec) - sin(phi) cos(dec) cos(H)) / cos(a)
        d_lat = np.multiply(b, cos_ha)
        np.subtract(a, d_lat, out=d_lat)
        d_lat /= cos_alt
        # d(a)/d(dec) = (sin(phi) cos(dec) - cos(phi) sin(dec) cos(H)) / cos(a), times the declination's rate
        a *= cos_ha
        d_dec = np.subtract(b, a, out=b)
        del a, cos_ha
        d_dec /= cos_alt
        d_dec *= declination_rate_rad_s
        # d(a)/d(H) = -cos(phi) cos(dec) sin(H) / cos(a), times the hour angle's rate
        d_ha = np.multiply(cc, sin_ha, out=cc)
        del sin_ha
        d_ha /= cos_alt
        np.negative(d_ha, out=d_ha)
        del cos_alt
        d_ha *= hour_angle_rate_rad_s
        d_u = np.add(d_ha, d_dec, out=d_ha)
        del d_dec
        r = np.subtract(alt, model, out=model)
        w_lat = weight * d_lat
        w_u = weight * d_u
        n11 = sums(w_lat * d_lat)
        n12 = sums(w_lat * d_u)
        n22 = sums(w_u * d_u) + prior
        return r, d_lat, d_u, w_lat, w_u, n11, n12, n22

    for _ in range(_FIT_ITERATIONS):
        r, d_lat, d_u, w_lat, w_u, n11, n12, n22 = normal_terms(lat, u)
        del d_lat, d_u
        b1 = sums(np.multiply(w_lat, r, out=w_lat))
        b2 = sums(np.multiply(w_u, r, out=w_u)) - prior * u
        del r, w_lat, w_u
        det = n11 * n22 - n12**2
        lat = lat + (n22 * b1 - n12 * b2) / det
        u = u + (n11 * b2 - n12 * b1) / det
    # final model, residuals and covariance
    r, d_lat, d_u, w_lat, w_u, n11, n12, n22 = normal_terms(lat, u)
    del w_lat, w_u
    det = n11 * n22 - n12**2
    cov = np.stack([np.stack([n22, -n12], -1), np.stack([-n12, n11], -1)], -2) / det[..., None, None]
    # gain: d(latitude)/d(altitude_k) = row of C J^T W for the latitude parameter
    c11 = (n22 / det)[:, group]
    c12 = (-n12 / det)[:, group]
    gain = np.multiply(c11, d_lat, out=c11)
    gain += np.multiply(c12, d_u, out=c12)
    del c12, d_lat, d_u
    gain *= weight
    np.square(r, out=r)
    chi2 = sums(np.multiply(weight, r, out=r)) + prior * u**2
    del r
    count = np.bincount(group, minlength=n_groups)
    squeeze = np.ndim(altitude_rad) == 1
    pick = (lambda a: a[0]) if squeeze else (lambda a: a)
    return SeriesFit(pick(lat), pick(u), pick(cov), pick(chi2), count, pick(gain), pick(n11))


@dataclass(frozen=True)
class LineFit:
    """Weighted line latitude = intercept + slope * position (slope = 1/R)."""

    intercept_rad: float
    slope_rad_per_km: float
    covariance: np.ndarray
    gain_slope: np.ndarray  # d(slope)/d(latitude_i)
    chi2: float
    dof: int


def fit_line(position_km, latitude_rad, variance_rad2) -> LineFit:
    """Weighted least-squares line through (position, latitude) with independent errors.

    >>> f = fit_line(np.array([0.0, 100.0]), np.array([0.0, 100 / 6371.0]), np.array([1e-8, 1e-8]))
    >>> round(1 / f.slope_rad_per_km, 3)
    6371.0
    """
    x = np.asarray(position_km, float)
    y = np.asarray(latitude_rad, float)
    w = 1.0 / np.asarray(variance_rad2, float)
    design = np.stack([np.ones_like(x), x], axis=1)
    normal = design.T @ (w[:, None] * design)
    cov = np.linalg.inv(normal)
    operator = cov @ (design.T * w)
    params = operator @ y
    resid = y - design @ params
    chi2 = float(np.sum(w * resid**2))
    return LineFit(float(params[0]), float(params[1]), cov, operator[1], chi2, len(x) - 2)


@dataclass(frozen=True)
class Positions:
    """North-south positions of the sites [km] and their error operators, group by group.

    Sites joined by surveyed baselines form a group placed by one map
    position, its first site's (its anchor); a site without a baseline is a
    group of its own. Every operator touches only its own group, so memory
    and time grow with the sites and baselines, never with their square.
    """

    position_km: np.ndarray
    anchor: np.ndarray  # index of the site whose map position places site i's group
    map_gain: np.ndarray  # d(position_i)/d(map observation of anchor[i]); map observations have POSITION_SIGMA_KM
    baseline_blocks: tuple[tuple[np.ndarray, np.ndarray, np.ndarray], ...]  # (sites, baselines, d(position)/d(baseline))
    baseline_sigma_km: np.ndarray
    surveyed: np.ndarray  # bool: site position tied to a baseline

    def variance_km2(self) -> np.ndarray:
        """Variance of each site's position [km^2]: the map's share and the baselines'."""
        var = POSITION_SIGMA_KM**2 * self.map_gain**2
        for sites, bases, gain in self.baseline_blocks:
            var[sites] += (gain**2) @ (self.baseline_sigma_km[bases] ** 2)
        return var

    def map_quadratic(self, g: np.ndarray) -> np.ndarray:
        """g C_map g over the last axis of ``g``: the map positions' share of the variance of a linear function."""
        u = np.asarray(g, float) * self.map_gain
        if np.array_equal(self.anchor, np.arange(self.anchor.size)):
            return POSITION_SIGMA_KM**2 * np.sum(u**2, axis=-1)
        order = np.argsort(self.anchor, kind="stable")
        starts = np.flatnonzero(np.r_[True, np.diff(self.anchor[order]) != 0])
        per_group = np.add.reduceat(u[..., order], starts, axis=-1)
        return POSITION_SIGMA_KM**2 * np.sum(per_group**2, axis=-1)

    def baseline_quadratic(self, g: np.ndarray) -> np.ndarray:
        """g C_baselines g over the last axis of ``g``."""
        g = np.asarray(g, float)
        out = np.zeros(g.shape[:-1])
        for sites, bases, gain in self.baseline_blocks:
            out = out + np.sum((g[..., sites] @ gain) ** 2 * self.baseline_sigma_km[bases] ** 2, axis=-1)
        return out

    def draw(self, rng: np.random.Generator, samples: int) -> np.ndarray:
        """``samples`` draws of every site's position (samples x sites), the map's errors then the baselines'."""
        n = self.position_km.size
        map_error = POSITION_SIGMA_KM * rng.standard_normal((samples, n))
        pos = self.position_km[None, :] + map_error[:, self.anchor] * self.map_gain
        if self.baseline_sigma_km.size:
            base_error = rng.standard_normal((samples, self.baseline_sigma_km.size)) * self.baseline_sigma_km
            for sites, bases, gain in self.baseline_blocks:
                pos[:, sites] += base_error[:, bases] @ gain.T
        return pos


def north_south_positions(sites: tuple[SiteInput, ...], baselines: tuple[BaselineInput, ...]) -> Positions:
    """Positions of the sites along the meridian, the map's replaced by surveyed baselines.

    Sites joined by baselines form groups; inside a group only the baselines
    give relative positions (least squares if they form loops) and the group
    is placed by its first site's map position. The north-south part of a
    baseline is ``distance * cos(bearing)``; without a bearing, the map's
    bearing between the two sites is used. Each group is solved on its own.
    """
    n = len(sites)
    lat = np.array([s.latitude_deg for s in sites], float)
    map_km = meridian_arc_m(lat) / 1000.0 if n else np.zeros(0)
    parent = list(range(n))

    def root(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    values, sigmas = [], []
    for b in baselines:
        if b.bearing_deg is not None:
            ns = float(baseline_north_south_km(b.distance_km, b.bearing_deg))
        else:
            s1, s2 = sites[b.first], sites[b.second]
            map_distance, azimuth, _ = geodesic_inverse(s1.latitude_deg, s1.longitude_deg, s2.latitude_deg, s2.longitude_deg)
            ns = b.distance_km * (map_km[b.second] - map_km[b.first]) / float(map_distance)
        values.append(ns)
        sigmas.append(max(b.sigma_km, 1e-6))
        parent[root(b.first)] = root(b.second)
    group = np.array([root(i) for i in range(n)], dtype=np.int64)
    first_of: dict[int, int] = {}
    for i, r in enumerate(group.tolist()):
        first_of.setdefault(r, i)
    anchor = np.array([first_of[r] for r in group.tolist()], dtype=np.int64)
    position = np.array(map_km, float)
    map_gain = np.ones(n)
    blocks = []
    in_group: dict[int, list[int]] = {}
    for k, b in enumerate(baselines):
        in_group.setdefault(int(anchor[b.first]), []).append(k)
    for a, bases in in_group.items():
        members = np.flatnonzero(anchor == a)
        local = {int(i): j for j, i in enumerate(members)}
        m = members.size
        design = np.zeros((len(bases) + 1, m))
        for r, k in enumerate(bases):
            design[r, local[baselines[k].second]], design[r, local[baselines[k].first]] = 1.0, -1.0
        design[-1, local[a]] = 1.0
        w = 1.0 / np.array([sigmas[k] for k in bases] + [POSITION_SIGMA_KM]) ** 2
        normal = design.T @ (w[:, None] * design)
        operator = np.linalg.solve(normal, design.T * w)
        position[members] = operator @ np.array([values[k] for k in bases] + [map_km[a]])
        map_gain[members] = operator[:, -1]
        blocks.append((members, np.array(bases, dtype=np.int64), operator[:, :-1]))
    surveyed = np.zeros(n, bool)
    for b in baselines:
        surveyed[b.first] = surveyed[b.second] = True
    return Positions(
        position_km=position,
        anchor=anchor,
        map_gain=map_gain,
        baseline_blocks=tuple(blocks),
        baseline_sigma_km=np.array(sigmas, float),
        surveyed=surveyed,
    )
