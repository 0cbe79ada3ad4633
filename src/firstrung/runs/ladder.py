"""``ladder`` from a campaign file: reduce every rung that has logs, then chain them."""

from __future__ import annotations

from dataclasses import dataclass, field

from ..campaign import Campaign, read_campaign
from ..errors import RowProblem
from ..ladder import Ladder, LadderInputs, climb, earth_radius_draw


@dataclass(frozen=True)
class LadderRun:
    campaign: Campaign
    ladder: Ladder
    rung_runs: dict = field(default_factory=dict)
    problems: tuple[RowProblem, ...] = ()


def ladder_inputs(campaign_path) -> tuple[Campaign, LadderInputs, dict, tuple[RowProblem, ...]]:
    """Reduce each rung that has logs; the ones without stay out (shown as not measured)."""
    campaign = read_campaign(campaign_path)
    runs: dict = {}
    problems: list[RowProblem] = []
    sources = []
    earth = None
    if campaign.logs.get("shadows"):
        from .shadows import run_shadows

        shadow_run = run_shadows(campaign_path)
        runs["shadows"] = shadow_run
        problems.extend(shadow_run.problems)
        earth = earth_radius_draw(shadow_run.reduction.earth_radius_km)
        sources.append(("earth_radius_km", "noon shadows (reduce shadows)"))
    inputs = LadderInputs(earth_radius_km=earth, sources=tuple(sources))
    return campaign, inputs, runs, tuple(problems)


def run_ladder(campaign_path, *, samples: int, seed: int) -> LadderRun:
    campaign, inputs, runs, problems = ladder_inputs(campaign_path)
    return LadderRun(campaign, climb(inputs, samples=samples, seed=seed), runs, problems)
