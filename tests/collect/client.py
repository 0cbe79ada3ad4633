"""A small HTTP client of the collection point (standard library only), for the tests and the benchmark."""

from __future__ import annotations

import json
import os
import re
import socket
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
    keep-alive), for the load benchmark: the requests a browser sends (request line, Host, the form's
    Content-Type and Content-Length, the body), each answer read to its Content-Length (or its chunks).
    A few lines on a socket rather than :mod:`http.client`, whose header parsing would cost the machine
    more than the server's own work on a short answer. Should the server have closed the connection
    meanwhile (its idle timeout), the request is sent once more on a new one, as a browser does: a reading
    sent twice is stored once (its form id)."""

    def __init__(self, base_url: str) -> None:
        parts = urllib.parse.urlsplit(base_url)
        self.host, self.port = parts.hostname, parts.port
        self.sock: socket.socket | None = None
        self.buffer = b""

    def request(self, url: str, data: bytes | None = None, headers: dict | None = None) -> Answer:
        path = urllib.parse.urlsplit(url).path
        lines = [f"{'GET' if data is None else 'POST'} {path} HTTP/1.1", f"Host: {self.host}:{self.port}"]
        lines += [f"{k}: {v}" for k, v in (headers or {}).items()]
        if data is not None:
            lines.append(f"Content-Length: {len(data)}")
        message = ("\r\n".join(lines) + "\r\n\r\n").encode("latin-1") + (data or b"")
        for attempt in (1, 2):
            fresh = self.sock is None
            if fresh:
                self.sock = socket.create_connection((self.host, self.port), timeout=60)
                self.sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
                self.buffer = b""
            try:
                self.sock.sendall(message)
                return self._answer()
            except (ConnectionError, _Closed):
                self.close()
                if fresh or attempt == 2:
                    raise
        raise AssertionError("unreachable")

    def _fill(self) -> None:
        chunk = self.sock.recv(65536)
        if not chunk:
            raise _Closed()
        self.buffer += chunk

    def _line(self) -> bytes:
        while b"\r\n" not in self.buffer:
            self._fill()
        line, self.buffer = self.buffer.split(b"\r\n", 1)
        return line

    def _take(self, count: int) -> bytes:
        while len(self.buffer) < count:
            self._fill()
        out, self.buffer = self.buffer[:count], self.buffer[count:]
        return out

    def _answer(self) -> Answer:
        while b"\r\n\r\n" not in self.buffer:
            self._fill()
        head, self.buffer = self.buffer.split(b"\r\n\r\n", 1)
        status_line, *header_lines = head.decode("latin-1").split("\r\n")
        found: dict[str, str] = {}
        for line in header_lines:
            name, _, value = line.partition(":")
            found[name.strip().lower()] = value.strip()
        if "content-length" in found:
            body = self._take(int(found["content-length"]))
        elif found.get("transfer-encoding", "").lower() == "chunked":
            parts = []
            while (size := int(self._line().split(b";")[0], 16)) > 0:
                parts.append(self._take(size))
                self._take(2)
            while self._line():  # the trailer, to its empty line
                pass
            body = b"".join(parts)
        else:
            raise AssertionError(f"an answer without its length: {status_line}")
        if found.get("connection", "").lower() == "close":
            self.close()
        return Answer(int(status_line.split()[1]), body, found)

    def close(self) -> None:
        if self.sock is not None:
            self.sock.close()
            self.sock = None


class _Closed(Exception):
    """The server closed the connection before its answer."""


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
