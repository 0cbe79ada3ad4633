"""What the star rungs (parallax, Cepheids) hand the ladder: each star's distance draw on the parsec rung.

Both rungs reduce the campaign's own logs, note a reduction that cannot be made instead of
failing the ladder, and add one entry per star to ``ctx.draws["star_parallaxes"]``:
``(id, name, method, draw, modern)``, where ``modern`` is the catalogue's distance with its
source, or None.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable

from firstrung.errors import ComputationError, InputError
from firstrung.star_catalogue import CATALOGUE_SOURCE
from firstrung.uncertainty import Draw


def reduced_for_ladder(ctx, method: str, reduce: Callable):
    """The method's run on the campaign, kept in ``ctx.runs``; None (with a note) when it cannot be made."""
    try:
        run = reduce(ctx.campaign_path)
    except (InputError, ComputationError) as error:
        ctx.notes.append(f"{method} not reduced: {error}")
        return None
    ctx.runs[method] = run
    return run


def add_star_distances(ctx, run, kind: str, entries: Iterable[tuple[object, Draw, object]], source: str) -> None:
    """Add each ``(star, draw, catalogue entry or None)`` to the parsec rung, the source and the run's problems.

    ``kind`` names the draw's quantity for the ladder (``parallax``: in mas; ``cepheid``: a
    distance modulus in mag).
    """
    stars = list(ctx.draws.get("star_parallaxes", ()))
    for star, draw, cat in entries:
        modern = None if cat is None or not cat.parallax_mas > 0 else (
            1000.0 / cat.parallax_mas, f"HIP {cat.hip}, {CATALOGUE_SOURCE}")
        stars.append((star.id, star.name, kind, draw, modern))
    ctx.draws["star_parallaxes"] = tuple(stars)
    ctx.sources.append(("star_distance_pc", source))
    ctx.problems.extend(run.problems)
