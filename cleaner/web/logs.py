"""One JSON log line per request, to stderr: ids, route, status, timing and
counts. Never a value from the request: not its body, query string or path."""

from __future__ import annotations

import functools
import logging
import re
import secrets
import sys
import time

import orjson
from flask import Flask, Response, g, request

_REQUEST_ID = re.compile(r"^[A-Za-z0-9._:-]{1,128}$")
_LOG_FIELDS = ("request_id", "method", "route", "status", "duration_ms", "records",
               "changes", "flags", "error_type", "rules_version", "codes")


class JsonFormatter(logging.Formatter):
    """One compact JSON object per line. A line is written for every request,
    so it is built with orjson and the time text is made once a second."""

    def format(self, record: logging.LogRecord) -> str:
        line = {"time": _utc_second(int(record.created)), "level": record.levelname.lower(),
                "event": record.getMessage()}
        line.update((name, getattr(record, name)) for name in _LOG_FIELDS if hasattr(record, name))
        return orjson.dumps(line).decode()


@functools.lru_cache(maxsize=2)
def _utc_second(second: int) -> str:
    return time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(second))


def configure(app: Flask, level: str) -> None:
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(JsonFormatter())
    app.logger.handlers[:] = [handler]
    app.logger.setLevel(level.upper())
    app.logger.propagate = False

    @app.before_request
    def start() -> None:
        g.started = time.perf_counter()
        given = request.environ.get("HTTP_X_REQUEST_ID", "")
        g.request_id = given if _REQUEST_ID.match(given) else secrets.token_hex(16)

    @app.after_request
    def finish(response: Response) -> Response:
        request_id = g.get("request_id", "")
        response.headers["X-Request-ID"] = request_id
        if app.logger.isEnabledFor(logging.INFO):
            rule = request.url_rule
            app.logger.info("request", extra={
                "request_id": request_id, "method": request.method,
                "route": rule.rule if rule else "(no route)", "status": response.status_code,
                "duration_ms": round((time.perf_counter() - g.get("started", time.perf_counter()))
                                     * 1000, 3),
                **g.get("counts", {})})
        return response
