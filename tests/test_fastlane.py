"""POST /v1/clean is answered on the raw WSGI call when the request is plainly
well-formed, and by the Flask app otherwise (cleaner/web/fastlane.py). Both
must give the same reply: status, headers and body, byte for byte, on
generated requests of every kind (well-formed or not, keyed or not, bodies
cut short, over the limit)."""

from __future__ import annotations

import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cleaner.engine import KNOWN_KEYS
from cleaner.web import create_app, fastlane
from conftest import REFERENCE_DATE, fuzz_examples, json_values

EXAMPLES = fuzz_examples(150)
KEY = "fastlane-test-key"
MAX_BODY_BYTES = 4096


def _apps(**config) -> tuple:
    """The service as built, and the same service with the fast lane taken out."""
    both = []
    for _ in range(2):
        app = create_app({"max_body_bytes": MAX_BODY_BYTES, **config})
        both.append(app)
    envelope = both[1].wsgi_app
    assert isinstance(envelope.app, fastlane.CleanFastLane)
    envelope.app = envelope.app.app
    return tuple(app.test_client() for app in both)


@pytest.fixture(scope="module")
def open_service():
    return _apps()


@pytest.fixture(scope="module")
def keyed_service():
    return _apps(api_keys=KEY)


def _reply(client, body: bytes, headers: dict[str, str], length: int | None):
    overrides = {} if length is None else {"CONTENT_LENGTH": str(length)}
    response = client.post("/v1/clean", data=body, headers={"X-Request-ID": "lane-1", **headers},
                           environ_overrides=overrides)
    return response.status, sorted(response.headers.items()), response.data


def _assert_same(clients, body, headers, length=None):
    fast, flask_only = (_reply(client, body, headers, length) for client in clients)
    assert fast == flask_only
    return fast[0]


records = st.dictionaries(st.sampled_from(sorted(KNOWN_KEYS)) | st.text(max_size=8),
                          st.text(max_size=40) | json_values, max_size=6)
bodies = (st.builds(lambda record, options: {"record": record, "options": options},
                    records, st.sampled_from([None, {"reference_date": REFERENCE_DATE},
                                              {"country": "Ab"}, {"date_order": "DMY"}, []]))
          | st.dictionaries(st.sampled_from(["record", "options", "x"]), json_values, max_size=3)
          | json_values)
encoded_bodies = bodies.map(lambda body: json.dumps(body).encode()) | st.binary(max_size=64)
content_types = st.sampled_from(["application/json", "application/json; charset=utf-8",
                                 "Application/JSON", "text/plain", "application/jsonx", ""])


@settings(max_examples=EXAMPLES, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(body=encoded_bodies, content_type=content_types,
       length_change=st.sampled_from([0, 0, 0, 5, -1]))
def test_both_paths_give_the_same_reply(open_service, body, content_type, length_change):
    length = len(body) + length_change if length_change > 0 else None
    _assert_same(open_service, body, {"Content-Type": content_type} if content_type else {},
                 length)


@settings(max_examples=EXAMPLES // 3, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(record=records, authorization=st.sampled_from(
    [None, f"Bearer {KEY}", f"bearer  {KEY} ", "Bearer wrong", f"Basic {KEY}", ""]))
def test_both_paths_ask_for_the_key_alike(keyed_service, record, authorization):
    headers = {"Content-Type": "application/json"}
    if authorization is not None:
        headers["Authorization"] = authorization
    _assert_same(keyed_service, json.dumps({"record": record}).encode(), headers)


def test_a_body_over_the_limit_and_a_chunked_body_go_to_flask_alike(open_service):
    big = json.dumps({"record": {"name": "Rowan Quillfeather", "x": "y" * MAX_BODY_BYTES}}).encode()
    assert _assert_same(open_service, big, {"Content-Type": "application/json"}) == \
        "413 REQUEST ENTITY TOO LARGE"
    # Under gunicorn a chunked body is read whole; Werkzeug's test client sends none.
    _assert_same(open_service, b'{"record": {"sex": "F"}}',
                 {"Content-Type": "application/json", "Transfer-Encoding": "chunked"})


def test_the_fast_lane_answers_well_formed_calls_and_counts_them(open_service, monkeypatch):
    answered = []
    reply = fastlane.CleanFastLane._reply
    monkeypatch.setattr(fastlane.CleanFastLane, "_reply",
                        lambda self, sent: answered.append(reply(self, sent)) or answered[-1])
    fast, _ = open_service
    response = fast.post("/v1/clean", json={"record": {"sex": "f", "name": "Wren Penhallow"}})
    assert response.status_code == 200 and answered[-1] is not None
    assert response.headers["Cache-Control"] == "no-store" and response.headers["X-Request-ID"]
    assert fast.post("/v1/clean", json={"record": {"sex": []}}).status_code == 422
    assert answered[-1] is None
