"""The service against the naive pipeline (the five bare library calls), on
the same invented records: in process (records/s), and over HTTP under
gunicorn with two sync workers, loaded at 8 connections on loopback by wrk
(or, where wrk is not installed, a bounded Python client). Also the memory
of one worker, idle and loaded."""

from __future__ import annotations

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
from pathlib import Path

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import corpus  # noqa: E402
from naive_app import bare_calls  # noqa: E402

import cleaner  # noqa: E402
from cleaner.engine import default_rules  # noqa: E402

RECORDS = 5_000
ROUNDS = 3
LOAD_SECONDS = 10
CONNECTIONS = 8
# More distinct request bodies than either server answers in LOAD_SECONDS, so
# that no body is sent twice: a cache meets a value again only where the
# corpus itself repeats it, as a real feed would.
HTTP_BODIES = 30_000


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


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def _wait_until_up(url: str, process: subprocess.Popen) -> None:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError("the server exited")
        try:
            urllib.request.urlopen(url, timeout=1)
            return
        except OSError:
            time.sleep(0.2)
    raise RuntimeError("the server did not come up")


def _worker_rss_mib(master: int) -> list[float]:
    """Resident memory of the master's child processes (gunicorn's workers)."""
    sizes = []
    for status in Path("/proc").glob("[0-9]*/status"):
        try:
            text = status.read_text()
        except OSError:
            continue
        parent = re.search(r"^PPid:\s+(\d+)", text, re.M)
        rss = re.search(r"^VmRSS:\s+(\d+) kB", text, re.M)
        if parent and rss and int(parent[1]) == master:
            sizes.append(int(rss[1]) / 1024)
    return sorted(sizes)


def _wrk(url: str, bodies: list[str]) -> dict:
    with tempfile.TemporaryDirectory() as folder:
        script = Path(folder) / "post.lua"
        script.write_text(
            "bodies = {" + ",".join("[==[" + body + "]==]" for body in bodies) + "}\n"
            "counter = 0\nwrk.method = 'POST'\n"
            "wrk.headers['Content-Type'] = 'application/json'\n"
            "request = function()\n  counter = counter % #bodies + 1\n"
            "  return wrk.format(nil, nil, nil, bodies[counter])\nend\n")
        done = subprocess.run(["wrk", "-t2", f"-c{CONNECTIONS}", f"-d{LOAD_SECONDS}s",
                               "--latency", "-s", str(script), url],
                              capture_output=True, text=True, timeout=LOAD_SECONDS + 60)
    out = done.stdout

    def millis(label: str) -> float:
        value, unit = re.search(rf"^\s+{label}\s+([\d.]+)(us|ms|s)\b", out, re.M).groups()
        return float(value) * {"us": 0.001, "ms": 1, "s": 1000}[unit]
    errors = re.search(r"Non-2xx or 3xx responses: (\d+)", out)
    return {"requests_per_s": float(re.search(r"Requests/sec:\s+([\d.]+)", out)[1]),
            "p50_ms": millis("50%"), "p99_ms": millis("99%"),
            "errors": int(errors[1]) if errors else 0, "client": "wrk"}


def _python_client(url: str, bodies: list[str]) -> dict:
    """A bounded load of CONNECTIONS threads for LOAD_SECONDS, where wrk is missing."""
    latencies: list[float] = []
    errors = [0]
    stop = time.monotonic() + LOAD_SECONDS
    lock = threading.Lock()

    def client(offset: int) -> None:
        index = offset
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
    return {"requests_per_s": len(latencies) / LOAD_SECONDS, "p50_ms": quantiles[49] * 1000,
            "p99_ms": quantiles[98] * 1000, "errors": errors[0], "client": "python threads"}


def _load(command: list[str], bodies: list[str], cwd: Path | None = None) -> dict:
    port = _free_port()
    process = subprocess.Popen([*command, "--bind" if "gunicorn" in command[2] else "--port",
                                f"127.0.0.1:{port}" if "gunicorn" in command[2] else str(port)],
                               cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                               start_new_session=True)
    try:
        _wait_until_up(f"http://127.0.0.1:{port}/healthz" if "cleaner" in command[2]
                       else f"http://127.0.0.1:{port}/nowhere", process) \
            if "cleaner" in command[2] else _wait_for_port(port, process)
        idle = _worker_rss_mib(process.pid)
        url = f"http://127.0.0.1:{port}/v1/clean"
        figures = _wrk(url, bodies) if shutil.which("wrk") else _python_client(url, bodies)
        figures.update(rss_idle_mib=max(idle, default=0),
                       rss_loaded_mib=max(_worker_rss_mib(process.pid), default=0))
        return figures
    finally:
        os.killpg(process.pid, signal.SIGTERM)
        process.wait(timeout=30)


def _wait_for_port(port: int, process: subprocess.Popen) -> None:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError("the server exited")
        with socket.socket() as probe:
            if probe.connect_ex(("127.0.0.1", port)) == 0:
                time.sleep(0.5)   # the workers boot after the master binds
                return
        time.sleep(0.2)
    raise RuntimeError("the server did not come up")


def over_http() -> dict:
    bodies = [json.dumps({"record": record, "options": {"reference_date": "2026-12-02"}})
              for record in corpus.intake_records(HTTP_BODIES, seed=corpus.SEED + ROUNDS)]
    ours = _load([sys.executable, "-m", "cleaner.cli", "serve", "--workers", "2"], bodies)
    naive = _load([sys.executable, "-m", "gunicorn", "--workers", "2", "--worker-class", "sync",
                   "naive_app:app"], bodies, cwd=HERE)
    return {"service": ours, "naive": naive,
            "ratio": ours["requests_per_s"] / naive["requests_per_s"]}


def main() -> dict:
    process = in_process()
    print(f"one record (name, birth date, sex, phone, address), {ROUNDS} rounds of {RECORDS} "
          "fresh invented records, one core, best round:")
    print(f"  naive pipeline {process['naive_records_per_s']:8,.0f} records/s")
    print(f"  cleaner.clean  {process['clean_records_per_s']:8,.0f} records/s   "
          f"{process['ratio']:.2f}x")
    http = over_http()
    print(f"HTTP, gunicorn 2 sync workers, {CONNECTIONS} connections, {LOAD_SECONDS} s, "
          f"{http['service']['client']}:")
    print(f"  {'':16} {'req/s':>8} {'p50 ms':>7} {'p99 ms':>7} {'errors':>6} "
          f"{'RSS idle':>9} {'RSS loaded':>10}")
    for label in ("naive", "service"):
        row = http[label]
        print(f"  {label:16} {row['requests_per_s']:8,.0f} {row['p50_ms']:7.1f} "
              f"{row['p99_ms']:7.1f} {row['errors']:6} {row['rss_idle_mib']:8.0f}M "
              f"{row['rss_loaded_mib']:9.0f}M")
    print(f"  POST /v1/clean vs naive endpoint: {http['ratio']:.2f}x; service p99/p50 "
          f"{http['service']['p99_ms'] / http['service']['p50_ms']:.2f}")
    return {"in_process": process, "http": http}


if __name__ == "__main__":
    main()
