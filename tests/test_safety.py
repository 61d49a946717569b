"""Patient-data safety and access: no value from a request in any log line,
metric, problem body or flag message, on every endpoint and every error path;
protective headers on every response; optional API keys."""

from __future__ import annotations

import hashlib
import json
import re

import pytest

from cleaner.config import Config
from cleaner.web import create_app
from conftest import SECRETS, secret_fragments

KEY = "desk-key-7f3a9c01d2e4b5a6"
LOG_MEMBERS = {"time", "level", "event", "request_id", "method", "route", "status", "duration_ms",
               "records", "changes", "flags", "error_type", "rules_version", "codes"}
LIMITS = {"max_body_bytes": 16 * 1024, "max_batch_records": 3}


def _csv(rows: list[dict]) -> str:
    header = list(rows[0])
    return "\r\n".join([",".join(header)] + [",".join(f'"{row[key]}"' for key in header)
                                              for row in rows]) + "\r\n"


_JSON = "application/json"
_FHIR = "application/fhir+json"
_FHIR_PATIENT = {
    "resourceType": "Patient", "gender": SECRETS["sex"], "birthDate": SECRETS["birth_date"],
    "name": [{"text": SECRETS["name"], "family": "Quillfeather", "given": ["Zephyrine"]}],
    "telecom": [{"system": "phone", "value": SECRETS["phone"]},
                {"system": "email", "value": SECRETS["email"]}],
    "address": [{"line": ["77 Wexley Harbor Rd Bldg 3"], "city": "Cobblestone", "state": "VA",
                 "postalCode": "22401"}]}
_HL7V2_TYPE = "application/hl7-v2"
_HL7V2 = ("MSH|^~\\&|DESK|CLINIC|||20261202||ADT^A04|M1|P|2.5.1\r"
          f"PID|1||A1^^^CLINIC^MR||QUILLFEATHER^ZEPHYRINE^^^^^L||{SECRETS['birth_date']}|"
          f"{SECRETS['sex']}|||77 Wexley Harbor Rd Bldg 3^^Cobblestone^VA^22401||"
          f"{SECRETS['phone']}^PRN^PH~^NET^Internet^{SECRETS['email']}||||||{SECRETS['ssn']}\r")
_LONG = "Ravensworth " * 50
# (method, path, body, content type, status): every endpoint, and every way a
# request can fail, each carrying patient values somewhere.
REQUESTS = [
    ("POST", "/v1/clean", json.dumps({"record": SECRETS}), _JSON, 200),
    ("POST", "/v1/clean?name=Quillfeather", json.dumps({"record": SECRETS}), _JSON, 200),
    ("POST", "/v1/clean", json.dumps({"record": SECRETS, "options": {"date_order": "Ravensworth",
                                                                     "Zorblax": 1}}), _JSON, 422),
    ("POST", "/v1/clean", json.dumps({"record": {**SECRETS, "sex": ["Zorblax"]}}), _JSON, 422),
    ("POST", "/v1/clean", json.dumps({"record": {**SECRETS, "family": _LONG}}), _JSON, 422),
    ("POST", "/v1/clean", json.dumps({"Ravensworth": SECRETS}), _JSON, 422),
    ("POST", "/v1/clean", json.dumps({"record": SECRETS})[:-3], _JSON, 400),
    ("POST", "/v1/clean", json.dumps({"record": SECRETS}), "text/csv", 415),
    ("POST", "/v1/clean", json.dumps({"record": {**SECRETS, "note": _LONG * 40}}), _JSON, 413),
    ("POST", "/v1/clean/batch", json.dumps({"records": [SECRETS, "Zorblax",
                                                        {"family": _LONG}]}), _JSON, 200),
    ("POST", "/v1/clean/batch", json.dumps({"records": [SECRETS] * 4}), _JSON, 413),
    ("POST", "/v1/clean/batch", _csv([SECRETS, SECRETS]), "text/csv", 200),
    ("POST", "/v1/clean/batch?map.Zorblax=Ravensworth", _csv([SECRETS]), "text/csv", 422),
    ("POST", "/v1/clean/batch?country=Zorblax", _csv([SECRETS]), "text/csv", 422),
    ("POST", "/v1/clean/batch", "\n".join([json.dumps(SECRETS), "Zorblax{", ""]),
     "application/x-ndjson", 200),
    ("POST", "/v1/clean/batch", json.dumps({"records": [SECRETS]}), "application/xml", 415),
    ("POST", "/v1/fhir/clean", json.dumps(_FHIR_PATIENT), _FHIR, 200),
    ("POST", "/v1/fhir/clean?country=Zorblax", json.dumps(_FHIR_PATIENT), _FHIR, 422),
    ("POST", "/v1/fhir/clean", json.dumps({**_FHIR_PATIENT, "birthDate": [SECRETS["birth_date"]]}),
     _FHIR, 422),
    ("POST", "/v1/fhir/clean", json.dumps({**_FHIR_PATIENT, "resourceType": "Ravensworth"}),
     _FHIR, 422),
    ("POST", "/v1/fhir/clean", json.dumps({**_FHIR_PATIENT, "name": [{"family": _LONG}]}),
     _FHIR, 422),
    ("POST", "/v1/fhir/clean", json.dumps(_FHIR_PATIENT)[:-3], _FHIR, 400),
    ("POST", "/v1/fhir/clean", json.dumps(_FHIR_PATIENT), "text/csv", 415),
    ("POST", "/v1/hl7v2/clean", _HL7V2, _HL7V2_TYPE, 200),
    ("POST", "/v1/hl7v2/clean?name_order=Zorblax", _HL7V2, _HL7V2_TYPE, 422),
    ("POST", "/v1/hl7v2/clean", _HL7V2.replace("QUILLFEATHER", _LONG), _HL7V2_TYPE, 422),
    ("POST", "/v1/hl7v2/clean", "Ravensworth|" + _HL7V2, _HL7V2_TYPE, 400),
    ("POST", "/v1/hl7v2/clean", _HL7V2, "text/csv", 415),
    ("GET", "/v1/reasons", None, None, 200),
    ("GET", "/healthz", None, None, 200),
    ("GET", "/openapi.yaml", None, None, 200),
    ("GET", "/metrics", None, None, 200),
    ("GET", "/v1/Ravensworth", None, None, 404),
    ("DELETE", "/v1/clean?ssn=219-45-0172", None, None, 405),
]


def _send(client, method, path, body, content_type, **headers):
    return client.open(path, method=method, data=body, content_type=content_type,
                       headers=headers, buffered=True)


def _leaks(text: str) -> list[str]:
    return [fragment for fragment in secret_fragments() if fragment in text]


def _log_lines(err: str) -> list[dict]:
    lines = [json.loads(line) for line in err.splitlines()]
    for line in lines:
        assert set(line) <= LOG_MEMBERS
    return lines


@pytest.mark.parametrize("method, path, body, content_type, status", REQUESTS,
                         ids=[f"{r[0]} {r[1]} {r[4]}" for r in REQUESTS])
def test_no_patient_value_leaves_by_any_path(capsys, method, path, body, content_type, status):
    client = create_app(LIMITS).test_client()
    response = _send(client, method, path, body, content_type, **{"X-Request-ID": "desk-7"})
    assert response.status_code == status
    lines = _log_lines(capsys.readouterr().err)
    assert [line["request_id"] for line in lines if line["event"] == "request"] == ["desk-7"]
    assert not _leaks(capsys.readouterr().err + json.dumps(lines))
    if response.mimetype == "application/problem+json" or response.mimetype == _FHIR \
            and status != 200:
        assert not _leaks(response.get_data(as_text=True))
    if response.mimetype == _FHIR and status == 200:
        outcome = next(part["resource"] for part in response.get_json()["parameter"]
                       if part["name"] == "outcome")
        assert not _leaks(json.dumps(outcome))
    assert not _leaks(str(response.headers))
    if path.startswith("/v1/clean") and status == 200:
        flags = re.findall(r'"message":\s*"([^"]*)"', response.get_data(as_text=True))
        assert not _leaks(" ".join(flags))
    assert response.headers["Cache-Control"] == "no-store"
    assert response.headers["X-Content-Type-Options"] == "nosniff"
    assert response.headers["X-Request-ID"] == "desk-7"
    assert not _leaks(_send(client, "GET", "/metrics", None, None).get_data(as_text=True))


def test_an_unexpected_failure_logs_its_type_and_nothing_it_says(capsys, monkeypatch):
    app = create_app()

    def failing(*_):
        raise ValueError(f"cannot read {SECRETS['name']} born {SECRETS['birth_date']}")
    monkeypatch.setattr("cleaner.web.api.clean_record", failing)
    response = _send(app.test_client(), "POST", "/v1/clean", json.dumps({"record": SECRETS}),
                     _JSON)
    assert response.status_code == 500 and response.mimetype == "application/problem+json"
    lines = _log_lines(capsys.readouterr().err)
    assert {"event": "unhandled error", "error_type": "ValueError"}.items() <= lines[-2].items()
    assert not _leaks(json.dumps(lines) + response.get_data(as_text=True))


def test_each_request_logs_its_route_status_and_counts_when_its_reply_is_done(capsys):
    client = create_app({"log_level": "INFO"}).test_client()
    _send(client, "POST", "/v1/clean", json.dumps({"record": {"sex": "f"}}), _JSON)
    _send(client, "GET", "/no/such/path", None, None)
    _send(client, "POST", "/v1/clean/batch", "\n".join(
        [json.dumps({"sex": "f"}), "{", json.dumps({"sex": "m", "email": " a@b.org"})]),
        "application/x-ndjson")
    requests = [line for line in _log_lines(capsys.readouterr().err) if line["event"] == "request"]
    assert [(line["route"], line["status"]) for line in requests] == [
        ("/v1/clean", 200), ("(no route)", 404), ("/v1/clean/batch", 200)]
    assert (requests[0]["records"], requests[0]["changes"]) == (1, 1)
    assert (requests[2]["records"], requests[2]["changes"]) == (3, 3)


def test_metrics_count_requests_records_and_codes():
    client = create_app().test_client()

    def sample(text: str, name: str, **labels) -> float:
        wanted = ",".join(f'{key}="{value}"' for key, value in labels.items())
        found = re.search(rf"^{name}{{{wanted}}} (\S+)$" if labels else rf"^{name} (\S+)$",
                          text, re.M)
        return float(found[1]) if found else 0.0

    before = _send(client, "GET", "/metrics", None, None).get_data(as_text=True)
    for _ in range(3):
        _send(client, "POST", "/v1/clean", json.dumps({"record": {"sex": "F"}}), _JSON)
    _send(client, "POST", "/v1/clean/batch", json.dumps({"records": [{"sex": "m"}, 7]}), _JSON)
    response = _send(client, "GET", "/metrics", None, None)
    after = response.get_data(as_text=True)
    assert response.mimetype == "text/plain"
    assert sample(after, "cleaner_requests_total", route="/v1/clean", status="200") \
        - sample(before, "cleaner_requests_total", route="/v1/clean", status="200") == 3
    assert sample(after, "cleaner_records_total") - sample(before, "cleaner_records_total") == 5
    assert sample(after, "cleaner_record_errors_total") \
        - sample(before, "cleaner_record_errors_total") == 1
    assert sample(after, "cleaner_changes_total", code="sex.coded") \
        - sample(before, "cleaner_changes_total", code="sex.coded") == 4
    assert sample(after, "cleaner_request_duration_seconds_count", route="/v1/clean") >= 3


# --- access control ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def locked():
    return create_app({"api_keys": f"{KEY}, another-key-of-16-chars"}).test_client()


@pytest.mark.parametrize("authorization", [
    None, "", "Bearer", "Bearer ", f"Basic {KEY}", f"Bearer {KEY[:-1]}", f"Bearer {KEY}x",
    "Bearer Zephyrine-Quillfeather-1931", f"Token {KEY}",
])
@pytest.mark.parametrize("method, path", [("POST", "/v1/clean"), ("POST", "/v1/clean/batch"),
                                          ("POST", "/v1/fhir/clean"), ("POST", "/v1/hl7v2/clean"),
                                          ("GET", "/v1/reasons"), ("GET", "/metrics"),
                                          ("GET", "/openapi.yaml"), ("GET", "/v1/nowhere")])
def test_with_keys_every_endpoint_but_health_needs_one(locked, authorization, method, path):
    headers = {} if authorization is None else {"Authorization": authorization}
    response = _send(locked, method, path, json.dumps({"record": {"sex": "F"}}), _JSON, **headers)
    assert response.status_code == 401 and response.mimetype == "application/problem+json"
    assert response.headers["WWW-Authenticate"] == 'Bearer realm="demographic-cleaner"'
    body = response.get_json(force=True)
    body.pop("request_id")
    # The same answer whatever was wrong: missing, another scheme, a near miss.
    assert body == {"type": "urn:demographic-cleaner:problem:unauthorized",
                    "title": "Unauthorized", "status": 401,
                    "detail": "This endpoint needs the header Authorization: Bearer followed by "
                              "an API key the service knows."}


def test_with_keys_a_known_key_opens_and_health_stays_open(locked, capsys):
    assert _send(locked, "GET", "/healthz", None, None).status_code == 200
    for key in (KEY, "another-key-of-16-chars"):
        response = _send(locked, "POST", "/v1/clean", json.dumps({"record": {"sex": "F"}}), _JSON,
                         Authorization=f"bearer  {key} ")
        assert response.status_code == 200
    assert KEY not in capsys.readouterr().err


def test_keys_can_be_given_as_sha256_digests_in_a_file(tmp_path):
    listed = tmp_path / "keys.sha256"
    listed.write_text(f"# intake desks\n{hashlib.sha256(KEY.encode()).hexdigest()}  # desk 7\n\n")
    client = create_app({"api_key_hashes_file": str(listed)}).test_client()
    assert _send(client, "GET", "/v1/reasons", None, None).status_code == 401
    assert _send(client, "GET", "/v1/reasons", None, None,
                 Authorization=f"Bearer {KEY}").status_code == 200


@pytest.mark.parametrize("settings, message", [
    ({"api_keys": "short"}, "at least 16"),
    ({"api_keys": "a key with spaces inside"}, "visible ASCII"),
    ({"api_key_hashes_file": "/no/such/file"}, "cannot read"),
])
def test_bad_key_settings_stop_start_up(settings, message):
    with pytest.raises(ValueError, match=message):
        Config(**settings).checked()


def test_a_hash_file_with_a_bad_line_stops_start_up_without_echoing_it(tmp_path):
    listed = tmp_path / "keys.sha256"
    listed.write_text(f"{KEY}\n")
    with pytest.raises(ValueError, match="line 1") as caught:
        Config(api_key_hashes_file=str(listed)).checked()
    assert KEY not in str(caught.value)


def test_durations_reach_the_histogram_as_observing_each_would():
    from prometheus_client import REGISTRY

    from cleaner.web import metrics
    route = "/test/histogram"
    for seconds in (0.0005, 0.001, 0.003, 100.0):
        metrics.pending.add(route, 200, seconds, None)
    metrics.pending.push()

    def sample(suffix, **labels):
        return REGISTRY.get_sample_value(f"cleaner_request_duration_seconds_{suffix}",
                                         {"route": route, **labels})
    assert [sample("bucket", le=le) for le in ("0.001", "0.005", "60.0", "+Inf")] == [2, 3, 3, 4]
    assert sample("count") == 4 and sample("sum") == pytest.approx(100.0045)
