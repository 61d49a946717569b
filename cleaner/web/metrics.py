"""GET /metrics in the Prometheus text format: requests, timings, records and
change and flag counts by code. Counts only: no label ever holds a value from
a request (routes are the declared ones, codes are those rules/ lists).

Under `cleaner serve` every worker writes to the shared folder named by
PROMETHEUS_MULTIPROC_DIR (prometheus-client's multiprocess mode), so whichever
worker answers a scrape reports the whole service."""

from __future__ import annotations

import bisect
import os
import threading
import time
from collections import Counter as Tally
from collections.abc import Iterable, Mapping
from typing import Protocol

from flask import Blueprint, Response
from prometheus_client import (CONTENT_TYPE_LATEST, REGISTRY, CollectorRegistry, Counter,
                               Histogram, generate_latest, multiprocess)


MULTIPROCESS_DIR = "PROMETHEUS_MULTIPROC_DIR"
# Counts reach the shared store from a thread of each process, at most this
# late: a request raises about twenty counts and a duration, and each write to
# the store costs a microsecond or more of the request it would be made in.
PUSH_SECONDS = 1.0

DURATION_BUCKETS = (.001, .0025, .005, .01, .025, .05, .1, .25, .5, 1, 2.5, 5, 10, 30, 60)
REQUESTS = Counter("cleaner_requests_total", "Requests answered, by declared route and status.",
                   ["route", "status"])
DURATION = Histogram("cleaner_request_duration_seconds",
                     "Time from the request to the last byte of the reply, by declared route.",
                     ["route"], buckets=DURATION_BUCKETS)
RECORDS = Counter("cleaner_records_total", "Records cleaned, those answered with an error included.")
RECORD_ERRORS = Counter("cleaner_record_errors_total",
                        "Records of a batch answered with an error instead of a result.")
CHANGES = Counter("cleaner_changes_total", "Changes made, by reason code.", ["code"])
FLAGS = Counter("cleaner_flags_total", "Flags raised, by code.", ["code"])


class Counts(Protocol):
    """What a request cleaned: a batch.Summary, or api.ListedCodes for one record or message.
    `changes` and `flags` are codes, listed or counted (Counter.update takes both)."""
    rows: int
    errors: int
    changes: Iterable[str] | Mapping[str, int]
    flags: Iterable[str] | Mapping[str, int]

    def totals(self) -> tuple[int, int, int]: ...   # records, changes, flags


class PendingCounts:
    """This process's counts not yet in the store, and the thread that moves them."""

    def __init__(self) -> None:
        self.lock = threading.Lock()
        self._reset()
        self.pusher_pid = 0   # the process the pushing thread runs in; a forked worker starts its own

    def _reset(self) -> None:
        self.requests: Tally = Tally()
        # Per route: how many durations fell in each bucket (the last: past them
        # all) and their sum; the store's histogram then takes one write a bucket.
        self.durations: dict[str, tuple[list[int], list[float]]] = {}
        self.records = self.errors = 0
        self.changes: Tally = Tally()
        self.flags: Tally = Tally()

    def add(self, route: str, status: int, seconds: float, counts: Counts | None) -> None:
        with self.lock:
            self.requests[route, status] += 1
            buckets, total = self.durations.setdefault(
                route, ([0] * (len(DURATION_BUCKETS) + 1), [0.0]))
            buckets[bisect.bisect_left(DURATION_BUCKETS, seconds)] += 1
            total[0] += seconds
            if counts is not None:
                self.records += counts.rows
                self.errors += counts.errors
                self.changes.update(counts.changes)
                self.flags.update(counts.flags)
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
            requests, durations, records, errors, changes, flags = (
                self.requests, self.durations, self.records, self.errors, self.changes,
                self.flags)
            self._reset()
        for (route, status), count in requests.items():
            REQUESTS.labels(route, str(status)).inc(count)
        for route, (buckets, total) in durations.items():
            # What Histogram.observe does for one duration, for a second's worth:
            # its sum, and the count of the first bucket the duration fits in.
            histogram = DURATION.labels(route)
            histogram._sum.inc(total[0])
            for bucket, count in zip(histogram._buckets, buckets):
                if count:
                    bucket.inc(count)
        if records:
            RECORDS.inc(records)
        if errors:
            RECORD_ERRORS.inc(errors)
        for metric, codes in ((CHANGES, changes), (FLAGS, flags)):
            for code, count in codes.items():
                metric.labels(code).inc(count)


pending = PendingCounts()


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
