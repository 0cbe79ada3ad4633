"""The methods of the ladder, one package each, and the registry that names them.

Each method (``shadows``: noon Sun -> the Earth's radius; ``eclipse``: lunar
eclipse -> the Moon's distance; ``phases``: half moon -> the Sun/Moon distance
ratio; ``transit``: a transit of Mercury or Venus -> the solar parallax; ``parallax``:
a star's yearly parallax -> its distance in parsecs; ``cepheids``: a Cepheid's period
and mean magnitude -> its distance) is one package holding everything specific to it:

``prediction``   what the ephemeris predicts, for planning
``log``          its log's columns and row parsing (on :mod:`firstrung.tabular`)
``check``        its log's diagnoses (wrong clocks, units, edges, ...)
``reduction``    the reduction itself (pure functions on arrays)
``run``          from a campaign file to a result (reads, never prints)
``rehearsal``    synthetic logs with stated errors (``LOG_COLUMNS``, ``rehearsal_rows``)
``present``      JSON in the contract's keys
``commands``     its ``plan``, ``reduce`` and ``simulate`` commands and their tables
``rung``         what it gives the application layer: the check, the ladder's draws,
                 the report's section

The application layer (:mod:`firstrung.cli`, :mod:`firstrung.app`) asks
:data:`REGISTRY` instead of naming each method, so a new method appears in
``plan``, ``reduce``, ``simulate``, ``check``, ``ladder`` and ``report`` from
its entry here alone. The registry imports nothing heavy: a method's modules
load only when one of its commands runs (``firstrung --help`` stays fast).
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from types import ModuleType


@dataclass(frozen=True)
class Method:
    """One method's entry: its names in the command line and the campaign file, and its package.

    Attributes
    ----------
    name : str
        The method's name (its package under ``firstrung.methods``).
    log_kind : str
        Its key in the campaign's ``[logs]`` table.
    plan_command, reduce_command, simulate_command : str
        Its sub-command names under ``plan``, ``reduce`` and ``simulate``.
    plan_help, reduce_help, simulate_help : str
        Their one-line help, listed without importing the method.
    """

    name: str
    log_kind: str
    plan_command: str
    plan_help: str
    reduce_command: str
    reduce_help: str
    simulate_command: str
    simulate_help: str
    #: Other spellings that reach the same commands in every group, hidden from the help
    #: (the Contract's ``plan eclipses`` beside ``reduce eclipse``).
    aliases: tuple[str, ...] = ()

    @property
    def package(self) -> str:
        """The method's package, e.g. ``firstrung.methods.shadows``."""
        return f"{__name__}.{self.name}"

    def module(self, part: str) -> ModuleType:
        """One module of the method's package (imported on first use), e.g. ``module("commands")``."""
        return importlib.import_module(f"{self.package}.{part}")


#: Every method, in the ladder's order (a later rung may use an earlier one's result).
REGISTRY: tuple[Method, ...] = (
    Method(
        "shadows", "shadows",
        "shadows", "Rank the days of a range by the precision of the Earth's radius they allow.",
        "shadows", "The Earth's radius from noon gnomon shadows at two or more sites.",
        "shadows", "Shadow logs: every site with a gnomon, every 2 minutes around local apparent noon.",
    ),
    Method(
        "eclipse", "eclipse",
        "eclipse", "Lunar eclipses from --from to --to: contacts, and each site's Moon and Sun at each contact.",
        "eclipse", "The shadow/Moon ratio and the Moon's distance from umbral contacts and crater timings.",
        "eclipse", "Eclipse logs: umbral contacts and crater timings of every eclipse each site can time in the dark.",
        aliases=("eclipses",),
    ),
    Method(
        "phases", "phases",
        "phases", "First and last quarters: quadrature, the true half moon, and when Sun and Moon are both up.",
        "phases", "D_sun/D_moon with its 68 % interval, and how much better the angle or the timing must be.",
        "phases", "Half-moon logs: timings by eye, measured Sun-Moon angles and photo series of the lit fraction.",
    ),
    Method(
        "transit", "transits",
        "transit", "Transits of Mercury and Venus: geocentric contacts, and each site's contacts and Sun altitude.",
        "transit", "The solar parallax and the Sun's distance from timed contacts of a transit.",
        "transit", "Transit logs: C1-C4 at every site of every transit of the range where the Sun is up.",
        aliases=("transits",),
    ),
    Method(
        "parallax", "astrometry",
        "parallax", "Dates when each star's parallax displacement is largest and it is well placed at the sites.",
        "parallax", "Each star's parallax, distance and proper motion from its measured positions.",
        "parallax", "Astrometry logs: each star's place every few weeks when a site sees it in a dark sky.",
    ),
    Method(
        "cepheids", "light_curves",
        "cepheids", "Which nights cover each Cepheid's phase most evenly for its period.",
        "cepheids", "Each Cepheid's period, mean magnitude and distance through a period-luminosity relation.",
        "cepheids", "Light-curve logs: one magnitude of each star every night a site sees it in a dark sky.",
    ),
)


def method(name: str) -> Method:
    """The registry's entry of one method, by name.

    >>> method("eclipse").plan_command
    'eclipse'
    """
    for m in REGISTRY:
        if m.name == name:
            return m
    raise KeyError(name)


def by_log_kind(kind: str) -> Method:
    """The method that reads a kind of log (a ``[logs]`` key)."""
    for m in REGISTRY:
        if m.log_kind == kind:
            return m
    raise KeyError(kind)


__all__ = ["REGISTRY", "Method", "by_log_kind", "method"]
