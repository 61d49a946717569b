"""The HTTP service, held to openapi.yaml: every response a test gets here is
validated against the document (openapi-core)."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openapi_core import Config as OpenAPIConfig
from openapi_core import OpenAPI
from openapi_core.contrib.werkzeug import WerkzeugOpenAPIRequest, WerkzeugOpenAPIResponse
from werkzeug.test import EnvironBuilder
from werkzeug.wrappers import Request

import cleaner
from cleaner.web import create_app
from conftest import SECRETS, json_values

SPEC_PATH = Path(__file__).parent.parent / "openapi.yaml"
SPEC = OpenAPI.from_file_path(str(SPEC_PATH), config=OpenAPIConfig(
    extra_media_type_deserializers={"application/problem+json": json.loads,
                                    "text/csv": bytes.decode, "application/x-ndjson": bytes.decode}))


class Api:
    """A test client whose every response must match openapi.yaml."""

    def __init__(self, app):
        self.client = app.test_client()

    def call(self, method, path, documented=True, **kwargs):
        response = self.client.open(path, method=method, **kwargs)
        if documented:
            sent = Request(EnvironBuilder(path=path, method=method,
                                          base_url="http://127.0.0.1:8080", **kwargs).get_environ())
            SPEC.validate_response(WerkzeugOpenAPIRequest(sent), WerkzeugOpenAPIResponse(response))
        return response

    def clean(self, record, **options):
        body = {"record": record}
        if options:
            body["options"] = options
        return self.call("POST", "/v1/clean", json=body)


@pytest.fixture(scope="module")
def app():
    return create_app({"max_body_bytes": 64 * 1024})


@pytest.fixture(scope="module")
def api(app):
    return Api(app)


def is_problem(response, status):
    body = response.get_json(force=True)
    return (response.status_code == status and response.mimetype == "application/problem+json"
            and body["status"] == status and body["type"].startswith("urn:")
            and body["title"] and body["detail"])


def test_clean_one_record(api):
    response = api.clean({"sex": "F", "email": "R.Quill@Example.ORG ", "ssn": "219 45 0172"},
                         reference_date="2026-12-02")
    assert response.status_code == 200
    body = response.get_json()
    assert body["record"]["sex"] == {"value": "female", "valid": True}
    assert body["record"]["email"]["value"] == "R.Quill@example.org"
    assert body["keys"]["ssn"] == "219450172"


def test_clean_a_name_in_free_text_and_in_parts(api):
    body = api.clean({"name": 'QUILLFEATHER, ROWAN "RO" J JR, MD'}).get_json()
    assert body["record"]["name"] | {"given_variants": []} == {
        "prefix": None, "given": "Rowan", "middle": "J", "family": "Quillfeather", "suffix": "Jr",
        "nickname": "Ro", "credentials": ["MD"], "particles": None, "given_variants": [],
        "alternatives": [], "use": None, "placeholder": False, "valid": True}
    assert body["keys"]["family_soundex"] == "Q413"
    parts = api.clean({"given": "maria", "family": "DE LA CRUZ", "name": "x"},
                      name_order="FAMILY_FIRST").get_json()["record"]["name"]
    assert (parts["family"], parts["particles"], parts["value"]) == ("de la Cruz", "de la", "x")


def test_clean_an_address_as_the_contract_shows_it(api):
    body = api.clean({"address": "12 north elm street apt 4b, springfield il 62704"}).get_json()
    assert body["record"]["address"] == {
        "line1": "12 N ELM ST", "line2": "APT 4B", "city": "SPRINGFIELD", "state": "IL",
        "postal_code": "62704", "country": "US", "kind": "street", "alternatives": [],
        "components": {"number": "12", "predirectional": "N", "street": "ELM", "suffix": "ST",
                       "unit_type": "APT", "unit": "4B"}, "placeholder": False, "valid": True,
        "other_text": None, "urbanization": None}
    assert body["keys"]["zip5"] == "62704" and body["keys"]["street_key"] == "12ELM"
    foreign = api.clean({"line1": "Av. Juárez 12", "country": "Mexico"}).get_json()
    assert foreign["record"]["address"]["kind"] == "non_us"


def test_reasons_lists_every_code_with_its_source(api, rules):
    listed = api.call("GET", "/v1/reasons").get_json()["reasons"]
    assert {r["code"] for r in listed} == set(rules.reasons)
    assert all(r["source"] and r["description"] for r in listed)
    assert all((r["kind"] == "flag") == ("severity" in r) for r in listed)


def test_health_reports_the_rules_version(api, rules):
    assert api.call("GET", "/healthz").get_json() == {"status": "ok",
                                                       "rules_version": rules.version}


def test_openapi_document_is_served_as_is(api):
    response = api.call("GET", "/openapi.yaml")
    assert response.mimetype == "application/yaml"
    assert response.get_data(as_text=True) == SPEC_PATH.read_text(encoding="utf-8")
    assert set(yaml.safe_load(response.get_data())["paths"]) == {
        "/v1/clean", "/v1/clean/batch", "/v1/fhir/clean", "/v1/hl7v2/clean", "/v1/reasons",
        "/healthz", "/openapi.yaml", "/metrics"}


def test_every_route_is_documented(app):
    routes = {rule.rule for rule in app.url_map.iter_rules() if rule.endpoint != "static"}
    documented = set(yaml.safe_load(SPEC_PATH.read_text(encoding="utf-8"))["paths"])
    assert routes == documented


@pytest.mark.parametrize("data, content_type, status", [
    (b'{"record": {"sex": "F"', "application/json", 400),
    (b"\xff\xfe{}", "application/json", 400),
    (b'{"record": NaN}', "application/json", 400),
    (b"[" * 5000 + b"]" * 5000, "application/json", 400),
    (b'{"record": {}}', "text/plain", 415),
    (b'{"record": {}}', "", 415),
    (b"[]", "application/json", 422),
    (b'{"options": {}}', "application/json", 422),
    (b'{"record": {}, "extra": 1}', "application/json", 422),
    (b'{"record": {}, "options": {"date_order": "XYZ"}}', "application/json", 422),
    (b'{"record": {}, "options": {"reference_date": "yesterday"}}', "application/json", 422),
    (b'{"record": {"birth_date": {"y": 1980}}}', "application/json", 422),
])
def test_bad_requests_get_problem_details(api, data, content_type, status):
    response = api.call("POST", "/v1/clean", data=data, content_type=content_type)
    assert is_problem(response, status)


def test_invalid_bodies_point_at_the_member(api):
    response = api.call("POST", "/v1/clean", json={"record": {"sex": ["F"]},
                                                  "options": {"country": "XX"}})
    pointers = {e["pointer"] for e in response.get_json()["errors"]}
    assert pointers == {"/options/country"}
    response = api.clean({"sex": ["F"]})
    assert [e["pointer"] for e in response.get_json()["errors"]] == ["/record/sex"]


def test_a_body_over_the_limit_is_refused(api):
    response = api.clean({"extra_notes": "x" * (70 * 1024)})
    assert is_problem(response, 413)


@pytest.mark.parametrize("method, path, status", [
    ("GET", "/v1/clean", 405), ("DELETE", "/healthz", 405), ("GET", "/v2/clean", 404),
    ("POST", "/v1/clean/Ruth-Quill", 404),
])
def test_unknown_paths_and_methods(api, method, path, status):
    response = api.call(method, path, documented=False)
    assert is_problem(response, status)
    assert "Ruth" not in response.get_data(as_text=True)


def test_deeply_nested_extra_values_come_back(api):
    nested = 1
    for _ in range(400):
        nested = [nested]
    response = api.clean({"notes": nested})
    assert response.status_code == 200 and response.get_json()["record"]["extra"]["notes"] == nested


def test_values_beyond_the_fast_encoder_come_back_exactly(api):
    # orjson refuses integers beyond 64 bits; the standard encoder takes over.
    extra = {"account": 2**70, "note": "Zoë Ñandú", "ratio": 0.1}
    response = api.clean({"sex": "F", **extra})
    assert response.status_code == 200 and response.get_json()["record"]["extra"] == extra
    assert "Zoë".encode() in response.get_data()   # UTF-8 as is


def test_options_read_again_give_the_same_answer_or_the_same_refusal(api):
    for _ in range(2):
        assert api.clean({"birth_date": "03/04/1980"}, date_order="DMY").get_json()[
            "record"]["birth_date"]["value"] == "1980-04-03"
        assert is_problem(api.clean({}, date_order="sideways"), 422)
        assert is_problem(api.clean({}, date_order=["DMY"]), 422)


def test_request_id_is_kept_or_made(api):
    given_id = api.clean({}, ).headers["X-Request-ID"]
    assert len(given_id) == 32
    response = api.call("POST", "/v1/clean", json={"record": {}},
                        headers={"X-Request-ID": "intake-desk-4:0042"})
    assert response.headers["X-Request-ID"] == "intake-desk-4:0042"
    response = api.call("POST", "/v1/clean", json={"record": {}},
                        headers={"X-Request-ID": "not a valid id!"})
    assert response.headers["X-Request-ID"] != "not a valid id!"


def test_environment_sets_the_default_options(monkeypatch):
    monkeypatch.setenv("CLEANER_DEFAULT_COUNTRY", "MX")
    response = create_app().test_client().post("/v1/clean", json={"record": {"sex": "mujer"}})
    assert response.status_code == 200
    monkeypatch.setenv("CLEANER_DEFAULT_DATE_ORDER", "sideways")
    with pytest.raises(ValueError, match="default options"):
        create_app()


record_keys = st.sampled_from(["birth_date", "sex", "phone", "email", "ssn", "name", "given",
                               "family", "suffix", "address", "line1", "city", "state",
                               "postal_code", "country", "other"])


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(record=st.dictionaries(record_keys, json_values, max_size=6) | json_values,
       options=st.none() | st.dictionaries(
           st.sampled_from(["country", "date_order", "reference_date", "name_order", "x"]),
           json_values,
           max_size=3))
def test_any_json_body_gets_a_documented_answer_never_a_500(api, record, options):
    body = {"record": record} if options is None else {"record": record, "options": options}
    response = api.call("POST", "/v1/clean", json=body)
    assert response.status_code in (200, 422)


def test_the_default_reference_date_is_today(api):
    soon = (dt.date.today() + dt.timedelta(days=2)).isoformat()
    recent = (dt.date.today() - dt.timedelta(days=2)).isoformat()
    flags = {value: [f["code"] for f in api.clean({"birth_date": value}).get_json()["flags"]]
             for value in (soon, recent)}
    assert flags == {soon: ["dates.future"], recent: []}


def test_the_python_api_returns_exactly_the_http_body(api):
    options = {"reference_date": "2026-12-02", "date_order": "DMY", "country": "GB"}
    assert api.clean(SECRETS, **options).get_json() == cleaner.clean(SECRETS, options)
