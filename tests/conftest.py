"""Shared fixtures of the test suite.

Offline guarantee: every test runs with network connections refused. A test
(or the code under it) that opens an internet socket fails at once with
``NetworkBlocked``; local Unix sockets stay allowed, and so does the loopback
interface in tests marked ``loopback`` (a server of firstrung's own on 127.0.0.1). Tests that start a
subprocess are outside this guard; ``tests/test_offline.py`` blocks the
network inside such a child explicitly.
"""

from __future__ import annotations

import socket

import pytest


class NetworkBlocked(RuntimeError):
    """Raised by any attempt to open a network connection during the tests."""


def _is_local(sock: socket.socket) -> bool:
    return getattr(socket, "AF_UNIX", None) is not None and sock.family == socket.AF_UNIX


#: Hosts of the loopback interface (a ``loopback`` test may connect to these only).
LOOPBACK = ("127.0.0.1", "::1", "localhost")


def _loopback(address) -> bool:
    host = address[0] if isinstance(address, tuple) else address
    return host in LOOPBACK


def _refuse(address) -> None:
    raise NetworkBlocked(
        f"network access during the tests (to {address!r}); firstrung works offline"
    )


@pytest.fixture(autouse=True)
def no_network(monkeypatch, request):
    """Make every network connection fail for the duration of a test (loopback aside where marked)."""
    loopback_ok = request.node.get_closest_marker("loopback") is not None
    original_create_connection = socket.create_connection
    original_getaddrinfo = socket.getaddrinfo
    original_connect = socket.socket.connect
    original_connect_ex = socket.socket.connect_ex

    def connect(self, address):
        if _is_local(self) or (loopback_ok and _loopback(address)):
            return original_connect(self, address)
        _refuse(address)

    def connect_ex(self, address):
        if _is_local(self) or (loopback_ok and _loopback(address)):
            return original_connect_ex(self, address)
        _refuse(address)

    def create_connection(address, *args, **kwargs):
        if loopback_ok and _loopback(address):
            return original_create_connection(address, *args, **kwargs)
        _refuse(address)

    def getaddrinfo(host, *args, **kwargs):
        if loopback_ok and _loopback(host):
            return original_getaddrinfo(host, *args, **kwargs)
        _refuse(host)

    monkeypatch.setattr(socket.socket, "connect", connect)
    monkeypatch.setattr(socket.socket, "connect_ex", connect_ex)
    monkeypatch.setattr(socket, "create_connection", create_connection)
    monkeypatch.setattr(socket, "getaddrinfo", getaddrinfo)
    yield
