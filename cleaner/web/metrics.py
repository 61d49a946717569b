"""GET /metrics in the Prometheus text format: requests, timings, records and
change and flag counts by code. Counts only: no label ever holds a value from
a request (routes are the declared ones, codes are those rules/ lists).

Under `cleaner serve` every worker writes to the shared folder named by
PROMETHEUS_MULTIPROC_DIR (prometheus-client's multiprocess mode), so whichever
worker answers a scrape reports the whole service."""

from __future__ import annotations

import os
import threading
import time
from collections import Counter as Tally

from flask import Blueprint, Response
from prometheus_client import (CONTENT_TYPE_LATEST, REGISTRY, CollectorRegistry, Counter,
                               Histogram, generate_latest, multiprocess)

from cleaner.batch import Summary

MULTIPROCESS_DIR = "PROMETHEUS_MULTIPROC_DIR"
# Counts reach the shared store from a thread of each process, at most this
# late: a request raises about twenty, and each write to the store costs a
# microsecond or two of the request it would otherwise be made in.
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


class PendingCounts:
    """This process's counts not yet in the store, and the thread that moves them."""

    def __init__(self) -> None:
        self.lock = threading.Lock()
        self.requests: Tally = Tally()
        self.records = self.errors = 0
        self.changes: Tally = Tally()
        self.flags: Tally = Tally()
        self.pusher_pid = 0   # the process the pushing thread runs in; a forked worker starts its own

    def add(self, route: str, status: int, summary: Summary | None) -> None:
        with self.lock:
            self.requests[route, status] += 1
            if summary is not None:
                self.records += summary.rows
                self.errors += summary.errors
                self.changes.update(summary.changes)
                self.flags.update(summary.flags)
        if self.pusher_pid != os.getpid():
            self.pusher_pid = os.getpid()
            threading.Thread(target=self._push_forever, name="metrics-push",
                             daemon=True).start()

    def _push_forever(self) -> None:
        while True:
            time.sleep(PUSH_SECONDS)
            self.push()

    def push(self) -> None:
        with self.lock:
            requests, self.requests = self.requests, Tally()
            records, errors, self.records, self.errors = self.records, self.errors, 0, 0
            changes, self.changes = self.changes, Tally()
            flags, self.flags = self.flags, Tally()
        for (route, status), count in requests.items():
            REQUESTS.labels(route, str(status)).inc(count)
        if records:
            RECORDS.inc(records)
        if errors:
            RECORD_ERRORS.inc(errors)
        for metric, counts in ((CHANGES, changes), (FLAGS, flags)):
            for code, count in counts.items():
                metric.labels(code).inc(count)


pending = PendingCounts()


def record(route: str, status: int, seconds: float, summary: Summary | None) -> None:
    DURATION.labels(route).observe(seconds)
    pending.add(route, status, summary)


bp = Blueprint("metrics", __name__)


@bp.get("/metrics")
def metrics():
    pending.push()
    if os.environ.get(MULTIPROCESS_DIR):
        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)
    else:
        registry = REGISTRY
    return Response(generate_latest(registry), content_type=CONTENT_TYPE_LATEST)
