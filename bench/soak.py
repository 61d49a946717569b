"""`make soak`: `cleaner serve --workers 2` under a steady mixed load for a
minute (SOAK_SECONDS to change it): CONNECTIONS clients on loopback, mostly
single records to POST /v1/clean and one request in BATCH_EVERY a batch of
BATCH_RECORDS records to POST /v1/clean/batch as JSON, NDJSON or CSV in turn.
Prints requests, errors and p50/p99 latency by kind, requests/s, and each
worker's resident memory after the warm-up and at the end; writes them to
bench/soak.json; stops the service with SIGTERM. Exits 1 on any failed
request or error line in the service's log, on a worker that grew more than
RSS_SLACK_MIB or was replaced, or on a stop that was not clean."""

from __future__ import annotations

import csv
import http.client
import io
import itertools
import json
import os
import re
import signal
import subprocess
import sys
import tempfile
import threading
import time
from collections import defaultdict
from pathlib import Path

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import corpus  # noqa: E402
from run import machine  # noqa: E402
from service import free_port, rss_mib, wait_until_answering, workers  # noqa: E402

SECONDS = 60
WARM_UP_SECONDS = 10
CONNECTIONS = 16
BATCH_EVERY = 20
BATCH_RECORDS = 100
BATCH_KINDS = (("batch-json", "application/json"), ("batch-ndjson", "application/x-ndjson"),
               ("batch-csv", "text/csv"))
# The records are drawn from one pool that the warm-up goes through several
# times, so that the value caches (bounded, up to 32,768 entries each) hold
# all they will hold before memory is first read: what grows after that is
# kept per request, not a cache filling up.
POOL_RECORDS = 4_000
# Freed memory is not handed back to the system at once (pymalloc arenas,
# glibc's heap), so a worker's resident size wanders by a MiB or two with the
# requests it happens to hold when it is read: a JSON batch of 100 records
# peaks near 1.5 MiB. 10 MiB is well above that wander, and spread over the
# ten thousand or more requests a worker answers after the warm-up it still
# catches a leak of a kilobyte a request.
RSS_SLACK_MIB = 10
REQUEST_TIMEOUT = 30
SERVER_ERROR = re.compile(r'\[ERROR\]|"level":"error"')


def _bodies() -> tuple[list[tuple[str, str, bytes]], list[tuple[str, str, bytes]]]:
    """(kind, content type, body) for the singles, then a batch of each kind in turn."""
    pool = corpus.intake_records(POOL_RECORDS)
    singles = [("single", "application/json", json.dumps({"record": record}).encode())
               for record in pool]
    batches = []
    for start, (kind, content_type) in zip(range(0, POOL_RECORDS, BATCH_RECORDS),
                                           itertools.cycle(BATCH_KINDS)):
        batches.append((kind, content_type, _batch_body(content_type,
                                                        pool[start:start + BATCH_RECORDS])))
    return singles, batches


def _batch_body(content_type: str, records: list[dict[str, str]]) -> bytes:
    if content_type == "application/json":
        return json.dumps({"records": records}).encode()
    if content_type == "application/x-ndjson":
        return "".join(json.dumps(record) + "\n" for record in records).encode()
    text = io.StringIO()
    writer = csv.DictWriter(text, fieldnames=list(records[0]), lineterminator="\n")
    writer.writeheader()
    writer.writerows(records)
    return text.getvalue().encode()


def _post(port: int, content_type: str, path: str, body: bytes) -> bool:
    """True when the service answered 2xx with the whole reply."""
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=REQUEST_TIMEOUT)
    try:
        connection.request("POST", path, body, {"Content-Type": content_type})
        response = connection.getresponse()
        response.read()
        return 200 <= response.status < 300
    except (OSError, http.client.HTTPException):
        return False
    finally:
        connection.close()


class MixedLoad:
    """CONNECTIONS clients posting until the deadline. Keeps the latencies of
    the answered requests and counts the failed ones, by kind."""

    def __init__(self, port: int, deadline: float):
        self.port, self.deadline = port, deadline
        self.singles, self.batches = _bodies()
        self.turns = itertools.count()   # shared: one request in BATCH_EVERY overall is a batch
        self.latencies: dict[str, list[float]] = defaultdict(list)
        self.errors: dict[str, int] = defaultdict(int)
        self.lock = threading.Lock()
        self.clients = [threading.Thread(target=self._client) for _ in range(CONNECTIONS)]

    def start(self) -> None:
        for thread in self.clients:
            thread.start()

    def join(self) -> None:
        for thread in self.clients:
            thread.join()

    def _client(self) -> None:
        while time.monotonic() < self.deadline:
            turn = next(self.turns)
            kind, content_type, body = (self.batches[turn // BATCH_EVERY % len(self.batches)]
                                        if turn % BATCH_EVERY == 0
                                        else self.singles[turn % len(self.singles)])
            path = "/v1/clean" if kind == "single" else "/v1/clean/batch"
            start = time.perf_counter()
            answered = _post(self.port, content_type, path, body)
            elapsed = time.perf_counter() - start
            with self.lock:
                if answered:
                    self.latencies[kind].append(elapsed)
                else:
                    self.errors[kind] += 1


def _rss_by_worker(master: int) -> dict[int, float]:
    return {int(worker.name): rss_mib(worker) for worker in workers(master)}


def _quantile_ms(ordered: list[float], share: float) -> float:
    return ordered[min(len(ordered) - 1, int(share * len(ordered)))] * 1000


def soak(seconds: float) -> dict:
    # A short run keeps two thirds of its time for the comparison.
    warm_up = min(WARM_UP_SECONDS, seconds / 3)
    port = free_port()
    with tempfile.TemporaryDirectory() as folder:
        log = Path(folder) / "service.log"
        with log.open("wb") as sink:
            process = subprocess.Popen([sys.executable, "-m", "cleaner.cli", "serve",
                                        "--workers", "2", "--port", str(port)],
                                       cwd=HERE.parent, stdout=sink, stderr=subprocess.STDOUT)
        try:
            wait_until_answering(f"http://127.0.0.1:{port}/v1/clean", process)
            started = time.monotonic()
            load = MixedLoad(port, started + seconds)
            load.start()
            time.sleep(warm_up)
            after_warm_up = _rss_by_worker(process.pid)
            # Read again while the load still runs, as after the warm-up.
            time.sleep(max(0.0, started + seconds - 1 - time.monotonic()))
            at_end = _rss_by_worker(process.pid)
            load.join()
            elapsed = time.monotonic() - started
        finally:
            process.send_signal(signal.SIGTERM)
            exit_code = process.wait(timeout=60)
        server_errors = sum(bool(SERVER_ERROR.search(line))
                            for line in log.read_text(errors="replace").splitlines())
    latencies, errors = load.latencies, load.errors
    kinds = ["single", *(kind for kind, _ in BATCH_KINDS)]
    requests = {kind: len(latencies[kind]) + errors[kind] for kind in kinds}
    latency_ms = {}
    for kind in kinds:
        ordered = sorted(latencies[kind])
        latency_ms[kind] = ({"p50": _quantile_ms(ordered, 0.50), "p99": _quantile_ms(ordered, 0.99)}
                            if ordered else None)
    growth = {pid: at_end[pid] - size for pid, size in after_warm_up.items() if pid in at_end}
    memory_steady = (set(at_end) == set(after_warm_up)
                     and all(grown <= RSS_SLACK_MIB for grown in growth.values()))
    figures = {
        "machine": machine(), "seconds": round(elapsed, 1), "warm_up_seconds": warm_up,
        "connections": CONNECTIONS, "batch_every": BATCH_EVERY, "batch_records": BATCH_RECORDS,
        "requests": requests, "errors": {kind: errors[kind] for kind in kinds},
        "requests_per_s": sum(requests.values()) / elapsed, "latency_ms": latency_ms,
        "rss_mib": {"after_warm_up": after_warm_up, "at_end": at_end},
        "rss_slack_mib": RSS_SLACK_MIB, "server_error_lines": server_errors,
        "server_exit_code": exit_code}
    figures["passed"] = (not any(errors.values()) and memory_steady and server_errors == 0
                         and exit_code == 0)
    return figures


def report(figures: dict) -> None:
    print(f"soak: cleaner serve, 2 sync workers, {figures['connections']} connections, "
          f"{figures['seconds']} s, one request in {figures['batch_every']} a batch of "
          f"{figures['batch_records']} records")
    print(f"  {'kind':13} {'requests':>9} {'errors':>7} {'p50 ms':>8} {'p99 ms':>8}")
    for kind, count in figures["requests"].items():
        latency = figures["latency_ms"][kind] or {"p50": float("nan"), "p99": float("nan")}
        print(f"  {kind:13} {count:9,} {figures['errors'][kind]:7} "
              f"{latency['p50']:8.1f} {latency['p99']:8.1f}")
    print(f"  {figures['requests_per_s']:,.0f} requests/s")
    rss = figures["rss_mib"]
    for pid, size in rss["after_warm_up"].items():
        end = rss["at_end"].get(pid)
        change = f"{end:6.1f} MiB at the end ({end - size:+.1f})" if end is not None \
            else "replaced before the end"
        print(f"  worker {pid}: {size:6.1f} MiB after {figures['warm_up_seconds']:.0f} s, {change}")
    print(f"  server error lines {figures['server_error_lines']}, "
          f"exit code {figures['server_exit_code']} after SIGTERM; "
          f"{'passed' if figures['passed'] else 'FAILED'} (memory slack {figures['rss_slack_mib']} MiB)")


def main() -> int:
    figures = soak(float(os.environ.get("SOAK_SECONDS", SECONDS)))
    report(figures)
    target = HERE / "soak.json"
    target.write_text(json.dumps(figures, indent=1) + "\n", encoding="utf-8")
    print(f"figures written to {target}")
    return 0 if figures["passed"] else 1


if __name__ == "__main__":
    sys.exit(main())
