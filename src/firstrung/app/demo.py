"""The bundled demo: an invented campaign's logs simulated, checked, reduced, chained and reported.

Everything is written into one folder: the campaign file, its logs (made by
the rehearsal simulation at fixed seeds, with a few blunders on purpose),
the check's and each reduction's JSON, the ladder, and the report.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources
from pathlib import Path

#: The demo's European sites, which take part in every rung; the others time the transit only.
EUROPEAN_SITES = ("fjell", "lowmead", "sardo")
#: What the demo simulates: (kind, first day, last day, seed, the sites that log it (None: all), options).
DEMO_LOGS = (
    ("shadows", "2027-03-22", "2027-03-23", 20270322, EUROPEAN_SITES, {"blunders": ("clock", "wild", "duplicate")}),
    ("eclipse", "2029-12-01", "2029-12-31", 20291220, EUROPEAN_SITES, {"late_contact": True}),
    ("phases", "2027-01-01", "2027-03-31", 1, EUROPEAN_SITES, {}),
    ("transits", "2032-11-13", "2032-11-13", 20321113, None, {"swap_label": True}),
    ("astrometry", "2027-01-01", "2027-12-31", 2027, EUROPEAN_SITES, {"star_id": "cyg61"}),
    ("light_curves", "2027-09-01", "2027-09-30", 5366, EUROPEAN_SITES, {"star_id": "dcep"}),
)
DEMO_SEED = 1
DEMO_SAMPLES = 100_000


@dataclass(frozen=True)
class DemoRun:
    folder: Path
    files: dict
    ladder: object
    check_flags: int


def demo_campaign_text() -> str:
    """The bundled demo campaign file."""
    return resources.files("firstrung").joinpath("data/demo/campaign.toml").read_text(encoding="utf-8")


def demo_logs(campaign) -> dict[str, str]:
    """CSV text of each demo log, by file name (deterministic)."""
    import dataclasses

    from firstrung.methods import by_log_kind
    from firstrung.output import rows_to_csv

    out = {}
    for kind, first, last, seed, sites, options in DEMO_LOGS:
        rehearsal = by_log_kind(kind).module("rehearsal")
        logged = campaign if sites is None else dataclasses.replace(
            campaign, sites=tuple(s for s in campaign.sites if s.id in sites))
        rows, columns = rehearsal.rehearsal_rows(logged, first, last, seed, **options), rehearsal.LOG_COLUMNS
        out[f"{kind}.csv"] = rows_to_csv(rows, columns)
    return out


#: The files the demo writes beside its campaign file and logs.
DEMO_RESULTS = ("check.json", "earth-radius.json", "moon-distance.json", "sun-moon-ratio.json", "sun-parallax.json",
                "star-parallax.json", "cepheid-distances.json", "ladder.json", "report.html")


def refuse_non_demo_folder(folder, campaign_text: str, logs: dict[str, str] | None) -> None:
    """InputError unless ``folder`` is new, empty, or a demo's output whose campaign and logs are unchanged.

    The demo replaces its own files only: a folder holding anything else
    (a user's campaign, a demo campaign or log edited since) is left untouched.
    Without ``logs`` (before they are simulated) only the campaign file is compared.
    """
    from firstrung.errors import InputError
    from firstrung.output import refuse_replacing_others

    folder = Path(folder)
    if not folder.exists():
        return
    if not folder.is_dir():
        raise InputError(f"-o: {folder} exists and is not a folder")
    if not any(folder.iterdir()):
        return
    expected = {folder / "campaign.toml": campaign_text.encode("utf-8")}
    expected.update({folder / "logs" / name: text.encode("utf-8") for name, text in (logs or {}).items()})
    if not (folder / "campaign.toml").is_file():
        raise InputError(f"-o: {folder} is not empty and is not the output of firstrung demo; "
                         "it is left as it is: choose an empty or new folder")
    refuse_replacing_others(expected, lambda path, old: expected[path] == old,
                            "the demo's own file (edited since the demo wrote it?)")
    refuse_replacing_others((folder / name for name in DEMO_RESULTS), lambda path, old: True, "a file")


def run_demo(folder, *, samples: int = DEMO_SAMPLES, seed: int = DEMO_SEED, progress=lambda step: None) -> DemoRun:
    """Write the demo campaign and its logs into ``folder``, then check, reduce, chain and report."""
    from firstrung.app.check_json import check_run_to_json
    from firstrung.app.report import build_report, render_html
    from firstrung.campaign import parse_campaign
    from firstrung.jsonout import dumps
    from firstrung.methods.eclipse.present import eclipse_run_to_json
    from firstrung.methods.phases.present import phase_run_to_json
    from firstrung.methods.shadows.present import shadow_run_to_json
    from firstrung.methods.transit.present import transit_run_to_json
    from firstrung.output import make_folder, write_atomic

    folder = Path(folder)
    files = {}
    text = demo_campaign_text()
    refuse_non_demo_folder(folder, text, None)  # at once, before the simulation
    progress("simulating the observers' logs")
    campaign = parse_campaign(text, path=folder / "campaign.toml")
    logs = demo_logs(campaign)
    refuse_non_demo_folder(folder, text, logs)
    make_folder(folder / "logs")
    campaign_path = write_atomic(folder / "campaign.toml", text)
    files["campaign"] = campaign_path
    for name, csv_text in logs.items():
        files[name] = write_atomic(folder / "logs" / name, csv_text)
    progress("checking the logs, reducing every rung, chaining the ladder")
    report = build_report(campaign_path, samples=samples, seed=seed)
    runs = report.runs
    files["check"] = write_atomic(folder / "check.json", dumps(check_run_to_json(runs["check"])) + "\n")
    files["shadows"] = write_atomic(folder / "earth-radius.json", dumps(shadow_run_to_json(runs["shadows"])) + "\n")
    files["eclipse"] = write_atomic(folder / "moon-distance.json", dumps(eclipse_run_to_json(runs["eclipse"])) + "\n")
    files["phases"] = write_atomic(folder / "sun-moon-ratio.json", dumps(phase_run_to_json(runs["phases"])) + "\n")
    files["transit"] = write_atomic(folder / "sun-parallax.json", dumps(transit_run_to_json(runs["transit"])) + "\n")
    from firstrung.methods.cepheids.present import cepheid_run_to_json
    from firstrung.methods.parallax.present import parallax_run_to_json

    files["parallax"] = write_atomic(folder / "star-parallax.json", dumps(parallax_run_to_json(runs["parallax"])) + "\n")
    files["cepheids"] = write_atomic(folder / "cepheid-distances.json", dumps(cepheid_run_to_json(runs["cepheids"])) + "\n")
    progress("writing the report")
    files["ladder"] = write_atomic(folder / "ladder.json", dumps(report.context["ladder_json"]) + "\n")
    files["report"] = write_atomic(folder / "report.html", render_html(report))
    check = runs["check"]
    return DemoRun(folder, files, report.context["ladder_json"], len(check.flags))
