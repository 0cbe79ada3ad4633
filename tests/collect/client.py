"""A small HTTP client of the collection point (standard library only), for the tests and the benchmark."""

from __future__ import annotations

import http.client
import json
import os
import re
import subprocess
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from pathlib import Path

_HIDDEN_RE = re.compile(r'<input type="hidden" name="(kind|form_id|csrf_token)" value="([^"]*)">')


class Answer:
    def __init__(self, status: int, body: bytes, headers) -> None:
        self.status, self.body, self.headers = status, body, headers

    @property
    def text(self) -> str:
        return self.body.decode("utf-8")

    def json(self):
        return json.loads(self.body)


def request(url: str, data: bytes | None = None, headers: dict | None = None, method: str | None = None) -> Answer:
    req = urllib.request.Request(url, data=data, headers=headers or {}, method=method)
    try:
        with urllib.request.urlopen(req, timeout=60) as response:
            return Answer(response.status, response.read(), response.headers)
    except urllib.error.HTTPError as error:
        return Answer(error.code, error.read(), error.headers)


class Session:
    """One phone's connection to the server, kept open between requests as a browser keeps it (HTTP/1.1
    keep-alive), for the load benchmark. Should the server have closed it meanwhile (its idle timeout), the
    request is sent once more on a new connection, as a browser does: a reading sent twice is stored once
    (its form id)."""

    def __init__(self, base_url: str) -> None:
        parts = urllib.parse.urlsplit(base_url)
        self.host, self.port = parts.hostname, parts.port
        self.connection: http.client.HTTPConnection | None = None

    def request(self, url: str, data: bytes | None = None, headers: dict | None = None) -> Answer:
        path = urllib.parse.urlsplit(url).path
        for attempt in (1, 2):
            if self.connection is None:
                self.connection = http.client.HTTPConnection(self.host, self.port, timeout=60)
            try:
                self.connection.request("GET" if data is None else "POST", path, body=data, headers=headers or {})
                response = self.connection.getresponse()
                body = response.read()
            except (http.client.RemoteDisconnected, ConnectionResetError, BrokenPipeError):
                self.close()
                if attempt == 2:
                    raise
                continue
            if response.will_close:
                self.close()
            return Answer(response.status, body, response.headers)
        raise AssertionError("unreachable")

    def close(self) -> None:
        if self.connection is not None:
            self.connection.close()
            self.connection = None


def form_tokens(page: str, kind: str) -> dict[str, str]:
    """The hidden fields (kind, form_id, csrf_token) of a kind's form on a site's page."""
    found = _HIDDEN_RE.findall(page)
    for k in range(0, len(found) - 2, 3):
        block = dict(found[k : k + 3])
        if block.get("kind") == kind:
            return block
    raise AssertionError(f"no {kind} form on the page")


def post_reading(site_url: str, kind: str, cells: dict[str, str], accept_json: bool = True, page: str | None = None):
    """GET the site's page, then POST one reading with its form's tokens, as a phone does."""
    page = page if page is not None else request(site_url).text
    fields = form_tokens(page, kind)
    fields.update(cells)
    body = urllib.parse.urlencode(fields).encode()
    headers = {"Content-Type": "application/x-www-form-urlencoded"}
    if accept_json:
        headers["Accept"] = "application/json"
    return request(site_url, body, headers)


class Server:
    """``firstrung serve`` in a child process on a free loopback port; the links once it listens."""

    def __init__(self, campaign: Path, store: Path, links: Path, extra=()) -> None:
        self.links_path = links
        if links.exists():
            links.unlink()
        env = dict(os.environ, COLUMNS="80")
        self.process = subprocess.Popen(
            [sys.executable, "-m", "firstrung", "serve", str(campaign), "--port", "0", "--store", str(store),
             "--links", str(links), *extra],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env,
        )
        deadline = time.monotonic() + 60
        while not links.exists():
            if self.process.poll() is not None or time.monotonic() > deadline:
                self.stop()
                raise RuntimeError(f"the server did not start: {self.process.stderr.read().decode()}")
            time.sleep(0.05)
        self.links = json.loads(links.read_text())

    def stop(self) -> tuple[str, str]:
        if self.process.poll() is None:
            self.process.terminate()
            try:
                self.process.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait()
        out, err = self.process.communicate()
        return out.decode(), err.decode()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.stop()
