"""US addresses checked against sources outside the project: USPS Publication 28
(Appendix C1 street suffixes, C2 secondary units, B states and directionals, and
the forms and examples of its chapters as digested in shared/reference/STANDARDS.md
section 1), and the ISO 3166 codes that pycountry carries. Each check names its
source; tables are in tests/reference."""

from __future__ import annotations

import re
import tomllib

import pytest

from cleaner.rules import default_directory
from reference import table

SUFFIXES = table("usps_street_suffixes.csv")
UNITS = table("usps_secondary_units.csv")
STATES = table("usps_states.csv")
DIRECTIONALS = table("usps_directionals.csv")
EXAMPLES = table("pub28_examples.csv")
LAST_LINE = ", SPRINGFIELD, IL 62704"
PARTS = ("line1", "line2", "city", "state", "postal_code", "kind")
ZIP_FIRST_DIGITS = tomllib.loads((default_directory() / "addresses.toml").read_text("utf-8")
                                 )["zip_first_digits"]


def cleaned(clean, value):
    """(record.address, address flag codes) of a one-line address (str) or of parts (dict)."""
    body = clean({"address": value} if isinstance(value, str) else value)
    return body["record"]["address"], [flag["code"] for flag in body["flags"]
                                       if flag["code"].startswith("addresses.")]


def address(clean, value):
    return cleaned(clean, value)[0]


def params(cases):
    """pytest params of (id, *values) cases."""
    return [pytest.param(*values, id=case_id) for case_id, *values in cases]


# --- 1. Appendix C1: street suffixes ---------------------------------------------------

# Source: USPS Pub 28 Appendix C1 (tests/reference). Quirk (digest 1.9): MDW is listed under
# both MEADOW and MEADOWS; it is MEADOW's standard, so MDW stays MDW.
def c1_standard(form, row):
    return "MDW" if form == "MDW" else row["standard"]


def test_c1_lists_mdw_as_its_one_conflict():
    standards = {}
    for row in SUFFIXES:
        standards.setdefault(row["common"], set()).add(row["standard"])
    assert (len(SUFFIXES), len({row["primary"] for row in SUFFIXES})) == (549, 206)
    assert {form: found for form, found in standards.items() if len(found) > 1} \
        == {"MDW": {"MDW", "MDWS"}}


# Source: USPS Pub 28 section 234 and Appendix C1, every row: its common form and its primary name.
@pytest.mark.parametrize("row", SUFFIXES, ids=lambda row: f"{row['primary']}-{row['common']}")
def test_c1_suffix_is_written_as_its_standard_abbreviation(clean, row):
    for form in (row["common"], row["primary"]):
        standard = c1_standard(form, row)
        found = address(clean, f"12 QUILLFEATHER {form}{LAST_LINE}")
        assert (found["line1"], found["components"]["street"], found["components"]["suffix"]) \
            == (f"12 QUILLFEATHER {standard}", "QUILLFEATHER", standard)


# Source: USPS Pub 28 section 234 (digest 1.5): of two suffix words in a row only the last is
# abbreviated; PARK AVENUE is Pub 28's example, the others are made up.
@pytest.mark.parametrize("line, street, suffix", [
    ("12 PARK AVENUE", "PARK", "AVE"), ("12 COURT STREET", "COURT", "ST"),
    ("12 GROVE PLACE", "GROVE", "PL"), ("12 SPRING HILL ROAD", "SPRING HILL", "RD"),
])
def test_only_the_last_of_two_suffix_words_is_abbreviated(clean, line, street, suffix):
    found = address(clean, f"{line}{LAST_LINE}")
    assert (found["line1"], found["components"]["street"], found["components"]["suffix"]) \
        == (f"12 {street} {suffix}", street, suffix)


# --- 2. Appendix C2: secondary unit designators -----------------------------------------

# Source: USPS Pub 28 section 213 and Appendix C2 (tests/reference; its requires_range column
# is from memory): the designator, written out or abbreviated, in a one-line address and as line2.
@pytest.mark.parametrize("form", ["name", "abbreviation"])
@pytest.mark.parametrize("row", UNITS, ids=lambda row: row["name"])
def test_c2_designator_is_written_as_its_abbreviation(clean, row, form):
    number = " 5" if row["requires_range"] == "yes" else ""
    one_line = address(clean, f"12 OAK ST {row[form]}{number}{LAST_LINE}")
    parts = address(clean, {"line1": "12 OAK ST", "line2": f"{row[form]}{number}",
                            "city": "SPRINGFIELD", "state": "IL"})
    expected = f"{row['abbreviation']}{number}"
    assert (one_line["line1"], one_line["line2"], one_line["components"]["unit_type"]) \
        == ("12 OAK ST", expected, row["abbreviation"])
    assert (parts["line1"], parts["line2"]) == ("12 OAK ST", expected)


# Source: USPS Pub 28 section 213 (digest 1.2): '#' when no designator is known, with a space
# before the number ([S2], NY State Comptroller's standards).
@pytest.mark.parametrize("value", ["12 OAK ST #5" + LAST_LINE, "12 OAK ST # 5" + LAST_LINE,
                                   {"line1": "12 OAK ST", "line2": "#5", "city": "SPRINGFIELD"}])
def test_a_unit_without_designator_is_written_hash_space_number(clean, value):
    assert address(clean, value)["line2"] == "# 5"


# --- 3. Appendix B: states and directionals ---------------------------------------------

def zip_for(code):
    """A ZIP whose first digit fits the state, by the rules' [zip_first_digits] table."""
    return next(f"{digit}0001" for digit, codes in ZIP_FIRST_DIGITS.items() if code in codes)


# Source: USPS Pub 28 Appendix B (tests/reference), every name and code, in a one-line address
# with a ZIP and sent as a part without one.
@pytest.mark.parametrize("row, form", params([
    (f"{row['abbreviation']}-{form}", row, form) for row in STATES
    for form in ("name", "abbreviation")]))
def test_appendix_b_state_is_written_as_its_code(clean, row, form):
    code = row["abbreviation"]
    for value in (f"12 OAK ST, SPRINGFIELD, {row[form]} {zip_for(code)}",
                  {"line1": "12 OAK ST", "city": "SPRINGFIELD", "state": row[form]}):
        found, flags = cleaned(clean, value)
        assert (found["state"], found["kind"], flags) == (code, "street", [])


# ISO 3166 (pycountry 26.2.16, an open dataset) against Appendix B: spellings that differ,
# upper-cased, as (ISO, Appendix B); codes only on one side.
SPELLING_DIFFERENCES = {"VI": ("VIRGIN ISLANDS, U.S.", "VIRGIN ISLANDS"),
                        "FM": ("MICRONESIA, FEDERATED STATES OF", "FEDERATED STATES OF MICRONESIA")}
ONLY_ISO, ONLY_USPS = {"UM"}, {"AA", "AE", "AP"}
ISO_TYPE_OF_CATEGORY = {"state": "State", "federal district": "District",
                        "territory": "Outlying area", "freely associated state": "Country"}


# Source: ISO 3166-2:US subdivisions and, for the freely associated states, ISO 3166-1, as
# pycountry carries them; Appendix B as in tests/reference.
def test_appendix_b_agrees_with_iso_3166():
    pycountry = pytest.importorskip("pycountry")
    iso = {sub.code.removeprefix("US-"): (sub.name.upper(), sub.type)
           for sub in pycountry.subdivisions.get(country_code="US")}
    assert len(iso) == 57   # 50 states, DC, AS GU MP PR VI UM
    iso |= {row["abbreviation"]: (pycountry.countries.get(alpha_2=row["abbreviation"]).name.upper(),
                                  "Country")
            for row in STATES if row["category"] == "freely associated state"}
    usps = {row["abbreviation"]: row for row in STATES}
    assert (set(iso) - set(usps), set(usps) - set(iso)) == (ONLY_ISO, ONLY_USPS)
    assert {code: (iso[code][0], row["name"]) for code, row in usps.items()
            if code in iso and iso[code][0] != row["name"]} == SPELLING_DIFFERENCES
    shared = sorted(set(iso) & set(usps))
    assert [iso[code][1] for code in shared] \
        == [ISO_TYPE_OF_CATEGORY[usps[code]["category"]] for code in shared]


# Source: USPS Pub 28 section 233 and Appendix B (tests/reference): the directional before and
# after the street name is abbreviated; one that is the street name itself is kept ([S2], FGDC).
@pytest.mark.parametrize("form", ["name", "abbreviation"])
@pytest.mark.parametrize("row", DIRECTIONALS, ids=lambda row: row["name"])
def test_appendix_b_directionals(clean, row, form):
    word, abbreviation = row[form], row["abbreviation"]
    before = address(clean, f"12 {word} ELM ST{LAST_LINE}")
    after = address(clean, f"12 ELM ST {word}{LAST_LINE}")
    named = address(clean, f"12 {word} ST{LAST_LINE}")
    assert (before["line1"], before["components"].get("predirectional")) \
        == (f"12 {abbreviation} ELM ST", abbreviation)
    assert (after["line1"], after["components"].get("postdirectional")) \
        == (f"12 ELM ST {abbreviation}", abbreviation)
    assert (named["line1"], named["components"]["street"]) == (f"12 {word} ST", word)


# --- 4. Pub 28's own examples and forms ------------------------------------------------

ZIP_FORMAT = re.compile(r"^\d{5}(-\d{4})?$")   # the standards digest, section 1.4
# Section 212: upper case; 222 and Appendix D: punctuation dropped but for the ZIP+4 hyphen and
# the hyphen, slash and period inside numbers (digest 1.1).
PUB28_TEXT = re.compile(r"^(?:[A-Z0-9#]|(?<=[0-9A-Z])-(?=[0-9A-Z])|(?<=\d)[./](?=\d)| (?! ))+$")


def assert_example(clean, value, row):
    found = address(clean, value)
    assert {part: found[part] for part in PARTS} \
        == {part: row[part] or None for part in PARTS}, row["source"]
    for part in ("line1", "line2", "city", "state"):
        assert found[part] is None or PUB28_TEXT.match(found[part]), (part, found[part])
    assert ZIP_FORMAT.match(found["postal_code"])


# Source: USPS Pub 28, per row of tests/reference/pub28_examples.csv (sections and markers there).
@pytest.mark.parametrize("row", params([(row["input"], row) for row in EXAMPLES]))
def test_pub28_examples(clean, row):
    assert_example(clean, row["input"], row)


# The same examples written on one line without commas (Pub 28 section 224: at least one space
# between city, state and ZIP; no comma needed). Ids are the rows' inputs.
@pytest.mark.parametrize("row", params([(row["input"], row) for row in EXAMPLES]))
def test_pub28_examples_without_commas(clean, row):
    assert_example(clean, row["input"].replace(",", ""), row)


# --- 5. ZIP format ---------------------------------------------------------------------

def zip_spellings():
    """(as sent, as standard) for a ZIP of each first digit: 5 digits, 9, 5-4 and 5 space 4."""
    for digit in range(10):
        zip5 = f"{digit}{(1234 * digit + 567) % 10000:04d}"
        plus4 = f"{(4321 * digit + 89) % 10000:04d}"
        yield zip5, zip5
        for sent in (f"{zip5}{plus4}", f"{zip5}-{plus4}", f"{zip5} {plus4}"):
            yield sent, f"{zip5}-{plus4}"


# Source: the standards digest, section 1.4: ^\d{5}(-\d{4})?$ (Pub 28 section 222, Appendix B).
@pytest.mark.parametrize("sent, standard", list(zip_spellings()))
def test_zip_is_written_in_the_pub28_format(clean, sent, standard):
    state = ZIP_FIRST_DIGITS[standard[0]][0]
    for value in (f"12 OAK ST, SPRINGFIELD, {state} {sent}",
                  {"line1": "12 OAK ST", "city": "SPRINGFIELD", "postal_code": sent}):
        found, flags = cleaned(clean, value)
        assert (found["postal_code"], flags) == (standard, [])
        assert ZIP_FORMAT.match(found["postal_code"])
