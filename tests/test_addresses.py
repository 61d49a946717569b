"""Addresses: the failures measured in the bare usaddress tagger, parts sent
apart, ZIP and state rules, placeholders, trails and the rule tables. The
many single cases are in tests/cases/addresses.toml (test_addresses_table.py);
checks against the USPS tables are in test_addresses_reference.py."""

from __future__ import annotations

import pytest
import usaddress
from hypothesis import given, settings
from hypothesis import strategies as st

import cleaner
from cleaner import engine
from cleaner.rules import RulesError
from conftest import assert_formed_text_is_tidy, edit_rules, field_codes

LAST_LINE = ", SPRINGFIELD, IL 62704"


def address_of(clean, value, **options):
    return clean({"address": value}, **options)["record"]["address"]


def lines(address):
    return {key: address[key] for key in ("line1", "line2", "city", "state", "postal_code")
            if address[key] is not None}


def bare_tag(value):
    try:
        return usaddress.tag(value)
    except usaddress.RepeatedLabelError:
        return "RepeatedLabelError"


# --- what the bare tagger gets wrong, measured on intake data ---------------------

def test_a_direction_word_between_street_and_town_is_flagged_with_both_readings():
    value = "45 OAK ST EAST COBBLESTONE VA 22401"
    assert bare_tag(value)[0]["PlaceName"] == "COBBLESTONE"
    body = cleaner.clean({"address": value})
    address = body["record"]["address"]
    readings = [(lines(address)["line1"], address["city"])] + [
        (other["line1"], other["city"]) for other in address["alternatives"]]
    assert readings == [("45 OAK ST E", "COBBLESTONE"), ("45 OAK ST", "EAST COBBLESTONE")]
    assert field_codes(body, "address")[1] == ["addresses.readings_differ"]


def test_an_abbreviated_direction_before_the_town_is_the_postdirectional(clean):
    assert lines(address_of(clean, "45 OAK ST E COBBLESTONE VA 22401"))["line1"] == "45 OAK ST E"


@pytest.mark.parametrize("value, line2", [
    ("77 HARBOR RD BLDG 3 RM 29 SPRINGFIELD IL 62704", "BLDG 3 RM 29"),
    ("77 Harbor Rd Building 3, Springfield, IL 62704", "BLDG 3"),
    ("12 Lot 4 Pine Ln, Springfield, IL 62704", "LOT 4"),
    ("12 PINE LN RM 29, SPRINGFIELD, IL 62704", "RM 29"),
])
def test_units_are_kept_never_lost_or_absorbed_into_the_street(clean, value, line2):
    address = address_of(clean, value)
    assert address["line2"] == line2 and address["kind"] == "street"
    assert address["components"]["street"] in ("HARBOR", "PINE")


def test_a_comma_that_folding_writes_into_a_part_is_removed_like_a_typed_one(clean):
    # Found by the HL7 v2 property test: a lone cedilla folds to ",", which was
    # spaced like a typed comma and removed only when the value was cleaned again.
    once = clean({"line2": "0\u00b80", "city": "Sa\u00b8o Paulo"})["record"]["address"]
    assert (once["line2"], once["city"]) == ("0 0", "SA O PAULO")
    assert clean({"line2": once["line2"], "city": once["city"]})["changes"] == []


def test_a_line_the_tagger_cannot_label_is_still_read(clean):
    value = "77 HARBOR RD BLDG 3 RM 29 SPRINGFIELD IL 62704"
    assert bare_tag(value) == "RepeatedLabelError"
    assert address_of(clean, value)["line1"] == "77 HARBOR RD"


@pytest.mark.parametrize("value, line1, kind", [
    ("Ten Old Mill Pkwy, Springfield, IL 62704", "10 OLD MILL PKWY", "street"),
    ("POB 12, Springfield IL 62701", "PO BOX 12", "po_box"),
])
def test_what_the_tagger_calls_ambiguous_is_read(clean, value, line1, kind):
    assert bare_tag(value)[1] == "Ambiguous"
    address = address_of(clean, value)
    assert (address["line1"], address["kind"]) == (line1, kind)


@pytest.mark.parametrize("value, label, code", [
    ("HOMELESS", "Recipient", "addresses.placeholder"),
    ("123", "OccupancyIdentifier", "addresses.unparsed"),
])
def test_garbage_is_flagged_not_accepted(clean, value, label, code):
    assert label in bare_tag(value)[0]
    body = clean({"address": value})
    address = body["record"]["address"]
    assert address["kind"] == "unparsed" and address["line1"] == value and not address["valid"]
    assert field_codes(body, "address")[1] == [code] and body["keys"] == {}


# --- parts sent apart -------------------------------------------------------------

def test_parts_are_cleaned_each_on_its_own_trail(clean):
    body = clean({"line1": "12 north elm street apt 4b", "city": "Springfield", "state": "ill.",
                  "postal_code": 62704, "country": "USA"})
    address = body["record"]["address"]
    assert lines(address) == {"line1": "12 N ELM ST", "line2": "APT 4B", "city": "SPRINGFIELD",
                              "state": "IL", "postal_code": "62704"}
    assert address["country"] == "US" and body["keys"] == {"zip5": "62704", "street_key": "12ELM"}
    assert field_codes(body, "address.line2")[0][-1] == "addresses.unit_moved"
    assert field_codes(body, "address.postal_code")[0] == ["text.number_as_text"]
    assert field_codes(body, "address.country")[0][-1] == "addresses.country_standardised"


def test_a_line2_sent_apart_keeps_the_unit_where_it_was(clean):
    address = clean({"line1": "12 Elm St Apt 4", "line2": "suite 200"})["record"]["address"]
    assert (address["line1"], address["line2"]) == ("12 ELM ST APT 4", "STE 200")


def test_a_foreign_country_keeps_every_part_as_sent(clean):
    body = clean({"line1": "Av. Juárez 12", "city": "Guadalajara", "country": "Mexico"})
    address = body["record"]["address"]
    assert (address["line1"], address["city"], address["country"], address["kind"]) == (
        "Av. Juárez 12", "Guadalajara", "MX", "non_us")
    assert field_codes(body, "address")[1] == ["addresses.non_us"] and body["keys"] == {}


def test_the_default_country_option_marks_a_bare_line_foreign(clean):
    assert address_of(clean, "Calle 5 No 12", country="MX")["kind"] == "non_us"
    assert address_of(clean, "12 Elm St, Springfield, IL 62704", country="MX")["kind"] == "street"


@pytest.mark.parametrize("record", [{"address": None}, {"line1": None, "city": None},
                                    {"address": "  "}])
def test_no_address_gives_null(clean, record):
    body = clean(record)
    assert body["record"]["address"] is None and body["keys"] == {}


# --- last line ------------------------------------------------------------------------

@pytest.mark.parametrize("state, zip_code, expected, flags", [
    ("MA", "2108", "02108", ["addresses.zip_leading_zero"]),
    ("IL", "627041234", "62704-1234", []),
    ("IL", "62704 1234", "62704-1234", []),
    ("IL", "92704", "92704", ["addresses.zip_state_mismatch"]),
    ("IL", "6270", "6270", ["addresses.zip_malformed"]),
    ("IL", "00000", "00000", ["addresses.zip_state_mismatch", "addresses.placeholder"]),
])
def test_zip_codes(clean, state, zip_code, expected, flags):
    body = clean({"line1": "12 Elm St", "state": state, "postal_code": zip_code})
    assert body["record"]["address"]["postal_code"] == expected
    assert sorted(code for field in ("address", "address.postal_code")
                  for code in field_codes(body, field)[1]) == sorted(flags)


def test_a_state_that_is_none_is_kept_as_sent(clean):
    body = clean({"city": "Springfield", "state": "Atlantis"})
    assert body["record"]["address"]["state"] == "Atlantis"
    assert field_codes(body, "address.state")[1] == ["addresses.state_unrecognised"]


def test_a_street_without_a_number_is_flagged(clean):
    body = clean({"address": "Elm Street, Springfield, IL 62704"})
    assert body["record"]["address"]["line1"] == "ELM ST"
    assert field_codes(body, "address")[1] == ["addresses.no_house_number"]


def test_a_default_street_line_is_a_placeholder(clean):
    body = clean({"address": "123 Main Street, Springfield, IL 62704"})
    address = body["record"]["address"]
    assert address["line1"] == "123 MAIN ST" and address["placeholder"]
    assert field_codes(body, "address")[1] == ["addresses.placeholder"] and body["keys"] == {}


# --- trails -------------------------------------------------------------------------

ADDRESS_FIELDS = ("line1", "line2", "city", "state", "postal_code", "country")


def assert_address_trails_replay(record, body):
    """Each part's chain starts at the raw value it came from and ends at the part."""
    address = body["record"].get("address")
    if address is None:
        return
    sent = [record.get("address"), *(record.get(part) for part in ADDRESS_FIELDS)]
    for part in ADDRESS_FIELDS:
        chain = [c for c in body["changes"] if c["field"] == f"address.{part}"]
        if not chain:
            continue
        assert chain[0]["from"] in sent
        for before, after in zip(chain, chain[1:]):
            assert before["to"] == after["from"]
        assert chain[-1]["to"] == address[part]


address_words = st.sampled_from([
    "12", "1/2", "112-10", "Ten", "N.", "north", "Elm", "PARK", "Avenue", "st", "apt", "4B", "#7",
    "BLDG", "3", "rm", "PO", "Box", "RR", "2", "PSC", "APO", "AE", ",", "Springfield", "IL",
    "Ill.", "62704", "62704-1234", "2108", "MA", "France", "Calle", "Pérez", "UNKNOWN", "EAST",
    "Lot", "REAR", "General", "Delivery", "USA"])
texts = st.lists(address_words, max_size=10).map(" ".join) | st.text(max_size=40)


@settings(max_examples=400, deadline=None)
@given(value=texts, country=st.sampled_from(["US", "MX", "PR"]))
def test_one_line_trails_replay_and_cleaning_is_deterministic(value, country):
    record = {"address": value}
    body = cleaner.clean(record, {"country": country})
    assert_address_trails_replay(record, body)
    assert_address_is_tidy(record, body)
    assert cleaner.clean(record, {"country": country}) == body


@settings(max_examples=200, deadline=None)
@given(record=st.fixed_dictionaries({}, optional=dict.fromkeys(ADDRESS_FIELDS, texts)))
def test_parts_trails_replay(record):
    body = cleaner.clean(record)
    assert_address_trails_replay(record, body)
    assert_address_is_tidy(record, body)


def assert_address_is_tidy(record, body):
    address = body["record"].get("address")
    if address and address["kind"] != "non_us":
        assert_formed_text_is_tidy([address[part] for part in ADDRESS_FIELDS[:-1]]
                                   + list(address["components"].values()), record)


def test_a_part_of_nothing_but_marks_comes_back_as_sent(clean):
    body = clean({"line1": "12 Elm St", "city": ":"})
    assert body["record"]["address"]["city"] == ":"
    assert field_codes(body, "address")[1] == ["addresses.unparsed"]


# --- the rule tables ----------------------------------------------------------------

@pytest.mark.parametrize("file, old, new, message", [
    ("addresses.toml", '"ALA" = "AL"', '"ALA" = "QQ"', "unknown code"),
    ("addresses.toml", '"1" = ["DE", "NY", "PA"]', '"1" = ["DE", "NY", "QQ"]', "unknown state"),
    ("addresses.toml", "max_length = 300", "max_length = 3", "max_length"),
])
def test_broken_address_rules_stop_start_up(rules_copy, file, old, new, message):
    edit_rules(rules_copy, file, old, new)
    with pytest.raises(RulesError, match=message):
        engine.load_rules(rules_copy)


def test_a_suffix_row_added_to_the_table_changes_behaviour_without_code(rules_copy):
    with (rules_copy / "usps_street_suffixes.csv").open("a", encoding="utf-8") as table:
        table.write("AVENUE,AVNUE,AVE\n")
    rules = engine.load_rules(rules_copy)
    address = cleaner.clean({"address": "12 Elm Avnue" + LAST_LINE}, rules=rules)
    assert address["record"]["address"]["line1"] == "12 ELM AVE"


def test_a_blank_country_stands_for_the_default_country(clean):
    body = clean({"line1": "12 Elm St", "country": " "})
    assert body["record"]["address"]["country"] == "US"
    assert field_codes(body, "address.country")[0] == [
        "text.whitespace_folded", "text.blank_cleared", "addresses.country_defaulted"]


def test_a_one_line_address_records_each_stage(clean):
    body = clean({"address": "Ten North Calle Pérez Avenue Apartment 4, Springfield, Mass. 2108, USA"})
    address = body["record"]["address"]
    assert lines(address) == {"line1": "10 N CALLE PEREZ AVE", "line2": "APT 4",
                              "city": "SPRINGFIELD", "state": "MA", "postal_code": "02108"}
    assert field_codes(body, "address.line1")[0] == [
        "addresses.upper_cased", "addresses.diacritics_folded", "addresses.punctuation_removed",
        "addresses.split_into_parts", "addresses.number_words",
        "addresses.directional_abbreviated", "addresses.suffix_standardised",
        "addresses.unit_standardised", "addresses.unit_moved"]
    assert field_codes(body, "address.line2")[0][-2:] == ["addresses.unit_standardised",
                                                          "addresses.unit_moved"]
    assert field_codes(body, "address.state")[0][-1] == "addresses.state_standardised"
    assert field_codes(body, "address.postal_code")[0][-1] == "addresses.zip_leading_zero_restored"
    assert field_codes(body, "address.country")[0][-1] == "addresses.country_standardised"
