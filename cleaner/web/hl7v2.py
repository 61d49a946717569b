"""POST /v1/hl7v2/clean: an HL7 v2 message (or a PID segment) in, the same
message out with its PID demographics cleaned. Thin: it reads the body and
the query, calls cleaner.formats.hl7v2, and counts."""

from __future__ import annotations

from flask import Blueprint, Response, current_app, jsonify, request

from cleaner.formats import hl7v2
from cleaner.web import api
from cleaner.web.logs import COUNTS_KEY
from cleaner.web.problems import RequestProblem

bp = Blueprint("hl7v2", __name__, url_prefix="/v1")

MEDIA_TYPES = ("application/hl7-v2", "text/plain")
# Counts and codes of what was cleaned, never a value: an RFC 8941 dictionary.
SUMMARY_HEADER = "Cleaner-Summary"


def summary_header(counts: api.ListedCodes, rules_version: str) -> str:
    def codes(listed: list[str]) -> str:
        return "(" + " ".join(f'"{code}"' for code in dict.fromkeys(listed)) + ")"
    return (f"pid-segments={counts.rows}, changes={len(counts.changes)}, "
            f"flags={len(counts.flags)}, change-codes={codes(counts.changes)}, "
            f"flag-codes={codes(counts.flags)}, rules-version=\"{rules_version}\"")


@bp.post("/hl7v2/clean")
def clean_message():
    if request.mimetype not in MEDIA_TYPES:
        raise RequestProblem(415, "unsupported-media-type", "Unsupported Media Type",
                             "Send the message as application/hl7-v2 or text/plain.")
    service = current_app.extensions["cleaner"]
    options, _ = api.query_options()
    try:
        cleaned = hl7v2.clean_message(request.get_data(cache=False), options, service.rules)
    except hl7v2.NotHl7v2 as exc:
        raise RequestProblem(400, "malformed-hl7v2", "Not an HL7 v2 Message", str(exc)) from None
    counts = request.environ[COUNTS_KEY] = api.ListedCodes(
        cleaned.findings.changes, cleaned.findings.flags, rows=cleaned.pid_segments)
    if request.accept_mimetypes.best_match([request.mimetype, "application/json"]) \
            == "application/json":
        response = jsonify({"message": cleaned.text, **cleaned.findings.as_json()})
    else:
        response = Response(cleaned.body,
                            content_type=f"{request.mimetype}; charset={cleaned.charset}")
    response.headers[SUMMARY_HEADER] = summary_header(counts, service.rules.version)
    response.vary.add("Accept")
    return response
