"""Benchmark of the batch paths: `cleaner clean` on seeded CSV extracts of
10k and 100k rows with one and two jobs (rows/s and peak memory, each run in
a fresh process), and POST /v1/clean/batch with 1,000-record JSON bodies
through the Flask app in process. Prints a table; run with `make bench`."""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
import corpus  # noqa: E402

from cleaner.web import create_app  # noqa: E402

SIZES = (10_000, 100_000)
CLI_ROUNDS = 2
# Runs the command in a fresh interpreter and reports the peak memory of that
# process (VmHWM: ru_maxrss would carry over the peak of the benchmark process
# that forked it) and of its largest worker (ru_maxrss of children, in KiB).
_RUN = """
import re, resource, sys, time
from cleaner.cli import main
start = time.perf_counter()
code = main(sys.argv[1:])
seconds = time.perf_counter() - start
own = re.search(r"VmHWM:\\s+(\\d+) kB", open("/proc/self/status").read())[1]
workers = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
print(code, seconds, own, workers)
"""


def run_cli(source: Path, jobs: int) -> tuple[float, float, float]:
    """(seconds, peak MiB of the main process, peak MiB of the largest worker)."""
    done = subprocess.run([sys.executable, "-c", _RUN, "clean", str(source), "-o",
                           str(source.with_suffix(f".out{jobs}.csv")), "--jobs", str(jobs),
                           "--reference-date", "2026-12-02"],
                          capture_output=True, text=True, check=True)
    code, seconds, own, workers = done.stdout.split()
    assert code == "0", done.stderr
    return float(seconds), int(own) / 1024, int(workers) / 1024


def json_batches(records: int = 10_000, per_body: int = 1_000) -> float:
    app = create_app({"log_level": "WARNING", "max_batch_records": per_body})
    client = app.test_client()
    rng_records = [{"name": name, "address": address} for name, address in
                   zip(corpus.names(records), corpus.addresses(records))]
    start = time.perf_counter()
    for first in range(0, records, per_body):
        body = {"records": rng_records[first:first + per_body],
                "options": {"reference_date": "2026-12-02"}}
        response = client.post("/v1/clean/batch", data=json.dumps(body),
                               content_type="application/json")
        assert response.status_code == 200
    return records / (time.perf_counter() - start)


def main() -> dict:
    print("batch: cleaner clean on invented CSV extracts (name, DOB, sex, phone, address), "
          f"best of {CLI_ROUNDS} runs each")
    print(f"{'rows':>8} {'jobs':>4} {'seconds':>8} {'rows/s':>8} {'peak MiB main':>14} "
          f"{'peak MiB worker':>16}")
    results = {}
    with tempfile.TemporaryDirectory() as folder:
        for size in SIZES:
            source = Path(folder) / f"extract{size}.csv"
            with source.open("w", encoding="utf-8") as handle:
                handle.writelines(corpus.csv_rows(size))
            # One and two jobs in turn, twice: the faster of each (a shared
            # host has slow spells), with the larger of each one's peaks.
            runs: dict[int, list[tuple[float, float, float]]] = {1: [], 2: []}
            for _ in range(CLI_ROUNDS):
                for jobs in runs:
                    runs[jobs].append(run_cli(source, jobs))
            for jobs, timings in runs.items():
                seconds = min(timing[0] for timing in timings)
                own, worker = (max(timing[index] for timing in timings) for index in (1, 2))
                results[size, jobs] = (seconds, own, worker)
                print(f"{size:>8} {jobs:>4} {seconds:8.1f} {size / seconds:8.0f} {own:14.0f} "
                      f"{worker:16.0f}")
    small, large = SIZES
    speedup = results[large, 1][0] / results[large, 2][0]
    growth = max(results[large, 1][1], 1) / max(results[small, 1][1], 1)
    print(f"--jobs 2 vs 1 at {large:,} rows: {speedup:.2f}x; peak memory {large:,} vs "
          f"{small:,} rows (one job): {growth:.2f}x")
    json_rate = json_batches()
    print(f"POST /v1/clean/batch, 1,000-record JSON bodies, in process: {json_rate:,.0f} records/s")
    return {"cli": {f"{size}_rows_{jobs}_jobs": {"rows_per_s": size / seconds,
                                                  "peak_mib_main": own, "peak_mib_worker": worker}
                    for (size, jobs), (seconds, own, worker) in results.items()},
            "jobs_2_vs_1": speedup, "memory_100k_vs_10k": growth,
            "json_batch_records_per_s": json_rate}


if __name__ == "__main__":
    main()
