"""Errors as RFC 9457 problem details. Bodies say what was wrong with the
request's shape, never what the request contained."""

from __future__ import annotations

from flask import Flask, Response, json, request
from werkzeug.exceptions import HTTPException

from cleaner.options import InvalidInput
from cleaner.web.logs import REQUEST_ID_KEY

PROBLEM_TYPE = "urn:demographic-cleaner:problem:"
PROBLEM_MEDIA_TYPE = "application/problem+json"


class RequestProblem(Exception):
    def __init__(self, status: int, slug: str, title: str, detail: str,
                 errors: list[tuple[str, str]] | None = None):
        super().__init__(title)
        self.status, self.slug, self.title, self.detail = status, slug, title, detail
        self.errors = errors or []


def problem_response(status: int, slug: str, title: str, detail: str,
                     errors: list[tuple[str, str]] | None = None) -> Response:
    body = {"type": PROBLEM_TYPE + slug, "title": title, "status": status, "detail": detail}
    if errors:
        body["errors"] = [{"pointer": pointer, "detail": message} for pointer, message in errors]
    request_id = request.environ.get(REQUEST_ID_KEY)
    if request_id:
        body["request_id"] = request_id
    return Response(json.dumps(body), status=status, mimetype=PROBLEM_MEDIA_TYPE)


_HTTP_SLUGS = {404: "not-found", 405: "method-not-allowed", 413: "body-too-large",
               415: "unsupported-media-type"}
_HTTP_DETAILS = {
    404: "No endpoint has this path; GET /openapi.yaml lists them.",
    405: "This endpoint does not take this method; GET /openapi.yaml lists what it takes.",
    413: "The request body is larger than the configured limit.",
}


def register(app: Flask) -> None:
    @app.errorhandler(RequestProblem)
    def request_problem(exc: RequestProblem):
        return problem_response(exc.status, exc.slug, exc.title, exc.detail, exc.errors)

    @app.errorhandler(InvalidInput)
    def invalid_input(exc: InvalidInput):
        return problem_response(422, "invalid-body", "Request body is not the contract's shape",
                                "See errors for each member that is wrong.", exc.problems)

    @app.errorhandler(HTTPException)
    def http_exception(exc: HTTPException):
        status = exc.code or 500
        response = problem_response(status, _HTTP_SLUGS.get(status, "http-error"),
                                    exc.name, _HTTP_DETAILS.get(status, exc.name + "."))
        if status == 405 and exc.valid_methods:
            response.headers["Allow"] = ", ".join(exc.valid_methods)
        return response

    @app.errorhandler(Exception)
    def unexpected(exc: Exception):
        # The message of an unexpected error may quote input; log only its type.
        app.logger.error("unhandled error", extra={"error_type": type(exc).__name__})
        return problem_response(500, "internal-error", "Internal Server Error",
                                "The service failed on this request; the request id is logged.")
