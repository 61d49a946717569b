"""The service against the naive pipeline (the five bare library calls), on
the same invented records: in process (records/s), and over HTTP under
gunicorn with two sync workers, loaded at 8 connections on loopback by wrk
(or, where wrk is not installed, a bounded Python client). Also the memory
of one worker, idle and loaded."""

from __future__ import annotations

import contextlib
import json
import os
import re
import shutil
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.request
from collections.abc import Callable
from pathlib import Path

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import corpus  # noqa: E402
from naive_app import bare_calls  # noqa: E402

import cleaner  # noqa: E402
from cleaner.engine import default_rules  # noqa: E402

RECORDS = 5_000
ROUNDS = 3
LOAD_SECONDS = 12        # per server, in LOAD_TURNS turns
LOAD_TURNS = 3
CONNECTIONS = 8
# More distinct request bodies than either server answers in LOAD_SECONDS, so
# that no body is sent twice: a cache meets a value again only where the
# corpus itself repeats it, as a real feed would.
HTTP_BODIES = 30_000
WARM_UP_BODIES = 10_000
WARM_UP_SECONDS = 5


def in_process() -> dict:
    """Each round cleans a fresh draw of RECORDS records (another seed), both
    ways, one after the other; the best round of each counts. Values repeat
    across rounds only as often as the corpus repeats them."""
    rules, options = default_rules(), cleaner.Options()
    naive, ours = [], []
    for round_number in range(ROUNDS):
        records = corpus.intake_records(RECORDS, seed=corpus.SEED + round_number)
        for timings, run in ((naive, bare_calls),
                             (ours, lambda record: cleaner.clean(record, options, rules=rules))):
            start = time.perf_counter()
            for record in records:
                run(record)
            timings.append((time.perf_counter() - start) / len(records))
    return {"naive_records_per_s": 1 / min(naive), "clean_records_per_s": 1 / min(ours),
            "ratio": min(naive) / min(ours)}


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def workers(master: int) -> list[Path]:
    """The /proc folders of the master's child processes (gunicorn's workers)."""
    found = []
    for status in Path("/proc").glob("[0-9]*/status"):
        try:
            parent = re.search(r"^PPid:\s+(\d+)", status.read_text(), re.M)
        except OSError:
            continue
        if parent and int(parent[1]) == master:
            found.append(status.parent)
    return found


def rss_mib(worker: Path) -> float:
    """The resident memory of the process whose /proc folder this is."""
    rss = re.search(r"^VmRSS:\s+(\d+) kB", (worker / "status").read_text(), re.M)
    return int(rss[1]) / 1024 if rss else 0


def _worker_rss_mib(master: int) -> list[float]:
    return sorted(rss_mib(worker) for worker in workers(master))


def _workers_cpu_seconds(master: int) -> float:
    """User and system time of the workers: what the app and the server spend,
    without the load generator that shares the machine."""
    ticks = sum(int(field) for worker in workers(master)
                for field in (worker / "stat").read_text().rsplit(")", 1)[1].split()[11:13])
    return ticks / os.sysconf("SC_CLK_TCK")


def _wrk(url: str, bodies: list[str], first: int, seconds: int) -> dict:
    """wrk at CONNECTIONS connections, sending the bodies in turn from `first`."""
    with tempfile.TemporaryDirectory() as folder:
        script = Path(folder) / "post.lua"
        script.write_text(
            "bodies = {" + ",".join("[==[" + body + "]==]" for body in bodies) + "}\n"
            f"counter = {first}\nwrk.method = 'POST'\n"
            "wrk.headers['Content-Type'] = 'application/json'\n"
            "request = function()\n  counter = counter % #bodies + 1\n"
            "  return wrk.format(nil, nil, nil, bodies[counter])\nend\n")
        # One wrk thread drives the 8 connections: the load generator shares the
        # two cores with the workers, and a second thread only takes more of them.
        done = subprocess.run(["wrk", "-t1", f"-c{CONNECTIONS}", f"-d{seconds}s",
                               "--latency", "-s", str(script), url],
                              capture_output=True, text=True, timeout=seconds + 60)
    out = done.stdout

    def millis(label: str) -> float:
        value, unit = re.search(rf"^\s+{label}\s+([\d.]+)(us|ms|s)\b", out, re.M).groups()
        return float(value) * {"us": 0.001, "ms": 1, "s": 1000}[unit]
    errors = re.search(r"Non-2xx or 3xx responses: (\d+)", out)
    return {"requests": int(re.search(r"(\d+) requests in", out)[1]), "seconds": seconds,
            "p50_ms": millis("50%"), "p99_ms": millis("99%"),
            "errors": int(errors[1]) if errors else 0}


def _python_client(url: str, bodies: list[str], first: int, seconds: int) -> dict:
    """A bounded load of CONNECTIONS threads for `seconds`, where wrk is missing."""
    latencies: list[float] = []
    errors = [0]
    stop = time.monotonic() + seconds
    lock = threading.Lock()

    def client(offset: int) -> None:
        index = first + offset
        while time.monotonic() < stop:
            body = bodies[index % len(bodies)].encode()
            index += CONNECTIONS
            start = time.perf_counter()
            try:
                request = urllib.request.Request(url, data=body, headers={
                    "Content-Type": "application/json"})
                urllib.request.urlopen(request, timeout=10).read()
            except OSError:
                with lock:
                    errors[0] += 1
                continue
            with lock:
                latencies.append(time.perf_counter() - start)
    threads = [threading.Thread(target=client, args=(n,)) for n in range(CONNECTIONS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    quantiles = statistics.quantiles(latencies, n=100)
    return {"requests": len(latencies), "seconds": seconds, "p50_ms": quantiles[49] * 1000,
            "p99_ms": quantiles[98] * 1000, "errors": errors[0]}


@contextlib.contextmanager
def _server(command: Callable[[int], list[str]], cwd: Path):
    """The command's server on a free port: yields (url of /v1/clean, master pid)."""
    port = free_port()
    process = subprocess.Popen(command(port), cwd=cwd,
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                               start_new_session=True)
    try:
        url = f"http://127.0.0.1:{port}/v1/clean"
        wait_until_answering(url, process)
        yield url, process.pid
    finally:
        os.killpg(process.pid, signal.SIGTERM)
        process.wait(timeout=30)


def wait_until_answering(url: str, process: subprocess.Popen) -> None:
    body = json.dumps({"record": {"sex": "F"}}).encode()
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError("the server exited")
        try:
            urllib.request.urlopen(urllib.request.Request(
                url, data=body, headers={"Content-Type": "application/json"}), timeout=1)
            return
        except OSError:
            time.sleep(0.2)
    raise RuntimeError("the server did not come up")


def _bodies(count: int, seed: int) -> list[str]:
    return [json.dumps({"record": record, "options": {"reference_date": "2026-12-02"}})
            for record in corpus.intake_records(count, seed=seed)]


def over_http() -> dict:
    """Both servers up side by side, idle between turns. Each is first warmed
    up on records of another draw (a service runs for hours: what is measured
    is its steady state, not its first seconds), then loaded in LOAD_TURNS
    turns that alternate with the other's, so a machine that runs slower for
    a while (a shared host does) slows both alike."""
    bodies = _bodies(HTTP_BODIES, corpus.SEED + ROUNDS)
    warm_up = _bodies(WARM_UP_BODIES, corpus.SEED + ROUNDS + 1)
    load = _wrk if shutil.which("wrk") else _python_client
    turn_seconds = LOAD_SECONDS // LOAD_TURNS
    # The same server settings: gunicorn, 2 sync workers, the app built before
    # the workers fork (cleaner serve does so; --preload for the naive app).
    def ours(port: int) -> list[str]:
        return [sys.executable, "-m", "cleaner.cli", "serve", "--workers", "2", "--port", str(port)]

    def naive(port: int) -> list[str]:
        return [sys.executable, "-m", "gunicorn", "--workers", "2", "--worker-class", "sync",
                "--preload", "--bind", f"127.0.0.1:{port}", "naive_app:app"]
    with _server(ours, HERE.parent) as (ours_url, ours_pid), \
            _server(naive, HERE) as (naive_url, naive_pid):
        servers = {"naive": (naive_url, naive_pid), "service": (ours_url, ours_pid)}
        figures = {name: {"turns": [], "rss_idle_mib": max(_worker_rss_mib(pid), default=0)}
                   for name, (_, pid) in servers.items()}
        for url, _ in servers.values():
            load(url, warm_up, 0, WARM_UP_SECONDS)
        for turn in range(LOAD_TURNS):
            # Each turn starts further into the bodies, so no body is sent twice.
            first = turn * len(bodies) // LOAD_TURNS
            for name, (url, pid) in servers.items():
                cpu_before = _workers_cpu_seconds(pid)
                figures[name]["turns"].append(load(url, bodies, first, turn_seconds))
                figures[name]["turns"][-1]["worker_cpu_s"] = _workers_cpu_seconds(pid) - cpu_before
        for name, (_, pid) in servers.items():
            turns = figures[name]["turns"]
            figures[name].update(
                requests_per_s=sum(t["requests"] for t in turns) / sum(t["seconds"] for t in turns),
                p50_ms=statistics.median(t["p50_ms"] for t in turns),
                p99_ms=max(t["p99_ms"] for t in turns), errors=sum(t["errors"] for t in turns),
                worker_cpu_us_per_request=sum(t["worker_cpu_s"] for t in turns) * 1e6
                / max(sum(t["requests"] for t in turns), 1),
                client="wrk" if load is _wrk else "python threads",
                rss_loaded_mib=max(_worker_rss_mib(pid), default=0))
    return {**figures, "ratio": figures["service"]["requests_per_s"]
            / figures["naive"]["requests_per_s"]}


def main() -> dict:
    process = in_process()
    print(f"one record (name, birth date, sex, phone, address), {ROUNDS} rounds of {RECORDS} "
          "fresh invented records, one core, best round:")
    print(f"  naive pipeline {process['naive_records_per_s']:8,.0f} records/s")
    print(f"  cleaner.clean  {process['clean_records_per_s']:8,.0f} records/s   "
          f"{process['ratio']:.2f}x")
    http = over_http()
    print(f"HTTP, gunicorn 2 sync workers, {CONNECTIONS} connections, {LOAD_SECONDS} s each in "
          f"{LOAD_TURNS} alternating turns, {http['service']['client']}:")
    print(f"  {'':10} {'req/s':>8} {'p50 ms':>7} {'p99 ms':>7} {'errors':>6} "
          f"{'worker µs/req':>13} {'RSS idle':>9} {'RSS loaded':>10}")
    for label in ("naive", "service"):
        row = http[label]
        print(f"  {label:10} {row['requests_per_s']:8,.0f} {row['p50_ms']:7.1f} "
              f"{row['p99_ms']:7.1f} {row['errors']:6} {row['worker_cpu_us_per_request']:13,.0f} "
              f"{row['rss_idle_mib']:8.0f}M {row['rss_loaded_mib']:9.0f}M")
    cpu_ratio = (http["naive"]["worker_cpu_us_per_request"]
                 / http["service"]["worker_cpu_us_per_request"])
    print(f"  POST /v1/clean vs naive endpoint: {http['ratio']:.2f}x requests/s "
          f"({cpu_ratio:.2f}x less worker CPU a request); service p99/p50 "
          f"{http['service']['p99_ms'] / http['service']['p50_ms']:.2f}")
    return {"in_process": process, "http": http}


if __name__ == "__main__":
    main()
