"""POST /v1/fhir/clean: an HL7 FHIR R4 Patient, or a Bundle of them, cleaned
(see cleaner.formats.fhir), answered as a Parameters resource. Every answer
of this endpoint is FHIR, errors included: an OperationOutcome naming the
FHIRPath of each wrong element, never a value that was sent.

Numbers are parsed as written and written back as parsed (orjson.Fragment),
so an untouched `valueDecimal: 1.50` does not come back as 1.5."""

from __future__ import annotations

import json
from typing import Any

import orjson
from flask import Blueprint, Response, current_app, request
from werkzeug.exceptions import HTTPException

from cleaner.formats import fhir
from cleaner.options import InvalidInput
from cleaner.web import api
from cleaner.web.logs import COUNTS_KEY

bp = Blueprint("fhir", __name__, url_prefix="/v1")

MEDIA_TYPE = "application/fhir+json"
_ACCEPTED = (MEDIA_TYPE, "application/json")
# IssueType of each refusal's status.
_ISSUE_TYPES = {400: "structure", 404: "not-found", 405: "not-supported", 413: "too-costly",
                415: "not-supported", 422: "invalid"}


class Refused(Exception):
    def __init__(self, status: int, diagnostics: str):
        super().__init__(diagnostics)
        self.status, self.diagnostics = status, diagnostics


def _refusal(status: int, problems: list[tuple[str, str]]) -> Response:
    issues = [fhir.issue("error", _ISSUE_TYPES.get(status, "exception"), message, where)
              for where, message in problems]
    return Response(orjson.dumps(fhir.operation_outcome(issues)), status=status,
                    mimetype=MEDIA_TYPE)


@bp.errorhandler(Refused)
def refused(exc: Refused):
    return _refusal(exc.status, [("", exc.diagnostics)])


@bp.errorhandler(InvalidInput)
def invalid(exc: InvalidInput):
    return _refusal(422, exc.problems)


@bp.errorhandler(HTTPException)
def http_error(exc: HTTPException):
    status = exc.code or 500
    return _refusal(status, [("", f"{exc.name}.")])


def _not_json(constant: str) -> Any:
    raise ValueError("NaN and Infinity are not JSON")


def _document(body: bytes) -> Any:
    """The parsed body, numbers kept as written; refused where it is not JSON
    this endpoint can give back as sent (lone surrogates, deeper nesting than
    orjson writes)."""
    try:
        document = json.loads(body.decode("utf-8"), parse_float=orjson.Fragment,
                              parse_int=orjson.Fragment, parse_constant=_not_json)
        orjson.dumps(document)
    except (ValueError, RecursionError, TypeError):
        raise Refused(400, "The body is not a well-formed UTF-8 JSON document.") from None
    return document


def _options():
    try:
        return api.query_options()[0]
    except InvalidInput as exc:
        # Options come in the query here: told by the parameter's name, which
        # is one of ours, since an expression is a FHIRPath into the resource.
        raise InvalidInput([("", message if pointer == "" else
                             f"The query parameter {pointer.rpartition('/')[2]} {message}.")
                            for pointer, message in exc.problems]) from None


@bp.post("/fhir/clean")
def clean_resource():
    service = current_app.extensions["cleaner"]
    if request.mimetype not in _ACCEPTED:
        raise Refused(415, "Send the body as application/fhir+json or application/json.")
    request.max_content_length = service.max_batch_bytes
    options = _options()
    document = _document(request.get_data(cache=False))
    found = fhir.patients(document)
    if len(found) > service.max_batch_records:
        raise Refused(413, f"A Bundle holds at most {service.max_batch_records} Patients; "
                           "send more in several requests.")
    reply, findings = fhir.clean_resource(document, found, options, service.rules)
    request.environ[COUNTS_KEY] = api.ListedCodes(findings.changes, findings.flags,
                                                  rows=len(found))
    return Response(orjson.dumps(reply), mimetype=MEDIA_TYPE)
