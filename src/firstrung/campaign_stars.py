"""The campaign file's ``[[star]]`` tables: the stars a campaign measures.

::

    [[star]]
    id = "dcep"
    name = "delta Cephei"
    ra_deg = 337.2928      # ICRS
    dec_deg = 58.4152
    extinction_mag = 0.23  # in the light-curve log's band
    extinction_sigma_mag = 0.03
    hip = 110991           # optional: its Hipparcos number
    period_days = 5.366    # optional: a Cepheid's known period, for planning

A campaign may hold stars and no ``[[site]]`` at all. Problems are raised by the
campaign reader (one line naming the file and the key, e.g. ``star[2].ra_deg``).
"""

from __future__ import annotations

from firstrung.campaign_model import SITE_ID_PATTERN, Star

_STAR_KEYS = ("id", "name", "ra_deg", "dec_deg", "extinction_mag", "extinction_sigma_mag", "hip", "period_days")


def read_stars(reader, value: object) -> tuple[Star, ...]:
    """The ``[[star]]`` tables, checked by the campaign's reader (``()`` when there are none)."""
    if value is None:
        return ()
    if not isinstance(value, list):
        raise reader.error("star", "expected stars written as [[star]] (an array of tables)")
    stars: list[Star] = []
    first_use: dict[str, str] = {}
    for number, entry in enumerate(value, start=1):
        prefix = f"star[{number}]"
        star = _star(reader, entry, prefix)
        if star.id.lower() in first_use:
            raise reader.error(f"{prefix}.id", f"duplicate star id {star.id!r} (already used by {first_use[star.id.lower()]})")
        first_use[star.id.lower()] = prefix
        stars.append(star)
    return tuple(stars)


def _star(reader, value: object, prefix: str) -> Star:
    table = reader.table(value, prefix, "[[star]]")
    reader.check_keys(table, prefix, _STAR_KEYS)
    star_id = table.get("id")
    if not isinstance(star_id, str) or not SITE_ID_PATTERN().match(star_id):
        shown = "missing" if star_id is None else f"got {star_id!r}"
        raise reader.error(f"{prefix}.id", f"expected a star id of letters, digits, '-' and '_' such as 'dcep', {shown}")
    name = reader.text(table, prefix, "name", "the star's name as text")
    ra = reader.required_number(table, prefix, "ra_deg", "a right ascension from 0 to 360 degrees (not hours)",
                                lambda x: 0.0 <= x < 360.0)
    dec = reader.required_number(table, prefix, "dec_deg", "a declination between -90 and 90 degrees",
                                 lambda x: -90.0 <= x <= 90.0)
    extinction = reader.number(table, prefix, "extinction_mag", "a non-negative extinction in magnitudes",
                               lambda x: 0.0 <= x < 30.0)
    extinction_sigma = reader.number(table, prefix, "extinction_sigma_mag", "a non-negative error in magnitudes",
                                     lambda x: 0.0 <= x < 10.0)
    if extinction_sigma is not None and extinction is None:
        raise reader.error(f"{prefix}.extinction_sigma_mag", f"given without {prefix}.extinction_mag")
    hip = reader.number(table, prefix, "hip", "a Hipparcos number from 1 to 120404",
                        lambda x: x == int(x) and 1 <= x <= 120404)
    period = reader.number(table, prefix, "period_days", "a positive period in days", lambda x: 0.0 < x < 1000.0)
    return Star(star_id, star_id if name is None else name.strip(), ra, dec, extinction, extinction_sigma,
                None if hip is None else int(hip), period)
