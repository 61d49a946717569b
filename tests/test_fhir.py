"""HL7 FHIR R4 Patient resources in and out (POST /v1/fhir/clean and
cleaner.formats.fhir): what is cleaned, that nothing else moves by a byte,
and that the reply and every refusal are FHIR R4 by the specification's own
JSON Schema (tests/reference/fhir_r4_schema.json)."""

from __future__ import annotations

import copy
import datetime as dt
import json
import re
from pathlib import Path

import jsonschema
import orjson
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cleaner.formats import fhir
from cleaner.options import InvalidInput, Options
from cleaner.web import create_app
from conftest import REFERENCE_DATE, SECRETS, fuzz_examples, json_values, secret_fragments

SCHEMA = json.loads((Path(__file__).parent / "reference" / "fhir_r4_schema.json")
                    .read_text(encoding="utf-8"))
OPTIONS = Options(reference_date=dt.date.fromisoformat(REFERENCE_DATE))
URL = "/v1/fhir/clean?reference_date=" + REFERENCE_DATE
EXTENSION_URL = "http://hl7.org/fhir/StructureDefinition/contactpoint-extension"
# The Patient elements the service may write; everything else must come back as sent.
TOUCHED = {"name", "telecom", "birthDate", "gender", "address"}


def conforms(resource):
    """The resource is valid by the HL7 FHIR R4 JSON Schema, and so is every
    resource inside a Parameters or Bundle (the schema copy checks those by
    their own type only)."""
    kind = resource["resourceType"]
    if kind not in SCHEMA["definitions"]:
        return   # a resource of a type we neither touch nor copied the schema of
    jsonschema.validate(resource, {**SCHEMA, "$ref": f"#/definitions/{kind}"},
                        cls=jsonschema.Draft6Validator)
    inner = [part["resource"] for part in resource.get("parameter", []) if "resource" in part]
    inner += [entry["resource"] for entry in resource.get("entry", []) if "resource" in entry]
    for each in inner:
        conforms(each)


@pytest.fixture(scope="module")
def client():
    return create_app({"max_batch_bytes": 64 * 1024, "max_batch_records": 5}).test_client()


def dumps(document) -> bytes:
    """JSON as orjson writes it (numbers as parsed), or the standard encoder's
    for integers past 64 bits."""
    try:
        return orjson.dumps(document)
    except TypeError:
        return json.dumps(document).encode()


def as_sent(data: bytes):
    """Parsed with numbers kept as written, as the service parses them."""
    return json.loads(data, parse_float=orjson.Fragment, parse_int=orjson.Fragment)


def post(client, document, *, url=URL, content_type="application/fhir+json"):
    body = document if isinstance(document, bytes) else dumps(document)
    return client.post(url, data=body, content_type=content_type, buffered=True)


def is_valid(resource):
    try:
        conforms(resource)
    except jsonschema.ValidationError:
        return False
    return True


def cleaned(client, document, **kwargs):
    """(the cleaned resource, the OperationOutcome) of a 200 reply. The reply
    to a valid resource is valid, resource and outcome; the outcome always is."""
    response = post(client, document, **kwargs)
    assert response.status_code == 200, response.data
    assert response.mimetype == "application/fhir+json"
    reply = json.loads(response.data)
    if is_valid(json.loads(orjson.dumps(document))):
        conforms(reply)
    parts = {part["name"]: part for part in reply["parameter"]}
    conforms(parts["outcome"]["resource"])
    assert parts["rulesVersion"]["valueString"]
    return parts["resource"]["resource"], parts["outcome"]["resource"]


def codes_at(outcome, expression):
    return [issue["details"]["coding"][0]["code"] for issue in outcome["issue"]
            if issue.get("expression") == [expression]]


def resolve(resource, expression):
    """The element a simple FHIRPath (Type.a[1].b) names, or None."""
    element = resource
    for name, index in re.findall(r"\.(\w+)(?:\[(\d+)\])?", expression):
        element = element.get(name) if isinstance(element, dict) else None
        if index and isinstance(element, list):
            element = element[int(index)] if int(index) < len(element) else None
    return element


# --- an invented patient ----------------------------------------------------------

def quillfeather():
    """A patient with an old and a maiden name, a temp address, several
    telecoms, identifiers, extensions, contained resources and unknown
    elements (every person, street and number invented)."""
    return {
        "resourceType": "Patient", "id": "pt-0042",
        "meta": {"versionId": "3", "lastUpdated": "2026-11-30T08:15:00.000+00:00",
                 "profile": ["http://example.org/fhir/StructureDefinition/intake-patient"]},
        "text": {"status": "generated", "div": "<div xmlns=\"http://www.w3.org/1999/xhtml\">Intake</div>"},
        "contained": [{"resourceType": "Patient", "id": "twin",
                       "name": [{"family": "QUILLFEATHER", "given": ["ROSALIND"]}]}],
        "extension": [{"url": "http://example.org/fhir/StructureDefinition/intake-score",
                       "valueDecimal": orjson.Fragment(b"1.50")}],
        "identifier": [{"use": "usual", "system": "urn:oid:2.16.840.1.113883.19.5",
                        "value": "A-0042"}],
        "active": True,
        "name": [
            {"use": "official", "family": "QUILLFEATHER", "given": ["WILLIAM \"BILL\"", "J"],
             "suffix": ["jr", "md"], "period": {"start": "2001-05-04"}},
            {"use": "old", "text": "Will Quill", "family": "quill", "given": ["will"]},
            {"use": "maiden", "family": "ravensworth jr", "given": ["rosa", "ann lee"],
             "_given": [{"extension": [{"url": "http://example.org/x", "valueString": "a"}]},
                        {"id": "g2"}]},
        ],
        "telecom": [
            {"system": "phone", "value": "H: (217) 555-0142 x12", "rank": 1},
            {"system": "email", "value": " R.Quill@Example.ORG ", "use": "home"},
            {"system": "phone", "value": "217 555 0143 / 217 555 0144", "use": "work"},
            {"system": "url", "value": "https://quill.example.org/"},
            {"system": "fax", "value": "(217) 555-0145", "use": "work",
             "period": {"end": "2025-01-01"}},
        ],
        "gender": "F", "birthDate": "02/03/1980",
        "_birthDate": {"extension": [{"url": "http://hl7.org/fhir/StructureDefinition/patient-birthTime",
                                      "valueDateTime": "1980-02-03T04:05:00-06:00"}]},
        "address": [
            {"use": "home", "type": "both", "text": "12 North Elm Street Apt 4B",
             "line": ["12 north elm street apt 4b"], "city": "springfield",
             "district": "Sangamon", "state": "illinois", "postalCode": "62704"},
            {"use": "temp", "line": ["45 oak st apt 2"], "_line": [{"id": "l1"}],
             "city": "cobblestone", "period": {"start": "2026-10-01"}},
        ],
        "maritalStatus": {"coding": [{"system": "http://terminology.hl7.org/CodeSystem/v3-MaritalStatus",
                                      "code": "M"}]},
        "unknownVendorElement": {"deep": [1, 2.0, -0.0, {"x": None}]},
    }


def test_the_invented_patient_is_cleaned_element_by_element(client):
    patient, outcome = cleaned(client, quillfeather())
    official, old, maiden, nickname = patient["name"]
    assert official == {"use": "official", "family": "Quillfeather", "given": ["William", "J"],
                        "suffix": ["Jr", "MD"], "period": {"start": "2001-05-04"}}
    assert old == {"use": "old", "text": "Will Quill", "family": "Quill", "given": ["Will"]}
    # Two given items with extensions beside them stay two: cleaned in place.
    assert maiden["given"] == ["Rosa", "Ann Lee"] and maiden["family"] == "Ravensworth"
    assert maiden["_given"] == quillfeather()["name"][2]["_given"]
    assert maiden["suffix"] == ["Jr"]
    assert nickname == {"use": "nickname", "given": ["Bill"]}
    home, email, two, url, fax = patient["telecom"]
    assert home == {"system": "phone", "value": "+12175550142", "rank": 1,
                    "extension": [{"url": EXTENSION_URL, "valueString": "12"}], "use": "home"}
    assert email == {"system": "email", "value": "R.Quill@example.org", "use": "home"}
    assert two == quillfeather()["telecom"][2] and url == quillfeather()["telecom"][3]
    assert fax["value"] == "+12175550145" and fax["period"] == {"end": "2025-01-01"}
    assert (patient["gender"], patient["birthDate"]) == ("female", "1980-02-03")
    home, temp = patient["address"]
    assert home == {"use": "home", "type": "both", "text": "12 North Elm Street Apt 4B",
                    "line": ["12 N ELM ST", "APT 4B"], "city": "SPRINGFIELD",
                    "district": "Sangamon", "state": "IL", "postalCode": "62704"}
    # The unit would become a second line beside a one-item _line: the lines stay as sent.
    assert temp["line"] == ["45 oak st apt 2"] and temp["city"] == "COBBLESTONE"
    assert "country" not in home, "a default is never written into the resource"

    assert codes_at(outcome, "Patient.telecom[0].extension[0]") == ["fhir.phone_extension_written"]
    assert codes_at(outcome, "Patient.telecom[0].use") == ["fhir.use_from_label"]
    assert codes_at(outcome, "Patient.name[3].use") == ["fhir.nickname_name_added"]
    assert "fhir.several_numbers_kept" in codes_at(outcome, "Patient.telecom[2].value")
    assert codes_at(outcome, "Patient.address[1].line") == ["fhir.list_kept"]
    assert codes_at(outcome, "Patient.name[0].family") == ["names.case_restored"]
    assert "dates.ambiguous" in codes_at(outcome, "Patient.birthDate")


def test_the_invented_patient_comes_back_valid_fhir(client):
    sent = quillfeather()
    del sent["unknownVendorElement"]   # which the schema refuses, and we return all the same
    assert not is_valid(json.loads(orjson.dumps(sent))), "a gender of F, a birthDate of 02/03/1980"
    patient, _ = cleaned(client, sent)
    conforms(patient)


def test_every_element_not_cleaned_comes_back_byte_for_byte(client):
    sent = quillfeather()
    patient = as_sent(post(client, sent).data)["parameter"][0]["resource"]
    for name, value in sent.items():
        if name not in TOUCHED:
            assert orjson.dumps(patient[name]) == orjson.dumps(value), name
    assert b'"valueDecimal":1.50' in orjson.dumps(patient["extension"])
    assert list(patient) == list(sent), "elements keep their order"


def test_every_issue_names_its_element_and_reason_never_a_value(client, rules):
    sent = quillfeather()
    patient, outcome = cleaned(client, sent)
    for each in outcome["issue"]:
        coding = each["details"]["coding"][0]
        reason = rules.reasons[coding["code"]]
        assert coding["system"] == fhir.REASON_SYSTEM
        assert each["diagnostics"] == reason.description and each["code"] in fhir.ISSUE_TYPES
        expected = rules["fhir"].issues["change" if reason.kind == "change" else reason.severity]
        assert (each["severity"], each["code"]) == expected
        if reason.kind == "change":
            assert resolve(patient, each["expression"][0]) is not None, each
    assert not any(fragment in json.dumps(outcome) for fragment in
                   ("QUILLFEATHER", "Quillfeather", "5550142", "Ravensworth", "1980-02"))


def test_cleaning_again_changes_nothing(client):
    once, _ = cleaned(client, quillfeather())
    twice, outcome = cleaned(client, once)
    assert twice == once
    assert not [issue for issue in outcome["issue"] if issue["severity"] == "information"
                and issue["details"]["coding"][0]["code"] != "fhir.no_findings"
                and not issue["details"]["coding"][0]["code"].endswith(
                    ("fictional_range", "reserved_domain", "partial", "credentials_found",
                     "century_inferred"))]


def test_a_clean_patient_gets_one_informational_issue(client):
    patient = {"resourceType": "Patient", "gender": "male", "name": [{"family": "Wexley"}]}
    back, outcome = cleaned(client, patient)
    assert back == patient
    assert [issue["details"]["coding"][0]["code"] for issue in outcome["issue"]] == [
        "fhir.no_findings"]


def test_a_bundle_cleans_its_patients_and_nothing_else(client):
    bundle = {"resourceType": "Bundle", "type": "collection", "entry": [
        {"fullUrl": "urn:uuid:1", "resource": {
            "resourceType": "Observation", "status": "final", "code": {"text": "weight"},
            "valueQuantity": {"value": orjson.Fragment(b"72.50"), "unit": "kg"}}},
        {"fullUrl": "urn:uuid:2", "resource": {"resourceType": "Patient", "gender": "M",
                                               "name": [{"family": "WEXLEY"}]}},
        {"fullUrl": "urn:uuid:3"},
        {"resource": {"resourceType": "Patient", "birthDate": "1931-07-19",
                      "telecom": [{"system": "sms", "value": "217.555.0188"}]}},
    ]}
    back, outcome = cleaned(client, bundle)
    exactly = as_sent(post(client, bundle).data)["parameter"][0]["resource"]
    assert orjson.dumps(exactly["entry"][0]) == orjson.dumps(bundle["entry"][0])
    assert b'"value":72.50' in orjson.dumps(exactly)
    assert back["entry"][1]["resource"]["name"] == [{"family": "Wexley"}]
    assert back["entry"][1]["resource"]["gender"] == "male"
    assert back["entry"][2] == {"fullUrl": "urn:uuid:3"}
    assert back["entry"][3]["resource"]["telecom"][0]["value"] == "+12175550188"
    assert codes_at(outcome, "Bundle.entry[1].resource.gender") == ["sex.coded"]
    assert "phones.formatted_e164" in codes_at(outcome, "Bundle.entry[3].resource.telecom[0].value")


@pytest.mark.parametrize("name, given, flag", [
    # A nickname among the middle names leaves fewer words than items.
    ({"family": "Quill", "given": ["WILLIAM", "J", "\"BILL\""]}, ["William", "J", "\"BILL\""],
     ("Patient.name[0].given", "fhir.items_not_aligned")),
    # An item that is only an extension: the list cannot be sent as words.
    ({"family": "QUILL", "given": ["WILL", None], "_given": [None, {"id": "g2"}]},
     ["WILL", None], ("Patient.name[0].given", "fhir.list_kept")),
])
def test_lists_that_cannot_be_put_back_go_back_as_sent(client, name, given, flag):
    patient, outcome = cleaned(client, {"resourceType": "Patient", "name": [name]})
    assert patient["name"][0]["given"] == given
    assert flag[1] in codes_at(outcome, flag[0])
    assert not [code for code in codes_at(outcome, flag[0]) if code.startswith("names.")]


def test_an_extension_unlike_the_one_carried_keeps_the_value(client):
    point = {"system": "phone", "value": "217-555-0142 x12",
             "extension": [{"url": EXTENSION_URL, "valueString": "99"}]}
    patient, outcome = cleaned(client, {"resourceType": "Patient", "telecom": [point]})
    assert patient["telecom"] == [point]
    assert "fhir.extension_conflict" in codes_at(outcome, "Patient.telecom[0].value")
    same = {**point, "extension": [{"url": EXTENSION_URL, "valueString": "12"}]}
    patient, _ = cleaned(client, {"resourceType": "Patient", "telecom": [same]})
    assert patient["telecom"] == [{**same, "value": "+12175550142"}]


def test_blank_values_are_removed_and_partial_dates_keep_their_precision(client):
    patient, _ = cleaned(client, {"resourceType": "Patient", "birthDate": "1980-02",
                                  "gender": " ", "telecom": [{"system": "email", "value": " "}],
                                  "name": [{"family": "  ", "given": ["Wren"]}]})
    assert patient == {"resourceType": "Patient", "birthDate": "1980-02",
                       "telecom": [{"system": "email"}], "name": [{"given": ["Wren"]}]}


def test_options_come_from_the_query(client):
    patient = {"resourceType": "Patient", "birthDate": "02/03/1980",
               "telecom": [{"system": "phone", "value": "020 7946 0018"}]}
    back, _ = cleaned(client, patient, url=URL + "&date_order=DMY&country=GB")
    assert back["birthDate"] == "1980-03-02"
    assert back["telecom"][0]["value"] == "+442079460018"


def test_the_request_is_logged_with_its_counts_and_no_value(capsys):
    client = create_app({}).test_client()
    post(client, {"resourceType": "Bundle", "type": "collection", "entry": [
        {"resource": {"resourceType": "Patient", "gender": "F"}},
        {"resource": {"resourceType": "Patient", "gender": SECRETS["sex"]}}]})
    logged = capsys.readouterr().err
    line = [json.loads(text) for text in logged.splitlines() if '"event":"request"' in text][-1]
    assert (line["route"], line["status"], line["records"], line["changes"], line["flags"]) == (
        "/v1/fhir/clean", 200, 2, 1, 1)
    assert SECRETS["sex"] not in logged


# --- refusals -----------------------------------------------------------------------

def refusal(response, status):
    assert response.status_code == status, response.data
    assert response.mimetype == "application/fhir+json"
    outcome = json.loads(response.data)
    conforms(outcome)
    assert all(issue["severity"] == "error" for issue in outcome["issue"])
    assert not any(fragment in response.get_data(as_text=True) for fragment in secret_fragments())
    return outcome


@pytest.mark.parametrize("document, expressions", [
    ({"resourceType": "Observation"}, [None]),
    ([SECRETS], [None]),
    ({"resourceType": "Patient", "name": [{"given": SECRETS["name"]}]}, ["Patient.name[0].given"]),
    ({"resourceType": "Patient", "name": {"family": SECRETS["name"]}}, ["Patient.name"]),
    ({"resourceType": "Patient", "birthDate": 19310719, "gender": ["F"]},
     ["Patient.birthDate", "Patient.gender"]),
    ({"resourceType": "Patient", "telecom": [{"system": "phone", "value": 2175550188,
                                              "extension": {"url": SECRETS["email"]}}]},
     ["Patient.telecom[0].value", "Patient.telecom[0].extension"]),
    ({"resourceType": "Patient", "address": [{"line": [SECRETS["address"], 7],
                                              "postalCode": 22401}]},
     ["Patient.address[0].line", "Patient.address[0].postalCode"]),
    ({"resourceType": "Bundle", "entry": [{"resource": [SECRETS]}]}, ["Bundle.entry[0].resource"]),
    ({"resourceType": "Bundle", "entry": [{"resource": {
        "resourceType": "Patient", "name": [{"family": "Q" * 600}]}}]},
     ["Bundle.entry[0].resource.name[0].family"]),
    ({"resourceType": "Patient", "telecom": [{"system": "sms", "value": "5" * 600}]},
     ["Patient.telecom[0].value"]),
])
def test_invalid_fhir_is_refused_at_the_element(client, document, expressions):
    outcome = refusal(post(client, document), 422)
    assert [issue.get("expression", [None])[0] for issue in outcome["issue"]] == expressions


@pytest.mark.parametrize("body, content_type, url, status", [
    (b'{"resourceType": "Patient"', "application/fhir+json", URL, 400),
    (b'{"resourceType": "Patient", "x": NaN}', "application/json", URL, 400),
    (b'{"resourceType": "Patient", "name": [{"family": "\\ud800"}]}', "application/fhir+json",
     URL, 400),
    (b"\xff\xfe{}", "application/fhir+json", URL, 400),
    (b"[" * 300 + b"]" * 300, "application/fhir+json", URL, 400),
    (b'{"resourceType": "Patient"}', "text/plain", URL, 415),
    (b'{"resourceType": "Patient"}', "application/fhir+json", URL + "&country=ZZ", 422),
    (b'{"resourceType": "Patient"}', "application/fhir+json", URL + "&family=Quill", 422),
    (b'{"resourceType": "Patient", "id": "' + b"x" * 70_000 + b'"}', "application/fhir+json",
     URL, 413),
])
def test_bad_requests_get_an_operation_outcome(client, body, content_type, url, status):
    refusal(post(client, body, url=url, content_type=content_type), status)


def test_a_bundle_of_more_patients_than_allowed_is_refused(client):
    entries = [{"resource": {"resourceType": "Patient"}}] * 6
    refusal(post(client, {"resourceType": "Bundle", "entry": entries}), 413)


def test_the_format_reads_values_from_the_patient_only(rules):
    with pytest.raises(InvalidInput) as caught:
        fhir.patients({"resourceType": "Patient", "name": [{"prefix": [1]}]})
    assert caught.value.problems == [("Patient.name[0].prefix", "must be a list of strings")]


# --- properties -----------------------------------------------------------------------

texts = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=40)
human_names = st.fixed_dictionaries({}, optional={
    "use": st.sampled_from(["usual", "official", "temp", "old", "maiden"]),
    "family": texts, "given": st.lists(texts, max_size=3), "prefix": st.lists(texts, max_size=2),
    "suffix": st.lists(texts, max_size=2), "text": texts})
contact_points = st.fixed_dictionaries({"value": texts}, optional={
    "system": st.sampled_from(["phone", "fax", "email", "sms", "pager", "url", "other"]),
    "use": st.sampled_from(["home", "work", "mobile"]), "rank": st.integers(1, 9)})
addresses = st.fixed_dictionaries({}, optional={
    "line": st.lists(texts, max_size=3), "city": texts, "state": texts, "postalCode": texts,
    "country": texts, "use": st.sampled_from(["home", "temp", "old"]), "district": texts})
patients = st.fixed_dictionaries({"resourceType": st.just("Patient")}, optional={
    "name": st.lists(human_names, max_size=3), "telecom": st.lists(contact_points, max_size=3),
    "birthDate": texts, "gender": texts, "address": st.lists(addresses, max_size=2),
    "identifier": st.lists(st.fixed_dictionaries({"value": texts}), max_size=2),
    "extension": json_values, "contained": json_values, "photo": json_values})


@settings(max_examples=fuzz_examples(60), deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(patients)
def test_untouched_elements_never_move(rules, patient):
    sent = copy.deepcopy(patient)
    found = fhir.patients(patient)
    reply, _ = fhir.clean_resource(patient, found, OPTIONS, rules)
    back = reply["parameter"][0]["resource"]
    for name, value in sent.items():
        if name not in TOUCHED:
            assert json.dumps(back[name]) == json.dumps(value)
    for kept in ("use", "text", "period", "rank", "system", "district"):
        for element in ("name", "telecom", "address"):
            for before, after in zip(sent.get(element, []), back.get(element, [])):
                assert before.get(kept) == after.get(kept)
    conforms({"resourceType": "OperationOutcome", "issue": reply["parameter"][1]["resource"]["issue"]})


@settings(max_examples=fuzz_examples(60), deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(st.one_of(json_values, patients, st.fixed_dictionaries(
    {"resourceType": st.sampled_from(["Patient", "Bundle"])},
    optional={"entry": json_values, "name": json_values, "telecom": json_values,
              "address": json_values, "birthDate": json_values, "gender": json_values})))
def test_any_json_gets_fhir_back_never_a_5xx(client, document):
    response = post(client, dumps(document))
    assert response.status_code in (200, 400, 413, 422)
    assert response.mimetype == "application/fhir+json"
    body = json.loads(response.data)
    # A resource sent invalid comes back so where it is not ours to touch: the outcome is checked.
    conforms(body["parameter"][1]["resource"] if response.status_code == 200 else body)


def test_an_address_line_that_is_only_an_extension_keeps_the_lines(client):
    address = {"line": ["12 elm st", None], "_line": [None, {"id": "l2"}], "city": "cobblestone"}
    patient, outcome = cleaned(client, {"resourceType": "Patient", "address": [address]})
    assert patient["address"] == [address], "the lines go to the engine together, or not at all"
    assert codes_at(outcome, "Patient.address[0].line") == ["fhir.list_kept"]


# --- the specification's own examples ------------------------------------------------

# Every example Patient of HL7 FHIR R4 (v4.0.1), as published in the FHIR
# package hl7.fhir.r4.examples 4.0.1 (npm registry; CC0), unchanged.
EXAMPLES = sorted((Path(__file__).parent / "reference" / "fhir_r4_examples").glob("Patient-*.json"))


@pytest.mark.parametrize("path", EXAMPLES, ids=[path.stem for path in EXAMPLES])
def test_the_specifications_example_patients_come_back_valid_and_settled(client, path):
    sent = path.read_bytes()
    assert is_valid(json.loads(sent)), "the schema copy takes the specification's example"
    patient, outcome = cleaned(client, as_sent(sent))
    back = as_sent(post(client, sent).data)["parameter"][0]["resource"]
    for name, value in as_sent(sent).items():
        if name not in TOUCHED:
            assert orjson.dumps(back[name]) == orjson.dumps(value), name
    for index, point in enumerate(patient.get("telecom", [])):
        sent_point = json.loads(sent)["telecom"][index]
        if point.get("value") != sent_point.get("value") and point.get("system") == "phone":
            assert re.fullmatch(r"\+[1-9]\d{6,14}", point["value"])
            assert "phones.invalid" not in codes_at(outcome, f"Patient.telecom[{index}].value")
    again, _ = cleaned(client, patient)
    assert again == patient


def test_the_specifications_example_patient_keeps_what_is_already_standard(client):
    """Patient-example: names, gender and birthDate (with its _birthDate
    extension) are already in standard form; its Australian numbers are not
    valid in the default region (US) and stay as written, flagged."""
    sent = json.loads((EXAMPLES[0].parent / "Patient-example.json").read_bytes())
    patient, outcome = cleaned(client, sent)
    assert patient["name"] == sent["name"] and patient["gender"] == "male"
    assert patient["birthDate"] == "1974-12-25" and patient["_birthDate"] == sent["_birthDate"]
    assert patient["telecom"] == sent["telecom"]
    assert codes_at(outcome, "Patient.telecom[1].value") == ["phones.invalid"]
    with_region, _ = cleaned(client, sent, url=URL + "&country=AU")
    assert with_region["telecom"][1]["value"] == "+61355556473"


def test_an_address_that_cannot_be_read_into_parts_stays_as_written(client):
    sent = json.loads((EXAMPLES[0].parent / "Patient-ch-example.json").read_bytes())
    patient, outcome = cleaned(client, sent)
    assert patient["address"] == sent["address"]
    assert "addresses.unparsed" in codes_at(outcome, "Patient.address[0]")
