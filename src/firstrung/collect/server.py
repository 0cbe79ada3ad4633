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


def links(base_url: str, coordinator: str, sites: dict[str, str], join: str | None = None,
          schools: dict[str, str] | None = None) -> dict:
    """The links file's content: ``{"coordinator": URL, "sites": {"<id>": URL}}``.

    With an open network's join link: ``"join": URL`` and ``"schools": {"<id>": URL}``
    for the schools joined so far (each school's own link; later ones are on the
    coordinator's page).

    >>> links("http://h:1/", "c", {"a": "t"}, "j", {})
    {'coordinator': 'http://h:1/c/c', 'sites': {'a': 'http://h:1/s/t'}, 'join': 'http://h:1/j/j', 'schools': {}}
    """
    base = base_url.rstrip("/")
    out: dict = {"coordinator": f"{base}/c/{coordinator}", "sites": {s: f"{base}/s/{t}" for s, t in sites.items()}}
    if join is not None:
        out["join"] = f"{base}/j/{join}"
        out["schools"] = {s: f"{base}/s/{t}" for s, t in (schools or {}).items()}
    return out


def join_wanted(campaign, kinds: tuple[str, ...], join: bool | None) -> bool:
    """Whether to serve the join link: asked for, or by default when the campaign declares no ``[[site]]``.

    Only a kind of log whose rows may carry their own site (the shadow log) can
    be sent by a school that joins; ``join=True`` without one is refused.
    """
    from firstrung.collect.kinds import log_kind
    from firstrung.errors import InputError

    positional = [k for k in kinds if log_kind(k).slot_of("latitude_deg") is not None]
    declared = [s for s in campaign.sites if s.id not in campaign.row_site_ids]
    if join is None:
        return bool(positional) and not declared
    if join and not positional:
        raise InputError("--join: the campaign collects no log whose rows carry their own site; "
                         "add shadows = [] to its [logs]", file=str(campaign.path))
    return join


def serve(campaign_path, host: str = "127.0.0.1", port: int = 8000, store=None, links_path=None,
          public_url: str | None = None, on_listening=None, join: bool | None = None) -> None:
    """Serve a campaign's collection point until interrupted.

    The socket is bound first (``port`` 0 picks a free one), then the links
    file is written (atomically, readable by its owner only), then requests are
    served. Nothing is logged per request: addresses hold the tokens.
    ``join``: serve an open network's join link (None: when the campaign declares no site).
    """
    import os

    import uvicorn

    from firstrung.collect.app import create_app
    from firstrung.collect.schools import serving_campaign
    from firstrung.output import write_atomic

    campaign_path = Path(campaign_path)
    campaign = serving_campaign(campaign_path)  # a bad campaign file is one clear line, before anything listens
    kinds = named_kinds(campaign_path)
    join = join_wanted(campaign, kinds, join)
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
    base = public_url or f"http://{_url_host(host)}:{bound_port}"
    app = create_app(campaign_path, store_path, kinds, join=join, public_base=public_url)
    state = app.state.collection
    content = links(base, state.coordinator_token, state.site_tokens, state.join_token, state.school_tokens)

    # loop and http "auto": uvloop and httptools (declared dependencies), else asyncio's loop and h11
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
