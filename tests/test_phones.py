"""Phone numbers.

Invented numbers are in the NANP range 555-01XX, reserved for fiction, so the
US ones also carry the `phones.fictional_range` note.
"""

from __future__ import annotations

import string
import time

import phonenumbers
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from phonenumbers import PhoneNumberFormat, PhoneNumberType

import cleaner
from cleaner import engine, phones
from cleaner.options import Options
from cleaner.rules import RulesError
from conftest import edit_rules, field_codes

QUICK = settings(derandomize=True, database=None, deadline=None, max_examples=300)
ENTRY_KEYS = {"e164", "extension", "region", "type", "valid", "use", "national"}


def phones_of(clean, value, **options):
    body = clean({"phone": value}, **options)
    return body["record"]["phones"], body


def only(clean, value, **options):
    entries, body = phones_of(clean, value, **options)
    assert len(entries) == 1
    changes, flags = field_codes(body, "phones[0]")
    return entries[0], changes, flags, body["keys"]


def final_value(entry):
    return entry["e164"] if entry["e164"] is not None else entry["value"]


def assert_chains(body, raws):
    """Each entry's changes replay from its raw input to its final value."""
    entries = body["record"]["phones"]
    assert len(entries) == len(raws)
    for index, (entry, raw) in enumerate(zip(entries, raws)):
        chain = [c for c in body["changes"] if c["field"] == f"phones[{index}]"]
        if not chain:
            assert final_value(entry) == raw
            continue
        assert chain[0]["from"] == raw and chain[-1]["to"] == final_value(entry)
        assert all(before["to"] == after["from"] for before, after in zip(chain, chain[1:]))


# --- the entry ---------------------------------------------------------------

def test_a_us_number_comes_back_in_e164_with_its_details(clean):
    entry, changes, flags, keys = only(clean, "(217) 555-0142")
    assert entry == {"e164": "+12175550142", "extension": None, "region": "US",
                     "type": "fixed_line_or_mobile", "valid": True, "use": None,
                     "national": "(217) 555-0142"}
    assert changes == ["phones.formatted_e164"] and flags == ["phones.fictional_range"]
    assert keys == {"phones": ["+12175550142"], "phone_digits": ["2175550142"]}


@pytest.mark.parametrize("value", ["(217) 555-0142", "217-555-0142", "217.555.0142",
                                   "2175550142", "217 555 0142", "1 217 555 0142",
                                   "1-217-555-0142", "+1 (217) 555-0142", "+12175550142",
                                   " (217)  555-0142 ", 2175550142, 2175550142.0])
def test_ways_of_writing_one_number(clean, value):
    entries, body = phones_of(clean, value)
    assert [entry["e164"] for entry in entries] == ["+12175550142"]
    assert_chains(body, [value])


def test_the_default_region_comes_from_the_options(clean):
    entry, _, _, _ = only(clean, "020 7946 0958", country="GB")
    assert (entry["e164"], entry["region"], entry["type"]) == ("+442079460958", "GB", "fixed_line")
    assert only(clean, "020 7946 0958", country="US")[0]["e164"] is None


def test_a_number_with_its_country_code_ignores_the_default_region(clean):
    entry, _, _, _ = only(clean, "+1 217 555 0142", country="GB")
    assert (entry["e164"], entry["region"]) == ("+12175550142", "US")


def test_a_number_of_no_country_has_no_region(clean):
    """phonenumbers: +800 is the international freephone service (region 001)."""
    entry, _, _, _ = only(clean, "+800 1234 5678")
    assert entry["valid"] and entry["region"] is None and entry["type"] == "toll_free"


@pytest.mark.parametrize("value", ["", "   ", "\u200b"])
def test_a_blank_cell_gives_no_entry(clean, value):
    body = clean({"phone": value})
    assert body["record"]["phones"] == [] and body["keys"] == {} and body["flags"] == []
    assert {c["field"] for c in body["changes"]} == {"phones"}
    assert body["changes"][-1]["to"] is None


def test_null_stays_null_and_an_empty_list_stays_empty(clean):
    assert clean({"phone": None})["record"]["phones"] is None
    assert clean({"phone": []})["record"]["phones"] == []


# --- external references -----------------------------------------------------

def _formatted(number, fmt):
    return phonenumbers.format_number(number, fmt)


def _type_name(number):
    return PhoneNumberType.to_string(phonenumbers.number_type(number)).lower()


# Source: phonenumbers' own example numbers (phonenumbers.example_number and
# example_number_for_type), for every region it has metadata for.
@pytest.mark.parametrize("region", sorted(phonenumbers.SUPPORTED_REGIONS))
def test_phonenumbers_example_numbers_come_back_in_e164(clean, region):
    examples = [phonenumbers.example_number(region),
                phonenumbers.example_number_for_type(region, PhoneNumberType.MOBILE)]
    for example in filter(None, examples):
        for fmt in (PhoneNumberFormat.NATIONAL, PhoneNumberFormat.INTERNATIONAL):
            entry, _, flags, _ = only(clean, _formatted(example, fmt), country=region)
            assert entry["e164"] == _formatted(example, PhoneNumberFormat.E164)
            assert entry["valid"] and entry["type"] == _type_name(example)
            assert entry["region"] == phonenumbers.region_code_for_number(example)
            assert entry["national"] == _formatted(example, PhoneNumberFormat.NATIONAL)
            assert "phones.invalid" not in flags


# Source: ITU-T E.161 keypad, checked against phonenumbers.convert_alpha_characters_in_number.
@pytest.mark.parametrize("letter", string.ascii_letters)
def test_keypad_letters_follow_e161(rules, letter):
    expected = phonenumbers.convert_alpha_characters_in_number(letter)
    assert letter.translate(rules["phones"].keypad) == expected


def test_letters_off_the_keypad_are_not_digits(rules):
    """ITU-T E.161 puts only the 26 Latin letters on the keys (from memory)."""
    assert "ñé".translate(rules["phones"].keypad) == "ñé"


# Source: phonenumbers' metadata (PhoneMetadata.international_prefix): every
# prefix in the rules is how some region dials out (00 in GB, 011 in the NANP).
@pytest.mark.parametrize("prefix, region", [("00", "GB"), ("00", "FR"), ("011", "US"),
                                            ("011", "CA")])
def test_international_prefixes_are_those_of_real_regions(rules, prefix, region):
    assert prefix in rules["phones"].international_prefixes
    metadata = phonenumbers.PhoneMetadata.metadata_for_region(region)
    assert metadata.international_prefix == prefix


# Source: NANPA reserves 555-0100 through 555-0199 for fictional use in every
# area code (NANPA, as summarised in secondary sources).
@pytest.mark.parametrize("value", ["217-555-0100", "217-555-0142", "217-555-0199",
                                   "+1 212 555 0150"])
def test_the_nanp_fictional_range_is_noted_but_valid(clean, value):
    entry, _, flags, keys = only(clean, value)
    assert entry["valid"] is True and flags == ["phones.fictional_range"]
    assert keys == {"phones": [entry["e164"]], "phone_digits": [entry["e164"][2:]]}


@pytest.mark.parametrize("value", ["217-555-0099", "217-555-0200", "217-556-0142"])
def test_numbers_beside_the_fictional_range_are_not_noted(clean, value):
    entry, _, flags, _ = only(clean, value)
    assert entry["valid"] is True and flags == []


@pytest.mark.parametrize("value", ["020 7946 0958", "0113 496 0000", "0121 496 0999"])
def test_ofcom_drama_numbers_are_noted(clean, value):
    """Ofcom's numbers for TV and radio drama (from memory)."""
    entry, _, flags, _ = only(clean, value, country="GB")
    assert entry["valid"] is True and flags == ["phones.fictional_range"]


# --- extensions --------------------------------------------------------------

@pytest.mark.parametrize("value", ["217-555-0142 x12", "217-555-0142x12", "217-555-0142 X 12",
                                   "217-555-0142 ext 12", "217-555-0142 ext. 12",
                                   "217-555-0142 Ext.12", "217-555-0142 extension 12",
                                   "217-555-0142 #12", "217-555-0142, ext. 12",
                                   "tel:+1-217-555-0142;ext=12", "217 555 0142 anexo 12"])
def test_extensions_are_kept_apart(clean, value):
    """Common practice (no source); ';ext=' is the tel URI parameter of RFC 3966."""
    entry, changes, _, keys = only(clean, value)
    assert (entry["e164"], entry["extension"]) == ("+12175550142", "12")
    assert "phones.extension_split" in changes and keys == {"phones": ["+12175550142"], "phone_digits": ["2175550142"]}


def test_a_label_after_the_extension_still_gives_the_use(clean):
    entry, changes, _, _ = only(clean, "217-555-0142 x12 (w)")
    assert (entry["extension"], entry["use"]) == ("12", "work")
    assert changes == ["phones.extension_split", "phones.label_removed", "phones.formatted_e164"]


def test_an_x_inside_a_word_is_no_extension(clean):
    entry, _, flags, _ = only(clean, "1-800-GO-FEDEX")
    assert (entry["e164"], entry["extension"]) == ("+18004633339", None)
    assert flags == ["phones.vanity"]


def test_too_many_digits_after_a_marker_are_no_extension(clean):
    entry, _, flags, _ = only(clean, "217-555-0142 x1234567890")
    assert entry["e164"] is None and flags[-1] == "phones.unparseable"


# --- labels, vanity numbers and words ----------------------------------------

@pytest.mark.parametrize("value, use", [
    ("H: 217-555-0142", "home"), ("Home - 217-555-0142", "home"), ("home 217-555-0142", "home"),
    ("cell: 217-555-0142", "mobile"), ("(c) 217-555-0142", "mobile"),
    ("mobile 217-555-0142", "mobile"), ("W: (217) 555-0142", "work"),
    ("Work #: 217-555-0142", "work"), ("tel 217-555-0142", None), ("Tel. 217-555-0142", None),
    ("Tel no.: 217-555-0142", None), ("Home phone: 217-555-0142", "home"),
    ("casa 217-555-0142", "home"), ("celular: 217-555-0142", "mobile"),
    ("Trabajo: 217-555-0142", "work"), ("Teléfono de casa: 217-555-0142", "home"),
    ("Móvil 217-555-0142", "mobile"),
    ("217-555-0142 cell", "mobile"), ("217-555-0142 home", "home"), ("217-555-0142 (w)", "work"),
    ("217-555-0142 - work", "work"), ("217-555-0142 (cel)", "mobile"),
    ("217-555-0142 old", "old"),
])
def test_labels_are_removed_and_give_the_use(clean, value, use):
    """Common practice (no source): labels typed on registration forms, in English and Spanish."""
    entry, changes, flags, _ = only(clean, value)
    assert (entry["e164"], entry["use"]) == ("+12175550142", use)
    assert changes == ["phones.label_removed", "phones.formatted_e164"]
    assert flags == ["phones.fictional_range"]


@pytest.mark.parametrize("value, e164", [
    ("1-800-FLOWERS", "+18003569377"), ("1-800-flowers", "+18003569377"),
    ("(888) 555-HELP", "+18885554357"), ("(888) 555 HOME", "+18885554663"),
    ("1-800-GO-FEDEX", "+18004633339"),
])
def test_vanity_numbers_are_read_on_the_keypad(clean, value, e164):
    """ITU-T E.161 keypad letters (the table is checked by test_keypad_letters_follow_e161)."""
    entry, changes, flags, _ = only(clean, value)
    assert entry["e164"] == e164 and entry["valid"]
    assert changes == ["phones.keypad_letters_converted", "phones.formatted_e164"]
    assert flags == ["phones.vanity"]


def test_a_word_after_a_whole_number_is_a_label_not_keypad_letters(clean):
    """'HOME' completes (888) 555 ____, but after ten digits 'home' is a label."""
    assert only(clean, "(888) 555 HOME")[0]["use"] is None
    entry, changes, _, _ = only(clean, "217-555-0142 HOME")
    assert entry["use"] == "home" and "phones.keypad_letters_converted" not in changes


def test_a_vanity_number_may_carry_a_label(clean):
    entry, changes, _, _ = only(clean, "1-800-FLOWERS cell")
    assert (entry["e164"], entry["use"]) == ("+18003569377", "mobile")
    assert changes == ["phones.label_removed", "phones.keypad_letters_converted",
                       "phones.formatted_e164"]


@pytest.mark.parametrize("value", ["217-555-0142 dad", "Dad: 217-555-0142",
                                   "217-555-0142 (daughter)", "217 fax 555-0142"])
def test_unknown_words_are_removed_for_review(clean, value):
    entry, changes, flags, keys = only(clean, value)
    assert entry["e164"] == "+12175550142" and entry["use"] is None
    assert changes == ["phones.text_removed", "phones.formatted_e164"]
    assert "phones.unrecognised_text" in flags and keys == {"phones": ["+12175550142"], "phone_digits": ["2175550142"]}


@pytest.mark.parametrize("value, repaired", [("217-555-O142", "217-555-0142"),
                                             ("2l7 555 0142", "217 555 0142"),
                                             ("(2I7) 555-0l42", "(217) 555-0142"),
                                             ("217 555 o 142", "217 555 0 142")])
def test_look_alike_letters_among_digits_are_repaired_for_review(clean, value, repaired):
    entries, body = phones_of(clean, value)
    assert entries[0]["e164"] == "+12175550142"
    assert [(c["reason"], c["to"]) for c in body["changes"]] == [
        ("text.digit_lookalikes_repaired", repaired), ("phones.formatted_e164", "+12175550142")]
    assert field_codes(body, "phones[0]")[1] == ["text.digit_lookalikes", "phones.fictional_range"]


def test_look_alikes_and_keypad_letters_in_one_number(clean):
    entry, changes, flags, _ = only(clean, "1-8OO-FLOWERS")
    assert entry["e164"] == "+18003569377"
    assert changes == ["phones.keypad_letters_converted", "text.digit_lookalikes_repaired",
                       "phones.formatted_e164"]
    assert flags == ["phones.vanity", "text.digit_lookalikes"]


# --- several numbers in one cell ---------------------------------------------

@pytest.mark.parametrize("value", ["217-555-0142 / 217-555-0199", "217-555-0142; 217-555-0199",
                                   "217-555-0142 or 217-555-0199", "217-555-0142, 217-555-0199",
                                   "217-555-0142 OR 217-555-0199", "217-555-0142 y 217-555-0199",
                                   "217-555-0142 o 217-555-0199", "217-555-0142|217-555-0199",
                                   "217/555-0142 or 217/555-0199"])
def test_several_numbers_in_one_cell_become_several_entries(clean, value):
    entries, body = phones_of(clean, value)
    assert [entry["e164"] for entry in entries] == ["+12175550142", "+12175550199"]
    assert body["keys"] == {"phones": ["+12175550142", "+12175550199"],
                           "phone_digits": ["2175550142", "2175550199"]}
    assert field_codes(body, "phones[1]")[0][0] == "phones.split_multiple"
    assert_chains(body, [value, value])


@pytest.mark.parametrize("value", ["217/555-0142", "217 / 555 / 0142", "217-555-0142, ext. 12",
                                   "217 555 o 142", "1-800-FLOWERS"])
def test_a_separator_splits_only_where_each_side_is_a_number(clean, value):
    entries, body = phones_of(clean, value)
    assert len(entries) == 1 and entries[0]["valid"]
    assert "phones.split_multiple" not in field_codes(body, "phones[0]")[0]


def test_vanity_numbers_count_their_letters_when_splitting(clean):
    entries, _ = phones_of(clean, "1-800-FLOWERS / (888) 555-HELP")
    assert [entry["e164"] for entry in entries] == ["+18003569377", "+18885554357"]


def test_each_number_of_a_cell_has_its_own_label(clean):
    value = "Home: 217-555-0142; Cell: 217-555-0199 x7"
    entries, body = phones_of(clean, value)
    assert [(e["use"], e["extension"]) for e in entries] == [("home", None), ("mobile", "7")]
    assert_chains(body, [value, value])


def test_spanish_labels_between_several_numbers(clean):
    value = "casa 55 1234 5678 y celular 55 1234 5679"
    entries, body = phones_of(clean, value, country="MX")
    assert [(e["e164"], e["use"]) for e in entries] == [("+525512345678", "home"),
                                                       ("+525512345679", "mobile")]
    assert_chains(body, [value, value])


def test_one_uncleanable_number_of_several_gives_back_its_part_of_the_cell(clean):
    value = "217-555-0142 / 555-0199"
    entries, body = phones_of(clean, value)
    assert entries[0]["e164"] == "+12175550142"
    assert entries[1] == {"e164": None, "extension": None, "region": None, "type": None,
                          "valid": False, "use": None, "national": None, "value": "555-0199"}
    assert field_codes(body, "phones[1]") == (["phones.split_multiple"],
                                              ["phones.missing_area_code"])
    assert_chains(body, [value, value])


def test_a_list_of_cells(clean):
    raw = ["(217) 555-0142", "  ", "Cell 217-555-0199 / 217-555-0143", 2175550144]
    body = clean({"phone": raw})
    entries = body["record"]["phones"]
    assert [(e["e164"], e["use"]) for e in entries] == [
        ("+12175550142", None), ("+12175550199", "mobile"), ("+12175550143", None),
        ("+12175550144", None)]
    assert_chains(body, [raw[0], raw[2], raw[2], raw[3]])
    assert body["keys"] == {"phones": [e["e164"] for e in entries],
                           "phone_digits": [e["e164"][2:] for e in entries]}
    assert [c["field"] for c in body["changes"] if c["from"] == "  "] == ["phones"]


def test_null_items_of_a_list_are_skipped(clean):
    body = clean({"phone": [None, "217-555-0199", None, "217-555-0142"]})
    assert [entry["e164"] for entry in body["record"]["phones"]] == ["+12175550199", "+12175550142"]
    assert {c["field"] for c in body["changes"]} == {"phones[0]", "phones[1]"}


def test_the_same_number_twice_is_one_key(clean):
    body = clean({"phone": ["217-555-0142", "(217) 555-0142 home"]})
    assert len(body["record"]["phones"]) == 2
    assert body["keys"] == {"phones": ["+12175550142"], "phone_digits": ["2175550142"]}


# --- international prefixes --------------------------------------------------

def test_phonenumbers_alone_misreads_a_written_international_prefix():
    """Why the rule exists: phonenumbers only knows the default region's own prefix."""
    number = phonenumbers.parse("0044 20 7946 0958", "US")
    assert _formatted(number, PhoneNumberFormat.E164) == "+100442079460958"
    assert not phonenumbers.is_valid_number(number)


@pytest.mark.parametrize("value, region", [("0044 20 7946 0958", "US"),
                                           ("00 44 20 7946 0958", "US"),
                                           ("00-44-20-7946-0958", "CA"),
                                           ("011 44 20 7946 0958", "GB"),
                                           ("011 44 20 7946 0958", "FR")])
def test_a_written_international_prefix_is_read_as_plus(clean, value, region):
    """ITU-T E.123: '+' stands for whatever prefix the caller's country dials out with."""
    entry, changes, _, _ = only(clean, value, country=region)
    assert (entry["e164"], entry["region"]) == ("+442079460958", "GB")
    assert changes == ["phones.international_prefix", "phones.formatted_e164"]


def test_the_prefix_step_shows_the_number_with_plus(clean):
    body = clean({"phone": "0044 20 7946 0958"})
    assert [c["to"] for c in body["changes"]] == ["+44 20 7946 0958", "+442079460958"]


@pytest.mark.parametrize("value, region, e164", [("011 44 20 7946 0958", "US", "+442079460958"),
                                                 ("00 44 20 7946 0958", "GB", "+442079460958"),
                                                 ("011 52 55 1234 5678", "US", "+525512345678")])
def test_the_default_regions_own_prefix_needs_no_rule(clean, value, region, e164):
    """phonenumbers reads the default region's own prefix (PhoneMetadata.international_prefix)."""
    entry, changes, _, _ = only(clean, value, country=region)
    assert entry["e164"] == e164 and changes == ["phones.formatted_e164"]


# --- numbers that cannot be used as sent -------------------------------------

def test_phonenumbers_would_complete_a_local_number_wrongly():
    """Why the flag exists: phonenumbers gives IS_POSSIBLE_LOCAL_ONLY and a wrong E.164."""
    number = phonenumbers.parse("555-0142", "US")
    assert phonenumbers.is_possible_number_with_reason(number) == \
        phonenumbers.ValidationResult.IS_POSSIBLE_LOCAL_ONLY
    assert _formatted(number, PhoneNumberFormat.E164) == "+15550142"


@pytest.mark.parametrize("value, region", [("555-0142", "US"), ("5550142", "US"),
                                           (5550142, "US"), ("Home: 555-0142", "US"),
                                           ("7946 0958", "GB")])
def test_a_number_without_its_area_code_is_not_guessed(clean, value, region):
    entry, changes, flags, keys = only(clean, value, country=region)
    assert entry == {"e164": None, "extension": None, "region": None, "type": None,
                     "valid": False, "use": None, "national": None, "value": value}
    assert changes == [] and flags == ["phones.missing_area_code"] and keys == {}


def test_a_valid_number_dialled_locally_is_kept(clean):
    """phonenumbers' example UAN for Canada (example_number_for_type(CA, UAN)) has seven digits."""
    example = phonenumbers.example_number_for_type("CA", PhoneNumberType.UAN)
    entry, _, _, _ = only(clean, _formatted(example, PhoneNumberFormat.NATIONAL), country="CA")
    assert entry["valid"] and entry["e164"] == _formatted(example, PhoneNumberFormat.E164)


@pytest.mark.parametrize("value", ["+1 123 456 7891", "(217) 155-0142", "+44 11 1234 5678"])
def test_a_possible_but_unassigned_number_keeps_its_e164_and_is_invalid(clean, value):
    entry, changes, flags, keys = only(clean, value)
    assert entry["e164"] is not None and entry["valid"] is False and entry["type"] == "unknown"
    assert changes[-1] == "phones.formatted_e164" and flags == ["phones.invalid"]
    assert keys == {}


@pytest.mark.parametrize("value", ["12", 12, "217-555-01423333", "call me", "x12", "#",
                                   "1" * 300, "(217) 555-0142 " * 20])
def test_unreadable_values_come_back_as_sent(clean, value):
    entry, changes, flags, keys = only(clean, value)
    assert entry["e164"] is None and entry["valid"] is False and entry["value"] == value
    assert changes == [] and flags == ["phones.unparseable"] and keys == {}


def test_an_unreadable_value_keeps_no_changes(clean):
    entry, changes, flags, _ = only(clean, " 217-555-01423333 x12 ")
    assert entry["value"] == " 217-555-01423333 x12 " and changes == []
    assert flags == ["phones.unparseable"]


@pytest.mark.parametrize("value", ["000-000-0000", "999-999-9999", "123-456-7890",
                                   "555-555-5555", "(111) 111-1111", "555-1212",
                                   "(217) 555-1212", "+1 217 555 1212"])
def test_placeholder_numbers_are_for_review_and_not_keys(clean, value):
    """Common practice (no source); 555-1212 is NANP directory assistance (from memory)."""
    entry, _, flags, keys = only(clean, value)
    assert "phones.placeholder" in flags and keys == {}


@pytest.mark.parametrize("value", ["none", "NONE", "No phone", "N/A", "declined", "ninguno",
                                   "sin teléfono", "-"])
def test_texts_saying_no_phone_are_placeholders(clean, value):
    entry, changes, flags, keys = only(clean, value)
    assert entry["value"] == value and entry["e164"] is None
    assert changes == [] and flags == ["phones.placeholder"] and keys == {}


def test_flags_never_quote_the_number(clean, rules):
    body = clean({"phone": "Dad 217-555-O142 / 555-0199 / +1 123 456 7891 / 000-000-0000"})
    assert len(body["flags"]) >= 5
    for flag in body["flags"]:
        assert set(flag) == {"field", "code", "severity", "message"}
        assert flag["message"] == rules.reasons[flag["code"]].description
        assert not any(group in str(flag) for group in ("217", "0142", "7891"))


# --- every code, and properties ------------------------------------------------

COVERING_INPUTS = ["Home: 217-555-0142 x12 / 555-0199", "Dad 1-800-FLOWERS", "0044 20 7946 0958",
                   "+1 123 456 7891", "12", "000-000-0000", "2l7-555-0142"]


def test_the_rules_list_every_code_the_phones_kind_emits_and_no_other(rules):
    emitted: set[str] = set()
    for value in COVERING_INPUTS:
        outcome = phones.clean_phones(value, Options(), rules)
        for trail in outcome.trails:
            emitted |= {c["reason"] for c in trail.changes} | {f["code"] for f in trail.flags}
    listed = {code for code in rules.reasons if code.startswith("phones.")}
    assert {code for code in emitted if code.startswith("phones.")} == listed


_PHONE_TEXT = st.text(alphabet=string.digits * 4 + "+()-./,;#xX extOoIlHhomecellW:yr",
                      max_size=40)


@QUICK
@given(value=st.one_of(_PHONE_TEXT, st.integers(min_value=0, max_value=10**16),
                       st.lists(st.one_of(st.none(), _PHONE_TEXT), max_size=3)))
def test_any_input_gives_entries_whose_chains_replay(value):
    body = cleaner.clean({"phone": value})
    entries = body["record"]["phones"]
    raws = value if isinstance(value, list) else [value]
    per_entry = []
    for raw in filter(lambda item: item is not None, raws):
        count = len(phones.clean_phones(raw, Options(), engine.default_rules()).value)
        per_entry += [raw] * count
    assert_chains(body, per_entry)
    for entry in entries:
        assert ENTRY_KEYS <= set(entry) and (entry["e164"] is None) == ("value" in entry)
    assert set(body["keys"].get("phones", [])) <= {e["e164"] for e in entries if e["valid"]}


@QUICK
@given(region=st.sampled_from(sorted(phonenumbers.SUPPORTED_REGIONS)),
       separator=st.sampled_from([" ", "-", ".", "", "  "]), label=st.sampled_from(
           ["", "Home: ", "cell ", "(w) ", "Tel. "]))
def test_example_numbers_survive_any_separators_and_a_label(region, separator, label):
    """Source: phonenumbers.example_number, regrouped with other separators."""
    example = phonenumbers.example_number(region)
    if example is None:
        return
    national = _formatted(example, PhoneNumberFormat.NATIONAL)
    value = label + national.replace(" ", separator).replace("-", separator)
    entries = cleaner.clean({"phone": value}, {"country": region})["record"]["phones"]
    assert [e["e164"] for e in entries] == [_formatted(example, PhoneNumberFormat.E164)]


@QUICK
@given(digits=st.text(alphabet=string.digits, min_size=7, max_size=12),
       region=st.sampled_from(["US", "GB", "MX", "DE", "IN", "FR"]))
def test_validity_is_phonenumbers_is_valid_number(digits, region):
    """Checked against phonenumbers.is_valid_number: the module reads validity from number_type."""
    reading = phones.read_digits(digits, region)
    try:
        number = phonenumbers.parse(digits, region)
    except phonenumbers.NumberParseException:
        assert reading is None
        return
    assert reading.valid == phonenumbers.is_valid_number(number)
    if reading.valid:
        assert reading.region == phonenumbers.region_code_for_number(number)


def test_long_and_hostile_cells_are_quick(clean):
    hostile = ["x1 " * 83, "ext" * 83, "1" * 249, "a1" * 124, "(" * 249, "1/" * 124,
               "O" * 249, "Home " * 49, "x" * 500]
    started = time.perf_counter()
    for value in hostile:
        clean({"phone": value})
    with pytest.raises(cleaner.InvalidInput):   # past the record's field limit
        clean({"phone": "x" * 10_000})
    # A bound on cost, not a speed target: catastrophic backtracking takes minutes.
    assert time.perf_counter() - started < 10.0


# --- the rules file ------------------------------------------------------------

@pytest.mark.parametrize("old, new, message", [
    ('national_pattern = "^0?1234567890?$"', 'national_pattern = "^(0?1234"', "regular expression"),
    ('national_pattern = "^0?1234567890?$"', 'national_pattern = "^(0)?123456789$"', "capture"),
    ('use = "home"', 'use = "house"', "Must be one of"),
    ('2 = "ABC"', '2 = "ABCD"', "more than one key"),
    ('words = ["temp", ', 'words = ["cell", ', "more than one label"),
    ('no_phone_texts = ["none", ', 'no_phone_texts = ["000", ', "pattern"),
    ('separators = ["/", ', 'separators = [" ", ', "white space"),
    ("min_number_digits = 7", "min_number_digits = 0", "min_number_digits"),
])
def test_broken_phone_rules_stop_start_up(rules_copy, old, new, message):
    edit_rules(rules_copy, "phones.toml", old, new)
    with pytest.raises(RulesError, match=message):
        engine.load_rules(rules_copy)


def test_a_rule_table_row_changes_behaviour_without_code(rules_copy):
    """Rules are data: a fictional range for another country is one more row."""
    with (rules_copy / "phones.toml").open("a", encoding="utf-8") as table:
        table.write('\n[[fictional]]\ncountry_code = 52\nnational_pattern = "^5512345678$"\n')
    body = cleaner.clean({"phone": "55 1234 5678"}, {"country": "MX"},
                         rules=engine.load_rules(rules_copy))
    assert field_codes(body, "phones[0]")[1] == ["phones.fictional_range"]
