"""``ladder`` from a campaign file: every registered method with logs gives its rung, then the chain.

Each method's ``rung.ladder_draws(ctx)`` reduces its logs and puts its draws
(the Gaussian variable of its result, :class:`~firstrung.uncertainty.Draw`),
sources, notes, problems and any stated factor into a :class:`RungContext`;
the methods run in the registry's order, so a later rung may use an earlier
one's reduction (``ctx.runs``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from firstrung.app.ladder import Ladder, LadderInputs, climb
from firstrung.campaign import read_campaign
from firstrung.campaign_model import Campaign
from firstrung.errors import RowProblem
from firstrung.methods import REGISTRY


@dataclass(frozen=True)
class LadderRun:
    campaign: Campaign
    ladder: Ladder
    rung_runs: dict = field(default_factory=dict)
    problems: tuple[RowProblem, ...] = ()
    notes: tuple[str, ...] = ()


@dataclass
class RungContext:
    """What the rungs of one campaign share while the ladder's inputs are gathered.

    ``draws`` and ``factors`` are keyword arguments of
    :class:`~firstrung.app.ladder.LadderInputs`; ``runs`` holds each method's
    reduction by name; ``overrides`` the modern values a rung states for its
    own epoch (quantity, value, source).
    """

    campaign_path: object
    campaign: Campaign
    runs: dict = field(default_factory=dict)
    draws: dict = field(default_factory=dict)
    factors: dict = field(default_factory=dict)
    problems: list = field(default_factory=list)
    sources: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    overrides: list = field(default_factory=list)


def ladder_inputs(campaign_path):
    """Reduce each rung that has logs; the ones without stay out (shown as not measured)."""
    campaign = read_campaign(campaign_path)
    ctx = RungContext(campaign_path, campaign)
    for method in REGISTRY:
        if campaign.logs.get(method.log_kind):
            method.module("rung").ladder_draws(ctx)
    inputs = LadderInputs(
        **ctx.draws, sources=tuple(ctx.sources), modern_overrides=tuple(ctx.overrides), **ctx.factors
    )
    return campaign, inputs, ctx.runs, tuple(ctx.problems), tuple(ctx.notes)


def run_ladder(campaign_path, *, samples: int, seed: int) -> LadderRun:
    campaign, inputs, runs, problems, notes = ladder_inputs(campaign_path)
    ladder = climb(inputs, samples=samples, seed=seed)
    if "shadows" in runs:
        ladder = _radius_sigma_as_reduced(ladder, runs["shadows"].reduction)
    return LadderRun(campaign, ladder, runs, problems, notes)


def _radius_sigma_as_reduced(ladder: Ladder, reduction) -> Ladder:
    """The radius rung as ``reduce shadows`` states it: its value, interval and sigma apart from the
    radius a perfect measurement at the campaign's sites gives (the rung's draw is Gaussian in 1/R, so
    the Monte Carlo gives the same interval to within its sampling noise)."""
    from dataclasses import replace

    from firstrung.methods.shadows.comparison import EXPECTED_SOURCE, radius_z

    rungs = []
    for r in ladder.rungs:
        if r.key == "earth_radius_km" and r.measured is not None:
            expected = float(reduction.expected_radius_km)
            r = replace(r, measured=reduction.earth_radius_km, modern=expected, modern_source=EXPECTED_SOURCE,
                        ratio_to_modern=reduction.earth_radius_km.value / expected, z_score=radius_z(reduction))
        rungs.append(r)
    return replace(ladder, rungs=tuple(rungs))
