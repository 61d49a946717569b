"""POST /v1/clean answered on the raw WSGI call. A registration desk calls
it once a patient and waits on it, and Flask's request context, routing,
hooks and response objects cost about as much as cleaning the record itself.
So a call that is plainly well-formed (the route, a JSON content type, a
Content-Length within the limit, the key where keys are required, a body the
engine accepts) is answered here, through the same functions the view calls;
anything else goes on to the Flask app, with the body it sent, and is
answered there as before. tests/test_fastlane.py checks that both give the
same reply to generated requests."""

from __future__ import annotations

import io
from collections.abc import Callable, Iterable
from typing import Any

from cleaner import batch
from cleaner.web import access, api, logs
from cleaner.web.encoding import encoded

ROUTE = "/v1/clean"


class CleanFastLane:
    def __init__(self, app: logs.WsgiApp, service, max_body_bytes: int,
                 digests: frozenset[bytes]):
        self.app, self.service = app, service
        self.max_body_bytes, self.digests = max_body_bytes, digests

    def __call__(self, environ: dict[str, Any], start_response: Callable) -> Iterable[bytes]:
        if environ.get("PATH_INFO") != ROUTE or environ.get("REQUEST_METHOD") != "POST" \
                or not self._plainly_acceptable(environ):
            return self.app(environ, start_response)
        length = int(environ["CONTENT_LENGTH"])
        sent = environ["wsgi.input"].read(length) if length else b""
        reply = self._reply(sent) if len(sent) == length else None
        if reply is None:
            # Flask reads the body again, so it gets back what was read here.
            environ["wsgi.input"] = io.BytesIO(sent)
            return self.app(environ, start_response)
        result, body = reply
        environ[logs.ROUTE_KEY] = ROUTE
        environ[logs.COUNTS_KEY] = api.ListedCodes(result["changes"], result["flags"])
        start_response("200 OK", [("Content-Type", "application/json"),
                                  ("Content-Length", str(len(body)))])
        return [body]

    def _plainly_acceptable(self, environ: dict[str, Any]) -> bool:
        media_type = environ.get("CONTENT_TYPE", "").partition(";")[0].strip().lower()
        length = environ.get("CONTENT_LENGTH", "")
        # A chunked body's length is not known before it is read (Werkzeug then
        # ignores Content-Length), so Flask reads it.
        return (media_type == "application/json" and length.isdigit()
                and int(length) <= self.max_body_bytes
                and "HTTP_TRANSFER_ENCODING" not in environ
                and (not self.digests
                     or access.authorised(environ.get("HTTP_AUTHORIZATION", ""), self.digests)))

    def _reply(self, sent: bytes) -> tuple[dict[str, Any], bytes] | None:
        """The cleaned result and its JSON, or None where Flask should answer."""
        body = batch.parse_line(sent)
        if isinstance(body, batch.NotJson):
            return None
        try:
            result = api.clean_body(body, self.service)
        # Whatever goes wrong, Flask meets it again and answers it the one way
        # the service answers errors (a problem document, a logged error).
        except Exception:
            return None
        return result, encoded(result)
