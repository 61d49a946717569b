"""Names: the failures measured in a bare name-parsing library, parts sent
apart, trails, limits, options and the rule tables. The many single cases
are in tests/cases/names.toml (test_names_table.py); checks against outside
sources are in test_names_reference.py."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from nameparser import HumanName

import cleaner
from cleaner import engine
from cleaner.names import keys, stages, tokens, vocabulary
from cleaner.rules import RulesError
from conftest import REFERENCE_DATE, assert_formed_text_is_tidy, edit_rules, field_codes, fuzz_examples


def name_of(clean, value, **options):
    return clean({"name": value}, **options)["record"]["name"]


def parts(name):
    return {key: name[key] for key in ("prefix", "given", "middle", "family", "suffix")
            if name[key] is not None}


# --- what the bare library gets wrong, measured on intake data -----------------

# Each row: free text, the parts we return, and the parts the bare library
# (nameparser 1.x/2.x with its default constants) returns for the same text.
BARE_LIBRARY_FAILURES = [
    ("RUTH MACHADO", {"given": "Ruth", "family": "Machado"},
     {"given": "RUTH", "family": "MACHADO"}),
    ("BABY GIRL JONES", {"given": "Baby Girl", "family": "Jones"},
     {"given": "BABY", "middle": "GIRL", "family": "JONES"}),
    ("WANG Xiaoming", {"given": "Xiaoming", "family": "Wang"},
     {"given": "WANG", "family": "Xiaoming"}),
    ("Nguyen Van An", {"given": "Van An", "family": "Nguyen"},
     {"given": "Nguyen", "family": "Van An"}),
    ("SMITH JOHN", {"given": "John", "family": "Smith"}, {"given": "SMITH", "family": "JOHN"}),
    ("King Okafor", {"given": "King", "family": "Okafor"}, {"prefix": "King", "given": "Okafor"}),
    ("Prince Adebayo Lee", {"given": "Prince", "middle": "Adebayo", "family": "Lee"},
     {"prefix": "Prince", "given": "Adebayo", "family": "Lee"}),
    ("MARIA LOPEZ GARCIA", {"given": "Maria", "family": "Lopez Garcia"},
     {"given": "MARIA", "middle": "LOPEZ", "family": "GARCIA"}),
]


def bare_parts(value):
    parsed = HumanName(value)
    found = {"prefix": parsed.title, "given": parsed.first, "middle": parsed.middle,
             "family": parsed.last, "suffix": parsed.suffix}
    return {key: part for key, part in found.items() if part}


@pytest.mark.parametrize("value, ours, bare", BARE_LIBRARY_FAILURES,
                         ids=[row[0] for row in BARE_LIBRARY_FAILURES])
def test_the_bare_library_failures_are_fixed(clean, value, ours, bare):
    assert bare_parts(value) == bare  # the failure, as measured
    assert parts(name_of(clean, value)) == ours


def test_the_bare_library_capitalises_machado_as_a_mac_name(clean):
    parsed = HumanName("RUTH MACHADO")
    parsed.capitalize(force=True)
    assert parsed.last == "MacHado"
    assert name_of(clean, "RUTH MACHADO")["family"] == "Machado"


@pytest.mark.parametrize("value", ["UNKNOWN", "12345"])
def test_the_bare_library_takes_placeholders_for_given_names(clean, value):
    assert bare_parts(value) == {"given": value}
    name = name_of(clean, value)
    assert parts(name) == {} and name["value"] == value and name["placeholder"]


# --- parts sent apart -----------------------------------------------------------

def test_parts_are_cleaned_each_on_its_own_trail(clean):
    body = clean({"given": 'WILLIAM "BILL"', "middle": "NMN", "family": "o'neil jr",
                  "suffix": "MD"})
    name = body["record"]["name"]
    assert parts(name) == {"given": "William", "family": "O'Neil", "suffix": "Jr"}
    assert name["nickname"] == "Bill" and name["credentials"] == ["MD"]
    assert field_codes(body, "name.given")[0] == ["names.nickname_moved", "names.case_restored"]
    assert field_codes(body, "name.middle")[0] == ["names.no_middle_cleared"]
    assert field_codes(body, "name.family")[0] == ["names.part_moved", "names.case_restored"]
    # The suffix sent (MD) moved out to the credentials, and the family name's Jr moved in.
    assert field_codes(body, "name.suffix")[0] == ["names.part_moved", "names.part_moved",
                                                   "names.suffix_standardised"]
    assert field_codes(body, "name.credentials[0]")[0] == []  # sent as it stays
    assert field_codes(body, "name")[1] == ["names.credentials_found"]


def test_digits_among_letters_without_case_are_cased_like_a_name_in_one_case(clean):
    # Found by the HL7 v2 property test: "0" among Arabic and Thai letters was
    # repaired to "o" but not capitalised, since the value as sent had no
    # cased letter; cleaned again, it was.
    once = clean({"family": "0\u0620\u0e01"})["record"]["name"]["family"]
    assert once == "O\u0620\u0e01"
    again = clean({"family": once})
    assert again["record"]["name"]["family"] == once and again["changes"] == []


def test_a_suffix_sent_apart_is_not_replaced_by_one_in_the_family_name(clean):
    name = clean({"family": "Okafor Jr", "suffix": "III"})["record"]["name"]
    assert parts(name) == {"family": "Okafor Jr", "suffix": "III"}


def test_a_part_that_says_there_is_no_name_comes_back_as_sent(clean):
    body = clean({"given": "N/A", "family": "QUILLFEATHER", "middle": "  "})
    name = body["record"]["name"]
    assert name["given"] == "N/A" and name["family"] == "Quillfeather" and name["middle"] is None
    assert name["placeholder"] and field_codes(body, "name")[1] == ["names.placeholder_missing"]
    assert "given_folded" not in body["keys"] and body["keys"]["family_folded"] == "QUILLFEATHER"


def test_free_text_sent_beside_parts_comes_back_as_sent(clean):
    body = clean({"name": "Rowan Quillfeather", "given": "Rowan", "family": "Quillfeather"})
    name = body["record"]["name"]
    assert parts(name) == {"given": "Rowan", "family": "Quillfeather"}
    assert name["value"] == "Rowan Quillfeather"
    assert field_codes(body, "name")[1] == ["names.free_text_unused"]


@pytest.mark.parametrize("record", [{"name": None}, {"given": None, "family": None},
                                    {"name": "   "}])
def test_no_name_gives_null(clean, record):
    body = clean(record)
    assert body["record"]["name"] is None and body["keys"] == {}


def test_a_name_sent_as_a_number_is_a_missing_name(clean):
    name = name_of(clean, 12345)
    assert name["value"] == 12345 and name["valid"] is False and name["placeholder"]


# --- limits and odd characters ----------------------------------------------------

@pytest.mark.parametrize("value", ["Rowan " * 40, " ".join(["Quill"] * 17)])
def test_a_value_too_long_to_be_a_name_comes_back_as_sent(clean, value):
    body = clean({"name": value})
    assert body["record"]["name"]["value"] == value and not body["record"]["name"]["placeholder"]
    assert field_codes(body, "name")[1] == ["names.unparsed"]


def test_a_part_too_long_to_be_a_name_comes_back_as_sent(clean):
    body = clean({"family": "Quill" * 50, "given": "Rowan"})
    name = body["record"]["name"]
    assert name["family"] == "Quill" * 50 and not name["placeholder"]
    assert field_codes(body, "name")[1] == ["names.unparsed"]
    assert "family_folded" not in body["keys"] and body["keys"]["given_folded"] == "ROWAN"


def test_symbols_in_a_name_are_kept_and_flagged(clean):
    body = clean({"name": "Rowan Qu!llfeather"})
    assert body["record"]["name"]["family"] == "Qu!llfeather"
    assert field_codes(body, "name.family")[1] == ["names.unexpected_characters"]


# --- options ------------------------------------------------------------------------

def test_name_order_reads_free_text_family_first(clean):
    assert parts(name_of(clean, "Okafor Chidi Emeka", name_order="family_first")) == {
        "given": "Chidi Emeka", "family": "Okafor"}
    assert parts(name_of(clean, "Okafor Chidi Emeka", name_order="FAMILY_FIRST")) == {
        "given": "Chidi Emeka", "family": "Okafor"}


def test_a_comma_says_the_order_whatever_the_option(clean):
    assert parts(name_of(clean, "Okafor, Chidi", name_order="family_first")) == {
        "given": "Chidi", "family": "Okafor"}


def test_an_unknown_name_order_is_refused_without_echoing_it():
    with pytest.raises(cleaner.InvalidInput) as error:
        cleaner.clean({"name": "Rowan Quill"}, {"name_order": "sideways"})
    assert error.value.problems == [("/options/name_order", "must be given_first or family_first")]


def test_the_service_default_name_order_is_configurable(monkeypatch):
    from cleaner.config import Config
    monkeypatch.setenv("CLEANER_DEFAULT_NAME_ORDER", "family_first")
    defaults = Config.from_env().default_options()
    body = cleaner.clean({"name": "Okafor Chidi"}, defaults=defaults)
    assert body["record"]["name"]["family"] == "Okafor"


# --- keys -----------------------------------------------------------------------------

def test_keys_carry_each_part_of_a_two_part_family_name(clean):
    keys = clean({"name": "Lucía García-Márquez"})["keys"]
    assert keys["family_folded"] == "GARCIAMARQUEZ"
    assert keys["family_parts"] == ["GARCIA", "MARQUEZ"]
    assert keys["given_folded"] == "LUCIA" and keys["given_initial"] == "L"


def test_a_placeholder_name_leaves_no_name_keys(clean):
    assert clean({"name": "DOE, JANE"})["keys"] == {}


def test_variants_are_read_after_look_alikes_are_repaired(clean):
    assert "Bill" in name_of(clean, "W1LLIAM QUILLFEATHER")["given_variants"]


# --- trails ----------------------------------------------------------------------------

NAME_FIELDS = ("prefix", "given", "middle", "family", "suffix", "nickname")


def assert_name_trails_replay(record, body):
    """Each part's chain starts at the raw value it came from and ends at the part."""
    name = body["record"].get("name")
    if name is None:
        return
    for part in NAME_FIELDS:
        chain = [c for c in body["changes"] if c["field"] == f"name.{part}"]
        if not chain:
            continue
        assert chain[0]["from"] in (record.get("name"), *(record.get(p) for p in NAME_FIELDS))
        for before, after in zip(chain, chain[1:]):
            assert before["to"] == after["from"]
        assert chain[-1]["to"] == name[part]
    for index, credential in enumerate(name["credentials"]):
        chain = [c for c in body["changes"] if c["field"] == f"name.credentials[{index}]"]
        assert not chain or chain[-1]["to"] == credential


name_words = st.sampled_from([
    "Rowan", "QUILLFEATHER", "de", "la", "Cruz", "VAN", "der", "jr", "M.D.", "'Bill'",
    "(Peg)", "J.", "O'NEIL", "mcdonald", "BABY", "GIRL", "UNKNOWN", "N/A", "1", "Ø", ",",
    "Wang", "NGUYEN", "López", "García", "III", "Dr", "Twin", "A", "J0HN", "-", "Smith-Jones"])
texts = st.lists(name_words, max_size=7).map(" ".join) | st.text(max_size=30)


@settings(max_examples=400, deadline=None)
@given(value=texts, order=st.sampled_from(["given_first", "family_first"]))
def test_free_text_trails_replay_and_cleaning_is_deterministic(value, order):
    record = {"name": value}
    body = cleaner.clean(record, {"name_order": order, "reference_date": "2026-12-02"})
    assert_name_trails_replay(record, body)
    assert_parts_are_tidy(record, body)
    assert cleaner.clean(record, {"name_order": order, "reference_date": "2026-12-02"}) == body


@settings(max_examples=200, deadline=None)
@given(record=st.fixed_dictionaries({}, optional=dict.fromkeys(("prefix", "given", "middle", "family", "suffix"), texts)))
def test_parts_trails_replay(record):
    body = cleaner.clean(record, {"reference_date": "2026-12-02"})
    assert_name_trails_replay(record, body)
    assert_parts_are_tidy(record, body)


def assert_parts_are_tidy(record, body):
    name = body["record"].get("name")
    if name:
        assert_formed_text_is_tidy([name[part] for part in NAME_FIELDS] + name["credentials"],
                                   record)


def test_stray_marks_are_no_name(clean):
    assert parts(name_of(clean, "Rowan Quillfeather . -")) == {"given": "Rowan",
                                                             "family": "Quillfeather"}


# --- the rule tables ----------------------------------------------------------------------

@pytest.mark.parametrize("file, old, new, message", [
    ("names.toml", 'code = "names.placeholder_test"', 'code = "names.no_such_flag"',
     "unlisted codes"),
    ("names.toml", 'patterns = ["^zz[a-z]*$"]', 'patterns = ["^zz[a-z"]', "invalid"),
    ("names.toml", "max_words = 16", "max_words = 2", "max_words"),
    ("names.toml", 'mr = "Mr"', '"m r" = "Mr"', "one word"),
    ("surnames.csv", "smith,no", "smith,maybe", "also_given"),
    ("nicknames.csv", "aaron,erin", "aaron,", "nickname"),
])
def test_broken_name_rules_stop_start_up(rules_copy, file, old, new, message):
    edit_rules(rules_copy, file, old, new)
    with pytest.raises(RulesError, match=message):
        engine.load_rules(rules_copy)


def test_a_particle_added_to_the_table_changes_behaviour_without_code(rules_copy):
    edit_rules(rules_copy, "names.toml", '"bat", "abu"', '"bat", "abu", "ua"')
    rules = engine.load_rules(rules_copy)
    name = cleaner.clean({"name": "Tama ua Tane"}, rules=rules)["record"]["name"]
    assert name["family"] == "ua Tane" and name["particles"] == "ua"


def test_variants_keep_the_datasets_spelling(clean):
    assert "K.C." in name_of(clean, "CASEY QUILLFEATHER")["given_variants"]
    assert {"Jr", "June"} <= set(name_of(clean, "Junior Quillfeather")["given_variants"])


# Source: HL7 FHIR R4 NameUse: temp is for "temporary names assigned at birth or in
# emergency situations" (datatypes.html#HumanName; tests/reference/fhir_name_use.csv).
@pytest.mark.parametrize("value, use", [("BABY GIRL QUILLFEATHER", "temp"), ("UNKNOWN", "temp"),
                                        ("DOE, JANE", "temp"), ("TEST PATIENT", None),
                                        ("N/A", None), ("Rowan Quillfeather", None)])
def test_temporary_names_have_the_fhir_use_temp(clean, value, use):
    assert name_of(clean, value)["use"] == use


# The word caches only remember: a value cleaned with them warm gives exactly
# what it gives with them cleared.
WORD_CACHES = (stages._word_stages, stages._part_stages, tokens._classified, keys.folded_key,
               keys._phonetic_keys, keys._family_keys, keys._given_keys, vocabulary.fold)


@settings(max_examples=200, deadline=None)
@given(value=texts, order=st.sampled_from(["given_first", "family_first"]))
def test_the_word_caches_agree_with_a_cold_reading(value, order):
    options = {"name_order": order, "reference_date": "2026-12-02"}
    warm = cleaner.clean({"name": value}, options)
    for cache in WORD_CACHES:
        cache.cache_clear()
    assert cleaner.clean({"name": value}, options) == warm


# Latin letters, digits typed for letters, letters that have no case (Arabic,
# Thai, CJK), and the marks names carry; no quotes: a quoted word is a
# nickname, and where one lands is read on the value as sent.
_MIXED_SCRIPT = st.text(st.sampled_from("aoOlLsSbB0158 -.\u0620\u0e01\u4e2d\u00e9\u00c9\u00b8"),
                        min_size=1, max_size=12)


@settings(max_examples=fuzz_examples(300), deadline=None)
@given(family=_MIXED_SCRIPT, given_name=_MIXED_SCRIPT, typed_in=st.sampled_from([str.upper,
                                                                                  str.lower]))
def test_a_cleaned_name_cleaned_again_is_unchanged(family, given_name, typed_in):
    """For a name typed in one case style: case is judged on the value as
    sent, so a part of a mixed-case name may keep a lower-case word that the
    same word sent alone would have capitalised."""
    options = {"reference_date": REFERENCE_DATE}
    try:
        once = cleaner.clean({"family": typed_in(family), "given": typed_in(given_name)}, options)
    except cleaner.InvalidInput:
        return
    name = once["record"]["name"]
    sent_again = {key: name[key] for key in ("given", "family") if name and name[key]}
    if not sent_again:
        return
    again = cleaner.clean(sent_again, options)
    assert {key: again["record"]["name"][key] for key in ("given", "family")} == \
        {key: name[key] for key in ("given", "family")}
