"""Load on the collection point, loopback only: 200 sites send 10 shadow readings each from 50 clients at once.

Each client stands for the phones of the sites it holds, one after another
(four sites a client by default). A phone opens its site's page (a GET), then
sends a reading as the form posts it (a separate HTTP POST with the form's id
and anti-forgery token from the page), reads the answer page (the verdict and
a fresh form with new tokens) and sends the next reading from that. Like a
browser, a phone keeps its connection open between its requests (HTTP/1.1
keep-alive; a new connection if the server closed it meanwhile). The campaign is invented (200 sites 35-60 deg N)
and its readings come from ``firstrung simulate shadows`` (stated errors).
Prints the median and 95th percentile of the answer time to a reading, the
server's CPU time per reading (its check process's included; other work on the
machine distorts it less), and checks that every reading is stored exactly once
and got the check's verdict.

By default each client sends its next reading as soon as it has the answer (a
closed loop: the server is never idle, and the answer time is mostly the time
waiting behind the other 49 clients). ``--think-s S`` makes each client wait S
seconds after an answer, as an observer does before the next reading.

Run: python benchmarks/serve_load.py [--sites 200] [--readings 10] [--clients 50] [--think-s 0]
"""

from __future__ import annotations

import argparse
import csv
import io
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.parse
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from tests.collect.client import Server, Session, form_tokens, request  # noqa: E402

#: The whole run may take at most this long [s].
TIME_LIMIT_S = 900


def cpu_split_s(pid: int) -> tuple[float, float]:
    """A process's user and system CPU time so far [s] (NaN where there is none)."""
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    except OSError:
        return float("nan"), float("nan")
    return int(fields[11]) / os.sysconf("SC_CLK_TCK"), int(fields[12]) / os.sysconf("SC_CLK_TCK")


def cpu_s(pid: int, children: bool = False) -> float:
    """A process's CPU time so far (user + system) [s], from /proc; NaN where there is none.

    ``children``: with its running child processes' (the server's check process).
    """
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    except OSError:
        return float("nan")
    total = (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    if children:
        for task in Path(f"/proc/{pid}/task").glob("*/children"):
            total += sum(cpu_s(int(child), True) for child in task.read_text().split())
    return total


def campaign_text(n_sites: int) -> str:
    lines = ['[campaign]\nname = "Load test (invented sites)"\n']
    for k in range(n_sites):
        lat = 35.0 + 25.0 * k / max(n_sites - 1, 1)
        lon = 2.0 + (k * 7.3) % 14.0
        lines.append(f'[[site]]\nid = "s{k:03d}"\nname = "Invented school {k}"\nlatitude_deg = {lat:.3f}\n'
                     f'longitude_deg = {lon:.3f}\nelevation_m = 100\ntimezone = "Europe/Berlin"\n'
                     '[site.gnomon]\nheight_m = 1.0\n')
    lines.append("[logs]\nshadows = []\n")
    return "\n".join(lines)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=200)
    parser.add_argument("--readings", type=int, default=10)
    parser.add_argument("--clients", type=int, default=50)
    parser.add_argument("--think-s", type=float, default=0.0, help="each client's pause after an answer [s]")
    args = parser.parse_args()
    folder = Path(tempfile.mkdtemp(prefix="firstrung-load-"))
    try:
        return load(folder, args)
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def load(folder: Path, args) -> int:
    """Run the load in ``folder`` (the campaign, its simulated readings, the store); 0 when it passed."""
    campaign = folder / "campaign.toml"
    campaign.write_text(campaign_text(args.sites), encoding="utf-8")
    subprocess.run([sys.executable, "-m", "firstrung", "simulate", "shadows", str(campaign), "--from", "2027-03-20",
                    "--to", "2027-03-20", "-o", str(folder / "sim"), "--seed", "1"], check=True, capture_output=True)
    by_site: dict[str, list[dict]] = {}
    with open(folder / "sim" / "shadows.csv", encoding="utf-8", newline="") as f:
        for row in csv.DictReader(f):
            by_site.setdefault(row["site"], []).append(row)
    plan = {site: rows[:: max(1, len(rows) // args.readings)][: args.readings] for site, rows in by_site.items()}
    expected = sum(len(r) for r in plan.values())

    load_start = os.getloadavg()[0]
    started = time.monotonic()
    with Server(campaign, folder / "store.sqlite", folder / "links.json") as server:
        links = server.links["sites"]
        answers: list[float] = []
        statuses: list[int] = []

        def session(sites: list[str]) -> None:
            for site in sites:  # each site a phone of its own, its connection kept open between requests
                phone = Session(links[site])
                try:
                    one_site(phone, site)
                finally:
                    phone.close()

        def one_site(phone: Session, site: str) -> None:
            url = links[site]
            page = phone.request(url).text
            for row in plan[site]:
                if time.monotonic() - started > TIME_LIMIT_S:
                    return
                fields = form_tokens(page, "shadows")
                fields.update({k: v for k, v in row.items() if k != "site" and v})
                body = urllib.parse.urlencode(fields).encode()
                t0 = time.perf_counter()
                answer = phone.request(url, body, {"Content-Type": "application/x-www-form-urlencoded"})
                answers.append(time.perf_counter() - t0)
                statuses.append(answer.status)
                page = answer.text
                if args.think_s:
                    time.sleep(args.think_s)

        sites = sorted(plan)
        groups = [sites[k :: args.clients] for k in range(args.clients)]
        server_cpu0, client_cpu0 = cpu_s(server.process.pid, True), cpu_s(os.getpid())
        split0 = cpu_split_s(server.process.pid)
        t0 = time.perf_counter()
        with ThreadPoolExecutor(max_workers=args.clients) as pool:
            list(pool.map(session, groups))
        wall = time.perf_counter() - t0
        server_cpu, client_cpu = cpu_s(server.process.pid, True) - server_cpu0, cpu_s(os.getpid()) - client_cpu0
        user, system = (b - a for a, b in zip(split0, cpu_split_s(server.process.pid), strict=True))
        log = request(server.links["coordinator"] + "/logs/shadows.csv").text
        every = request(server.links["coordinator"] + "/readings.csv").text
    rows = list(csv.DictReader(io.StringIO(log)))
    keys = [(r["site"], r["time_utc"]) for r in rows]
    sent = {(site, r["time_utc"]) for site, rs in plan.items() for r in rs}
    stored_once = len(keys) == len(set(keys)) == expected and set(keys) == sent
    stored_rows = list(csv.DictReader(io.StringIO(every)))
    ids = [r["id"] for r in stored_rows]
    unchecked = sum("check-failed" in r["flags"].split(";") for r in stored_rows)
    ordered = sorted(answers)
    print(f"load average (1 min) at the start {load_start:.2f}, at the end {os.getloadavg()[0]:.2f}, "
          f"on {os.cpu_count()} cores; think time {args.think_s:g} s")
    print(f"sites {args.sites}, readings {expected}, clients {args.clients}, wall {wall:.1f} s, "
          f"{expected / wall:.1f} readings/s")
    print(f"answers: {len(answers)}, status 201: {statuses.count(201)}, median {statistics.median(answers) * 1e3:.0f} ms, "
          f"95th percentile {ordered[int(0.95 * (len(ordered) - 1))] * 1e3:.0f} ms, max {ordered[-1] * 1e3:.0f} ms")
    print(f"server CPU (user + system) during the load {server_cpu:.1f} s, "
          f"{server_cpu / max(len(answers), 1) * 1e3:.1f} ms per reading (its page GET included); "
          f"the clients' {client_cpu:.1f} s")
    print(f"of it the server's own process {user:.1f} s user + {system:.1f} s system, its check process "
          f"{server_cpu - user - system:.1f} s")
    print(f"stored: {len(rows)} in the log, {len(ids)} in the store; every reading stored exactly once: {stored_once}; "
          f"readings the check could not judge: {unchecked}")
    return 0 if stored_once and statuses.count(201) == expected and not unchecked else 1


if __name__ == "__main__":
    raise SystemExit(main())
