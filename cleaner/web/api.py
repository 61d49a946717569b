"""The v1 endpoints. Thin: they read the body, call the engine, and count."""

from __future__ import annotations

import operator
from typing import Any

from flask import Blueprint, Response, current_app, jsonify, request, stream_with_context

from cleaner import batch
from cleaner.engine import clean_record
from cleaner.options import OPTION_NAMES, InvalidInput, Options, read_options
from cleaner.web.logs import COUNTS_KEY
from cleaner.web.problems import RequestProblem

bp = Blueprint("v1", __name__, url_prefix="/v1")

_CLEAN_MEMBERS = ("record", "options")


def read_json_body() -> Any:
    if request.mimetype != "application/json":
        raise RequestProblem(415, "unsupported-media-type", "Unsupported Media Type",
                             "Send the body as application/json.")
    return _parsed_body()


def _parsed_body() -> Any:
    body = batch.parse_line(request.get_data(cache=False))
    if isinstance(body, batch.NotJson):
        raise RequestProblem(400, "malformed-json", "Malformed JSON",
                             "The body is not a well-formed UTF-8 JSON document.")
    return body


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


def clean_body(body: Any, service) -> dict[str, Any]:
    """The reply to a parsed POST /v1/clean body; raises InvalidInput."""
    record, options = _clean_request(body)
    return clean_record(record, read_options(options, service.default_options()), service.rules)


@bp.post("/clean")
def clean_one():
    result = clean_body(read_json_body(), current_app.extensions["cleaner"])
    request.environ[COUNTS_KEY] = ListedCodes(result["changes"], result["flags"])
    return jsonify(result)


_REASON, _CODE = operator.itemgetter("reason"), operator.itemgetter("code")


class ListedCodes:
    """What the log line and the metrics count of one record, or of one FHIR
    or HL7 v2 message (`rows` Patients or PID segments): its codes as listed,
    where a batch.Summary would cost more to build than the rest of the
    request's bookkeeping together."""
    __slots__ = ("rows", "changes", "flags")
    errors = 0

    def __init__(self, changes: list[dict[str, Any]], flags: list[dict[str, Any]], rows: int = 1):
        self.rows = rows
        self.changes = list(map(_REASON, changes))
        self.flags = list(map(_CODE, flags))

    def totals(self) -> tuple[int, int, int]:
        return self.rows, len(self.changes), len(self.flags)


def _summary() -> batch.Summary:
    """The summary of this request's records, for its log line and the metrics."""
    summary = request.environ[COUNTS_KEY] = batch.Summary()
    return summary


_BATCH_MEDIA_TYPES = ("application/json", "text/csv", "application/x-ndjson")
_MAP_PREFIX = "map."


def query_options(named_prefix: str = "") -> tuple[Options, dict[str, str]]:
    """Options from the query, and the parameters named <named_prefix><key>
    (the batch's column mapping, map.<record key>=<column>), by key."""
    options, named = {}, {}
    for name, value in request.args.items():
        if name in OPTION_NAMES:
            options[name] = value
        elif named_prefix and name.startswith(named_prefix):
            named[name[len(named_prefix):]] = value
        else:
            # Parameter names come from the caller and are not echoed back.
            also = f" nor {named_prefix}<key>" if named_prefix else ""
            raise InvalidInput([("", "holds a query parameter that is neither an option "
                                     f"({', '.join(OPTION_NAMES)}){also}")])
    service = current_app.extensions["cleaner"]
    return read_options(options, service.default_options()), named


@bp.post("/clean/batch")
def clean_batch():
    service = current_app.extensions["cleaner"]
    if request.mimetype not in _BATCH_MEDIA_TYPES:
        raise RequestProblem(415, "unsupported-media-type", "Unsupported Media Type",
                             "Send the body as application/json, text/csv or application/x-ndjson.")
    request.max_content_length = service.max_batch_bytes
    if request.mimetype == "application/json":
        return _batch_of_json(service)
    options, explicit = query_options(_MAP_PREFIX)
    lines = batch.text_lines(request.stream)
    if request.mimetype == "text/csv":
        job = batch.CsvJob.start(lines, explicit, service.rules)   # a bad mapping is a 422 here
        return Response(stream_with_context(batch.csv_reply(job, options, service.rules,
                                                            _summary())),
                        mimetype="text/csv")
    if explicit:
        raise InvalidInput([("", "map.<key> applies to CSV only")])
    return Response(stream_with_context(batch.clean_ndjson(
        (line for line, _ in lines), options, service.rules, _summary())),
        mimetype="application/x-ndjson")


def _batch_of_json(service):
    body = _parsed_body()
    if not isinstance(body, dict) or not isinstance(body.get("records"), list):
        raise InvalidInput([("/records", "must be a list of record objects")])
    if set(body) - {"records", "options"}:
        raise InvalidInput([("", "holds a member other than records and options")])
    if len(body["records"]) > service.max_batch_records:
        raise RequestProblem(413, "too-many-records", "Too Many Records",
                             f"A JSON batch holds at most {service.max_batch_records} records; "
                             "send more as NDJSON or in several requests.")
    options = read_options(body.get("options"), service.default_options())
    summary = _summary()
    results = list(batch.clean_records(body["records"], options, service.rules, summary))
    return jsonify({"results": results, "summary": summary.as_json()})


@bp.get("/reasons")
def reasons():
    listed = current_app.extensions["cleaner"].rules.reasons.values()
    return jsonify({"reasons": [reason.as_json() for reason in
                                sorted(listed, key=lambda reason: reason.code)]})
