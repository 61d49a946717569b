"""The trail can be replayed: per output field, the first `from` is the raw
input, each `to` is the next `from`, and the last `to` is the final value.
Cleaning is deterministic."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

import cleaner
from test_addresses import assert_address_trails_replay
from test_names import assert_name_trails_replay

MESSY = {
    "address": ["12 north elm street apt 4b, springfield il 62704", "45 OAK ST EAST COBBLESTONE VA",
                "POB 12, Springfield IL 62701", "HOMELESS", "12 Rue de la Paix, Paris, France",
                "Ten Old Mill Pkwy, Springfield, Mass 2108", "", 123],
    "name": ["SMITH, WILLIAM J JR", 'William "Bill" Smith', "MARIA LOPEZ GARCIA", "BABY GIRL JONES",
             "UNKNOWN", "WANG Xiaoming", "j0hn o'brien", "Dr. Jan van der Berg, MD", "", 12345],
    "birth_date": ["02/03/80", "1980-02-03", "3 de febrero de 1980", "Feb 3rd, 1980", "19800203",
                   "29221", 29221, "13/02/1980", "02/30/1980", "03/1980", "1980", " 2/3/25 ",
                   "1900-01-01", "2031-01-01", "not a date", ""],
    "sex": ["F", "m", "Mujer", "9", 1, "A", "unknown", "Zz", " f "],
    "phone": ["(217) 555-0142 x12", "H: 217.555.0143", "555-0142", "0044 20 7946 0958",
              "1-800-FLOWERS", "217-555-O142", "(217) 555-0142 / (217) 555-0199",
              ["2175550142", None, 2175550143], "000-000-0000", "cell", 2175550142],
    "email": ["R.Quill@Example.ORG ", "mailto:a@B.org", "none", "a..b@c.org", "x @ y.org"],
    "ssn": ["219 45 0172", "2l9-45-O172", "000-12-3456", 12450172, "123-45-6789", "12"],
}


def final_values(body):
    """Output field path -> the value its last change must have produced."""
    record = body["record"]
    finals = {}
    for key in ("birth_date", "sex", "email", "ssn"):
        if key in record:
            finals[key] = None if record[key] is None else record[key]["value"]
    for index, phone in enumerate(record.get("phones") or []):
        finals[f"phones[{index}]"] = phone["e164"] if phone["e164"] is not None else phone["value"]
    return finals


def raw_inputs(record, body):
    raws = {key: record[key] for key in ("birth_date", "sex", "email", "ssn") if key in record}
    phones = record.get("phone")
    items = [p for p in phones if p is not None] if isinstance(phones, list) else [phones]
    return raws, items


def assert_replays(record, body):
    assert_name_trails_replay(record, body)
    assert_address_trails_replay(record, body)
    raws, phone_items = raw_inputs(record, body)
    finals = final_values(body)
    for field, final in finals.items():
        chain = [c for c in body["changes"] if c["field"] == field]
        if not chain:
            if field in raws:
                assert raws[field] == final, field
            continue
        first = chain[0]["from"]
        if field.startswith("phones["):
            assert first in phone_items, field
        else:
            assert first == raws[field], field
        for before, after in zip(chain, chain[1:]):
            assert before["to"] == after["from"], field
        assert chain[-1]["to"] == final, field


records = st.fixed_dictionaries({}, optional={
    key: st.sampled_from(values) | st.text(max_size=20) for key, values in MESSY.items()})


@settings(max_examples=300, deadline=None)
@given(record=records, order=st.sampled_from(["MDY", "DMY", "YMD"]),
       country=st.sampled_from(["US", "GB", "MX", "DE"]))
def test_every_trail_replays_and_cleaning_is_deterministic(record, order, country):
    options = {"date_order": order, "country": country, "reference_date": "2026-12-02"}
    body = cleaner.clean(record, options)
    assert_replays(record, body)
    assert cleaner.clean(record, options) == body


def test_the_messy_examples_replay():
    for index in range(max(len(values) for values in MESSY.values())):
        record = {key: values[index % len(values)] for key, values in MESSY.items()}
        assert_replays(record, cleaner.clean(record, {"reference_date": "2026-12-02"}))
