"""Running the collection point: bind, write the links, serve under uvicorn until stopped."""

from __future__ import annotations

import json
import socket
from pathlib import Path

from firstrung.collect.kinds import named_kinds

#: The store's file beside the campaign when ``--store`` names none.
STORE_SUFFIX = ".readings.sqlite"


def default_store(campaign_path) -> Path:
    """``campaign.toml`` -> ``campaign.readings.sqlite`` in the same folder."""
    path = Path(campaign_path)
    return path.with_name(path.stem + STORE_SUFFIX)


def _url_host(host: str) -> str:
    return f"[{host}]" if ":" in host else host


def links(base_url: str, coordinator: str, sites: dict[str, str]) -> dict:
    """The links file's content: ``{"coordinator": URL, "sites": {"<id>": URL}}``."""
    base = base_url.rstrip("/")
    return {"coordinator": f"{base}/c/{coordinator}", "sites": {s: f"{base}/s/{t}" for s, t in sites.items()}}


def serve(campaign_path, host: str = "127.0.0.1", port: int = 8000, store=None, links_path=None,
          public_url: str | None = None, on_listening=None) -> None:
    """Serve a campaign's collection point until interrupted.

    The socket is bound first (``port`` 0 picks a free one), then the links
    file is written (atomically, readable by its owner only), then requests are
    served. Nothing is logged per request: addresses hold the tokens.
    """
    import os

    import uvicorn

    from firstrung.campaign import read_campaign
    from firstrung.collect.app import create_app
    from firstrung.output import write_atomic

    campaign_path = Path(campaign_path)
    read_campaign(campaign_path)  # a bad campaign file is one clear line, before anything listens
    kinds = named_kinds(campaign_path)
    store_path = Path(store) if store is not None else default_store(campaign_path)
    family = socket.AF_INET6 if ":" in host else socket.AF_INET
    sock = socket.socket(family, socket.SOCK_STREAM)
    sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    try:
        sock.bind((host, port))
        sock.listen(128)
    except OSError as error:
        sock.close()
        from firstrung.errors import InputError

        raise InputError(f"cannot listen on {host} port {port}: {error.strerror or error} (is the port in use? "
                         "try another --port, or --port 0 for any free one)") from None
    bound_port = sock.getsockname()[1]
    app = create_app(campaign_path, store_path, kinds)
    state = app.state.collection
    base = public_url or f"http://{_url_host(host)}:{bound_port}"
    content = links(base, state.coordinator_token, state.site_tokens)

    config = uvicorn.Config(app, log_level="warning", access_log=False, lifespan="on",
                            timeout_keep_alive=5, limit_concurrency=1000, server_header=False)
    server = uvicorn.Server(config)

    original_startup = server.startup

    async def startup(sockets=None):
        await original_startup(sockets=sockets)
        if links_path is not None:
            write_atomic(links_path, json.dumps(content, indent=2) + "\n", inputs=[campaign_path, store_path])
            os.chmod(links_path, 0o600)
        if on_listening is not None:
            on_listening(content, bound_port)

    server.startup = startup
    server.run(sockets=[sock])
