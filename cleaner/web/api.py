"""The v1 endpoints. Thin: they read the body, call the engine, and count."""

from __future__ import annotations

import json
from typing import Any

from flask import Blueprint, current_app, g, jsonify, request

from cleaner.engine import clean_record
from cleaner.options import InvalidInput, read_options
from cleaner.web.problems import RequestProblem

bp = Blueprint("v1", __name__, url_prefix="/v1")

_CLEAN_MEMBERS = ("record", "options")


def _reject_constant(name: str) -> Any:
    raise ValueError("not JSON")


def read_json_body() -> Any:
    if request.mimetype != "application/json":
        raise RequestProblem(415, "unsupported-media-type", "Unsupported Media Type",
                             "Send the body as application/json.")
    try:
        return json.loads(request.get_data(cache=False), parse_constant=_reject_constant)
    except (ValueError, RecursionError):
        raise RequestProblem(400, "malformed-json", "Malformed JSON",
                             "The body is not a well-formed UTF-8 JSON document.") from None


def _clean_request(body: Any) -> tuple[Any, Any]:
    if not isinstance(body, dict):
        raise InvalidInput([("", "must be an object with a record member")])
    # Member names come from the caller and are not echoed back.
    unknown = [("", "holds a member other than record and options")] \
        if set(body) - set(_CLEAN_MEMBERS) else []
    if "record" not in body:
        unknown.append(("/record", "is required"))
    if unknown:
        raise InvalidInput(unknown)
    return body["record"], body.get("options")


@bp.post("/clean")
def clean_one():
    service = current_app.extensions["cleaner"]
    record, options = _clean_request(read_json_body())
    result = clean_record(record, read_options(options, service.default_options()),
                          service.rules)
    g.counts = {"records": 1, "changes": len(result["changes"]), "flags": len(result["flags"])}
    return jsonify(result)


@bp.get("/reasons")
def reasons():
    listed = current_app.extensions["cleaner"].rules.reasons.values()
    return jsonify({"reasons": [reason.as_json() for reason in
                                sorted(listed, key=lambda reason: reason.code)]})
