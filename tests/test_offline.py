"""The offline guarantee: nothing is fetched on import or at run time.

In process, the autouse ``no_network`` fixture (tests/conftest.py) refuses
every network connection for the whole suite, so every test that runs a
command also shows that it works offline. A subprocess test blocks the
network in a fresh interpreter before firstrung is imported, imports every
module of the package, runs a command, and checks that no file was fetched
into its working folder or home.
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import urllib.request
from pathlib import Path

import pytest

from conftest import NetworkBlocked

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def test_the_guard_refuses_connections():
    with pytest.raises(NetworkBlocked):
        socket.create_connection(("127.0.0.1", 9), timeout=1)
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        with pytest.raises(NetworkBlocked):
            sock.connect(("127.0.0.1", 9))
        with pytest.raises(NetworkBlocked):
            sock.connect_ex(("127.0.0.1", 9))
    with pytest.raises(NetworkBlocked):
        urllib.request.urlopen("https://example.invalid/de421.bsp", timeout=1)


@pytest.mark.skipif(not hasattr(socket, "AF_UNIX"), reason="no Unix sockets on this system")
def test_the_guard_allows_local_unix_sockets():
    left, right = socket.socketpair(socket.AF_UNIX)
    with left, right:
        left.sendall(b"ok")
        assert right.recv(2) == b"ok"


CHILD = r"""
import socket, sys

def refuse(*args, **kwargs):
    raise SystemExit("network access: " + repr(args[:2]))

socket.socket.connect = refuse
socket.socket.connect_ex = refuse
socket.create_connection = refuse
socket.getaddrinfo = refuse

import importlib, pkgutil
import firstrung

failed = []
for info in pkgutil.walk_packages(firstrung.__path__, "firstrung."):
    if info.name.endswith("__main__"):
        continue
    try:
        importlib.import_module(info.name)
    except SystemExit:
        raise
    except Exception as error:
        failed.append(f"{info.name}: {type(error).__name__}: {error}")
print("imported", len(sys.modules))
print("failed", failed)
from firstrung.cli import main
main(["reduce", "shadows", sys.argv[1], "--json"])
"""


def test_import_and_a_command_run_with_the_network_blocked(tmp_path):
    work = tmp_path / "work"
    home = tmp_path / "home"
    work.mkdir()
    home.mkdir()
    env = {
        k: v for k, v in os.environ.items() if not k.endswith("_proxy") and not k.endswith("_PROXY")
    }
    # matplotlib keeps its font cache apart, so that "home" shows only what firstrung writes.
    env.update(
        HOME=str(home), USERPROFILE=str(home), COLUMNS="100", MPLCONFIGDIR=str(tmp_path / "mpl")
    )
    out = subprocess.run(
        [sys.executable, "-c", CHILD, str(EXAMPLES / "campaign.toml")],
        cwd=work,
        env=env,
        capture_output=True,
        text=True,
        timeout=180,
    )
    assert "network access" not in out.stderr, out.stderr
    assert out.returncode == 0, out.stderr
    assert "failed []" in out.stdout, out.stdout
    assert '"earth_radius_km"' in out.stdout
    # Nothing was downloaded or cached beside the run (skyfield would write de421.bsp here).
    assert list(work.iterdir()) == []
    assert list(home.iterdir()) == []
