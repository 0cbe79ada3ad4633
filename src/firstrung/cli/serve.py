"""``firstrung serve``: a collection point where observers send readings from a phone."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from firstrung.cli.common import CampaignArgument, console, handles_errors
from firstrung.cli.direct import Option


def register(app) -> None:
    """Add ``serve`` at the top level."""
    app.command("serve")(handles_errors(serve))


def serve(
    campaign: CampaignArgument,
    host: Annotated[str, Option("--host", help="Address to listen on; 127.0.0.1 unless a proxy or the "
                                      "local network must reach it (see docs/serving.md).")] = "127.0.0.1",
    port: Annotated[int, Option("--port", help="Port to listen on (0: any free port).", min=0, max=65535)] = 8000,
    store: Annotated[Path | None, Option("--store", help="SQLite file of the readings (default: beside the "
                                               "campaign, NAME.readings.sqlite).", show_default=False,
                                               metavar="FILE")] = None,
    links: Annotated[Path | None, Option("--links", help="Write the coordinator's and each site's link "
                                               "(JSON) to this file once the server listens.", show_default=False,
                                               metavar="FILE")] = None,
    public_url: Annotated[str | None, Option("--public-url", help="The address observers use, e.g. "
                                                   "https://obs.example.org/readings behind a TLS proxy; the "
                                                   "links start with it.", show_default=False)] = None,
    join: Annotated[bool | None, Option("--join/--no-join", help="Serve an open network's join link, where "
                                              "a school registers and gets its own link (default: on when the "
                                              "campaign declares no [[site]]).", show_default=False)] = None,
) -> None:
    """Collect readings on line: a form per log for each site's link, the check's verdict at once."""
    from firstrung.collect.server import serve as run

    def listening(content: dict, bound_port: int) -> None:
        where = f"links written to {links}" if links is not None else "run with --links FILE to get the links"
        console(stderr=True).print(f"firstrung serve: listening on {host} port {bound_port}; {where}; "
                                   "Ctrl+C stops", soft_wrap=True)

    run(campaign, host=host, port=port, store=store, links_path=links, public_url=public_url, on_listening=listening,
        join=join)
