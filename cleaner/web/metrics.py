"""GET /metrics in the Prometheus text format: requests, timings, records and
change and flag counts by code. Counts only: no label ever holds a value from
a request (routes are the declared ones, codes are those rules/ lists).

Under `cleaner serve` every worker writes to the shared folder named by
PROMETHEUS_MULTIPROC_DIR (prometheus-client's multiprocess mode), so whichever
worker answers a scrape reports the whole service."""

from __future__ import annotations

import os
import time
from collections import Counter as Tally

from flask import Blueprint, Response
from prometheus_client import (CONTENT_TYPE_LATEST, REGISTRY, CollectorRegistry, Counter,
                               Histogram, generate_latest, multiprocess)

from cleaner.batch import Summary

MULTIPROCESS_DIR = "PROMETHEUS_MULTIPROC_DIR"
# Code counts reach the shared store at most this often: a request raises
# about twenty, and each write to the store costs a microsecond or two.
PUSH_SECONDS = 1.0

REQUESTS = Counter("cleaner_requests_total", "Requests answered, by declared route and status.",
                   ["route", "status"])
DURATION = Histogram("cleaner_request_duration_seconds",
                     "Time from the request to the last byte of the reply, by declared route.",
                     ["route"], buckets=(.001, .0025, .005, .01, .025, .05, .1, .25, .5, 1, 2.5,
                                         5, 10, 30, 60))
RECORDS = Counter("cleaner_records_total", "Records cleaned, those answered with an error included.")
RECORD_ERRORS = Counter("cleaner_record_errors_total",
                        "Records of a batch answered with an error instead of a result.")
CHANGES = Counter("cleaner_changes_total", "Changes made, by reason code.", ["code"])
FLAGS = Counter("cleaner_flags_total", "Flags raised, by code.", ["code"])


class CodeCounts:
    """This process's change and flag counts not yet written to the store."""

    def __init__(self) -> None:
        self.changes: Tally = Tally()
        self.flags: Tally = Tally()
        self.pushed_at = time.monotonic()

    def add(self, summary: Summary) -> None:
        self.changes.update(summary.changes)
        self.flags.update(summary.flags)
        if time.monotonic() - self.pushed_at >= PUSH_SECONDS:
            self.push()

    def push(self) -> None:
        for metric, counts in ((CHANGES, self.changes), (FLAGS, self.flags)):
            for code, count in counts.items():
                metric.labels(code).inc(count)
            counts.clear()
        self.pushed_at = time.monotonic()


_pending = CodeCounts()


def record(route: str, status: int, seconds: float, summary: Summary | None) -> None:
    REQUESTS.labels(route, str(status)).inc()
    DURATION.labels(route).observe(seconds)
    if summary is not None and summary.rows:
        RECORDS.inc(summary.rows)
        if summary.errors:
            RECORD_ERRORS.inc(summary.errors)
        _pending.add(summary)


bp = Blueprint("metrics", __name__)


@bp.get("/metrics")
def metrics():
    _pending.push()
    if os.environ.get(MULTIPROCESS_DIR):
        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)
    else:
        registry = REGISTRY
    return Response(generate_latest(registry), content_type=CONTENT_TYPE_LATEST)
