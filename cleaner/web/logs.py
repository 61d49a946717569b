"""The request envelope, WSGI middleware around the Flask app: every
response gets the request's id and the headers that keep patient data out of
caches and browsers' guesses, and every request, once its last byte is sent,
one JSON log line on stderr with ids, route, status, timing and counts, and
its figures in the metrics. Never a value from the request: not its body,
query string or path.

It works on the raw WSGI call: a few microseconds, where Flask's request
hooks and header objects cost several times that on every call."""

from __future__ import annotations

import functools
import logging
import re
import secrets
import sys
import time
from collections.abc import Callable, Iterable
from typing import Any

import orjson
from flask import Flask, request

from cleaner.web import metrics

REQUEST_ID_KEY = "cleaner.request_id"   # WSGI environ keys the views and problems read
COUNTS_KEY = "cleaner.counts"           # and write: a metrics.Counts of what was cleaned
ROUTE_KEY = "cleaner.route"
_NO_ROUTE = "(no route)"

_REQUEST_ID = re.compile(r"^[A-Za-z0-9._:-]{1,128}$")
_LOG_FIELDS = ("request_id", "method", "route", "status", "duration_ms", "records",
               "changes", "flags", "error_type", "rules_version", "codes")
# Responses carry patient data: no cache may keep them, no browser may sniff them.
_PROTECTIVE_HEADERS = (("Cache-Control", "no-store"), ("X-Content-Type-Options", "nosniff"))
_SET_HERE = frozenset(("cache-control", "x-content-type-options", "x-request-id"))


def _json_line(created: float, level: str, event: str, fields: dict[str, Any]) -> str:
    return orjson.dumps({"time": _utc_second(int(created)), "level": level, "event": event,
                         **fields}).decode()


class JsonFormatter(logging.Formatter):
    """One compact JSON object per line, for the service's own events."""

    def format(self, record: logging.LogRecord) -> str:
        return _json_line(record.created, record.levelname.lower(), record.getMessage(),
                          {name: getattr(record, name) for name in _LOG_FIELDS
                           if hasattr(record, name)})


class JsonLineHandler(logging.StreamHandler):
    """The service's log stream. Besides logging's records it takes the
    request lines straight from the envelope: one is written for every
    request, and building a LogRecord (the caller's frame, the thread, the
    process) costs several times more than the line itself."""

    def __init__(self, stream) -> None:
        super().__init__(stream)
        self.setFormatter(JsonFormatter())

    def write_line(self, level: str, event: str, fields: dict[str, Any]) -> None:
        text = _json_line(time.time(), level, event, fields) + self.terminator
        with self.lock:
            self.stream.write(text)
            self.flush()


@functools.lru_cache(maxsize=2)
def _utc_second(second: int) -> str:
    return time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(second))


WsgiApp = Callable[[dict[str, Any], Callable], Iterable[bytes]]


class RequestEnvelope:
    def __init__(self, app: WsgiApp, logger: logging.Logger, log: JsonLineHandler):
        self.app, self.logger, self.log = app, logger, log

    def __call__(self, environ: dict[str, Any], start_response: Callable) -> Iterable[bytes]:
        started = time.perf_counter()
        given = environ.get("HTTP_X_REQUEST_ID", "")
        request_id = given if _REQUEST_ID.match(given) else secrets.token_hex(16)
        environ[REQUEST_ID_KEY] = request_id
        sent_status: list[str] = []

        def enveloped_start(status: str, headers: list[tuple[str, str]], exc_info=None):
            sent_status.append(status)
            headers[:] = [header for header in headers if header[0].lower() not in _SET_HERE]
            headers += (("X-Request-ID", request_id), *_PROTECTIVE_HEADERS)
            return start_response(status, headers, *([exc_info] if exc_info else []))

        def finish() -> None:
            # A streamed batch is done when the server closes its reply, not
            # when the view returns: its counts and duration are known only then.
            route = environ.get(ROUTE_KEY, _NO_ROUTE)
            status = int(sent_status[0].split(" ", 1)[0]) if sent_status else 500
            seconds = time.perf_counter() - started
            counts = environ.get(COUNTS_KEY)
            metrics.pending.add(route, status, seconds, counts)
            if self.logger.isEnabledFor(logging.INFO):
                totals = {} if counts is None else dict(zip(("records", "changes", "flags"),
                                                            counts.totals()))
                self.log.write_line("info", "request", {
                    "request_id": request_id, "method": environ.get("REQUEST_METHOD"),
                    "route": route, "status": status,
                    "duration_ms": round(seconds * 1000, 3), **totals})

        return _Finishing(self.app(environ, enveloped_start), finish)


class _Finishing:
    """The reply's body, with `finish` run once the server closes it."""
    __slots__ = ("body", "finish")

    def __init__(self, body: Iterable[bytes], finish: Callable[[], None]):
        self.body, self.finish = body, finish

    def __iter__(self):
        return iter(self.body)

    def close(self) -> None:
        try:
            close = getattr(self.body, "close", None)
            if close is not None:
                close()
        finally:
            self.finish()


def configure(app: Flask, level: str) -> None:
    handler = JsonLineHandler(sys.stderr)
    app.logger.handlers[:] = [handler]
    app.logger.setLevel(level.upper())
    app.logger.propagate = False
    app.wsgi_app = RequestEnvelope(app.wsgi_app, app.logger, handler)

    @app.before_request
    def note_route() -> None:
        # The route as declared (/v1/clean), never the path as sent, for the log line.
        rule = request.url_rule
        if rule is not None:
            request.environ[ROUTE_KEY] = rule.rule
