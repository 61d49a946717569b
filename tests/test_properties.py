"""Properties of the whole record, through the Python API and over HTTP:
cleaning is deterministic, every input key is accounted for, and cleaning a
cleaned record changes nothing further. `make fuzz` runs many more examples
(CLEANER_FUZZ_EXAMPLES)."""

from __future__ import annotations

import datetime as dt
import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import cleaner
from cleaner.engine import KINDS, KNOWN_KEYS
from cleaner.web import create_app
from conftest import REFERENCE_DATE, fuzz_examples, json_values

EXAMPLES = fuzz_examples(150)
OPTIONS = {"reference_date": REFERENCE_DATE}
OUTPUT_KEY = {key: kind.output_key for kind in KINDS for key in kind.input_keys}

# --- arbitrary records --------------------------------------------------------------

records = st.dictionaries(st.sampled_from(sorted(KNOWN_KEYS)) | st.text(max_size=12),
                          json_values, max_size=8)


def _accounted(record: dict, body: dict) -> None:
    cleaned = body["record"]
    for key, value in record.items():
        if key in KNOWN_KEYS:
            assert OUTPUT_KEY[key] in cleaned
        else:
            assert cleaned["extra"][key] == value
    assert set(cleaned.get("extra", {})) == set(record) - KNOWN_KEYS
    assert set(cleaned) - {"extra"} == {OUTPUT_KEY[key] for key in record if key in KNOWN_KEYS}


@settings(max_examples=EXAMPLES, deadline=None)
@given(record=records)
def test_every_key_is_accounted_for_and_the_answer_never_varies(record):
    try:
        body = cleaner.clean(record, OPTIONS)
    except cleaner.InvalidInput:
        with pytest.raises(cleaner.InvalidInput):
            cleaner.clean(record, OPTIONS)
        return
    assert json.dumps(cleaner.clean(record, OPTIONS)) == json.dumps(body)
    _accounted(record, body)


@pytest.fixture(scope="module")
def client():
    return create_app().test_client()


@settings(max_examples=EXAMPLES // 2, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(record=records)
def test_over_http_an_answer_is_a_result_or_a_problem_and_never_varies(client, record):
    body = json.dumps({"record": record, "options": OPTIONS})
    first, again = (client.post("/v1/clean", data=body, content_type="application/json",
                                headers={"X-Request-ID": "prop-1"}) for _ in range(2))
    assert first.status_code in (200, 413, 422) and first.data == again.data
    if first.status_code == 200:
        _accounted(record, first.get_json())
    else:
        assert first.mimetype == "application/problem+json"


# --- messy intake records, invented -------------------------------------------------

GIVEN = ["Odalys", "Rowan", "Maren", "Thaddeus", "Inès", "Kofi", "Linnea", "Bartholomew", "Wren"]
FAMILY = ["Quillfeather", "Ravensworth", "de la Cruz", "van der Berg", "O'Malley", "Nakamura-Ode",
          "MacAlister", "al-Rashid", "Penhallow"]
STREETS = ["north elm street", "Old Mill Pkwy", "Quillfeather Lane", "W 3rd Ave", "harbor rd"]
CITIES = [("Springfield", "IL", "62704"), ("East Fenmoor", "IN", "46201"),
          ("Cobblestone", "VA", "22401"), ("Port Wexley", "OR", "97201")]


@st.composite
def names(draw) -> str:
    """A name typed in one style throughout. Case is restored only in a value
    typed all in upper or all in lower case, and judged on the value as sent:
    "Quillfeather, rowan" keeps its "rowan", which sent alone as a given name
    would become "Rowan", so a mixed style is not idempotent by design."""
    form = draw(st.sampled_from(["{f}, {g}{m}{s}", "{g}{m} {f}{s}", "  {g}   {f} "]))
    name = form.format(f=draw(st.sampled_from(FAMILY)), g=draw(st.sampled_from(GIVEN)),
                       m=draw(st.sampled_from(["", " J", " Marie", " Q."])),
                       s=draw(st.sampled_from(["", " Jr", " III", ", MD"])))
    return draw(st.sampled_from([name, name.upper(), name.lower()]))


@st.composite
def birth_dates(draw) -> str:
    day = draw(st.dates(min_value=dt.date(1920, 1, 1), max_value=dt.date(2025, 12, 31)))
    form = draw(st.sampled_from(["%m/%d/%Y", "%Y-%m-%d", "%B %d, %Y", "%d %b %Y", "%Y%m%d",
                                 "%m-%d-%Y"]))
    return day.strftime(form)


@st.composite
def phones(draw) -> str:
    area = draw(st.sampled_from(["217", "614", "503", "312", "919"]))
    line = f"01{draw(st.integers(0, 99)):02d}"
    form = draw(st.sampled_from(["({a}) 555-{l}", "{a}.555.{l}", "1-{a}-555-{l}", "+1 {a} 555 {l}",
                                 "{a}555{l}", "({a}) 555-{l} ext 12"]))
    return form.format(a=area, l=line)


@st.composite
def addresses(draw) -> str:
    city, state, postal = draw(st.sampled_from(CITIES))
    unit = draw(st.sampled_from(["", " apt 4b", " #12", " Suite 300"]))
    comma = draw(st.sampled_from([", ", " "]))
    return f"{draw(st.integers(1, 9999))} {draw(st.sampled_from(STREETS))}{unit}{comma}" \
           f"{city}{comma}{state} {postal}"


messy_records = st.fixed_dictionaries({}, optional={
    "name": names(), "birth_date": birth_dates(), "sex": st.sampled_from(["F", "m", "Female", "U"]),
    "phone": phones(), "address": addresses(),
    "email": st.sampled_from([" R.Quill@Example.ORG", "wren.p@clinic-mail.org"])})


def as_input(cleaned: dict) -> dict:
    """A cleaned record sent again, each standard value in its input key. Only
    values the service formed and did not flag as ambiguous: a value kept as
    sent has nothing standard to keep."""
    again: dict = {}
    name = cleaned.get("name")
    if name and name["valid"] and not name["placeholder"]:
        again.update((part, name[part]) for part in ("prefix", "given", "middle", "family",
                                                     "suffix") if name[part])
    for key in ("birth_date", "sex", "email"):
        value = cleaned.get(key)
        if value and value["valid"] and not value.get("ambiguous"):
            again[key] = value["value"]
    if cleaned.get("phones") and all(phone["valid"] for phone in cleaned["phones"]):
        again["phone"] = [phone["e164"] for phone in cleaned["phones"]]
    address = cleaned.get("address")
    if address and address["valid"] and not address["alternatives"]:
        again.update((part, address[part]) for part in ("line1", "line2", "city", "state",
                                                        "postal_code", "country") if address[part])
    return again


STANDARD_PARTS = {"name": ("prefix", "given", "middle", "family", "suffix"),
                  "birth_date": ("value", "precision"), "sex": ("value",), "email": ("value",),
                  "address": ("line1", "line2", "city", "state", "postal_code", "country")}


@settings(max_examples=EXAMPLES, deadline=None)
@given(record=messy_records)
def test_cleaning_a_cleaned_record_changes_nothing_further(record):
    first = cleaner.clean(record, OPTIONS)
    again = as_input(first["record"])
    second = cleaner.clean(again, OPTIONS)
    assert second["changes"] == []
    for key, parts in STANDARD_PARTS.items():
        if key in second["record"]:
            assert [second["record"][key][part] for part in parts] \
                == [first["record"][key][part] for part in parts]
    if "phone" in again:
        assert [phone["e164"] for phone in second["record"]["phones"]] == again["phone"]
    assert {key: value for key, value in second["keys"].items() if key in first["keys"]} \
        == {key: first["keys"][key] for key in second["keys"] if key in first["keys"]}
