"""HL7 v2 messages: PID demographics cleaned in place, every other byte as sent.
The patients, facilities and streets are invented; phones are NANP 555-01XX."""

from __future__ import annotations

import re

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cleaner.engine import default_rules, load_rules
from cleaner.formats import hl7v2
from cleaner.options import InvalidInput, read_options
from cleaner.rules import RulesError
from cleaner.web import create_app
from conftest import REFERENCE_DATE, SECRETS, edit_rules, fuzz_examples, secret_fragments
from reference import table

MSH = "MSH|^~\\&|REGDESK|MAPLEFORD CLINIC|MPI|MAPLEFORD CLINIC|20261202093000||ADT^A04|MSG00017|P|2.5.1"
EVN = "EVN|A04|20261202093000"
PV1 = "PV1|1|O|CLINIC^2^B||||0417^HOLLOWAY^PRUDENCE^^^DR"
# PID-1..19 of an invented patient, every cleaned field in its messy form.
PID = ("PID|1||A-0042^^^MAPLEFORD^MR||QUILLFEATHER^ROWAN^J^JR^DR^^L~quillfeather^ro^^^^^N||"
       "19800304|f|||12 north elm street apt 4b^^springfield^il^627041234^USA^H||"
       "(217) 555-0142 x12^PRN^PH~^NET^Internet^R.Quill@Example.ORG|^WPN^PH^^1^217^555-0143^7"
       "||||ACCT-9|219-45-0172")
CLEAN_PID = ("PID|1||A-0042^^^MAPLEFORD^MR||Quillfeather^Rowan^J^Jr^Dr^^L~Quillfeather^Ro^^^^^N||"
             "19800304|F|||12 N ELM ST^APT 4B^SPRINGFIELD^IL^62704-1234^USA^H||"
             "+12175550142X12^PRN^PH~^NET^Internet^R.Quill@example.org|^WPN^PH^^1^217^5550143^7"
             "||||ACCT-9|219450172")


def message(*segments: str, end: str = "\r") -> str:
    return end.join(segments) + end


def run(text: str | bytes, **options) -> hl7v2.CleanedMessage:
    options.setdefault("reference_date", REFERENCE_DATE)
    body = text.encode() if isinstance(text, str) else text
    return hl7v2.clean_message(body, read_options(options), default_rules())


def pid(**at: str) -> str:
    """A PID segment whose field n is given as f<n>=..."""
    values = ["PID", "1"]
    for name, value in at.items():
        number = int(name[1:])
        values += [""] * (number + 1 - len(values))
        values[number] = value
    return "|".join(values)


def field_of(text: str, number: int, segment: int = 1) -> str:
    pids = [line for line in re.split(r"\r\n|\r|\n", text) if line.startswith("PID")]
    return pids[segment - 1].split("|")[number]


def codes(cleaned, place=None):
    found = cleaned.findings
    return ([c["reason"] for c in found.changes if place in (None, c["field"])],
            [f["code"] for f in found.flags if place in (None, f["field"])])


# --- the whole message ---------------------------------------------------------------


def test_a_registration_message_is_cleaned_in_the_pid_only():
    cleaned = run(message(MSH, EVN, PID, PV1))
    assert cleaned.text == message(MSH, EVN, CLEAN_PID, PV1)
    assert cleaned.body == cleaned.text.encode()
    assert cleaned.pid_segments == 1
    changes = {(c["field"], c["reason"]) for c in cleaned.findings.changes}
    assert {("PID[1]-5[1].1.1", "names.case_restored"), ("PID[1]-5[2].2", "names.case_restored"),
            ("PID[1]-8", "sex.coded"), ("PID[1]-8", "hl7v2.sex_written"),
            ("PID[1]-11[1].2", "addresses.unit_moved"), ("PID[1]-13[1]", "hl7v2.phone_written"),
            ("PID[1]-13[2].4", "email.domain_lowercased"), ("PID[1]-14[1]", "hl7v2.phone_written"),
            ("PID[1]-19", "ssn.separators_removed")} <= changes
    # Written back as sent: the DTM birth date and the country changed nothing.
    assert not [c for c in cleaned.findings.changes
                if c["field"] in ("PID[1]-7.1", "PID[1]-11[1].6")]


def test_each_places_trail_replays_from_the_value_read_to_the_value_written():
    cleaned = run(message(MSH, PID))
    by_place: dict[str, list] = {}
    for change in cleaned.findings.changes:
        by_place.setdefault(change["field"], []).append(change)
    for trail in by_place.values():
        assert all(a["to"] == b["from"] for a, b in zip(trail, trail[1:]))
    assert by_place["PID[1]-8"][0]["from"] == "f" and by_place["PID[1]-8"][-1]["to"] == "F"
    assert by_place["PID[1]-13[1]"][-1]["to"] == "+12175550142X12"


def test_every_pid_segment_is_cleaned_and_numbered():
    second = pid(f5="BRAMBLEWOOD^ODETTE", f8="female")
    cleaned = run(message(MSH, PID, PV1, second, PV1))
    assert field_of(cleaned.text, 5, 2) == "Bramblewood^Odette"
    assert field_of(cleaned.text, 8, 2) == "F"
    assert cleaned.pid_segments == 2
    assert "PID[2]-8" in {c["field"] for c in cleaned.findings.changes}


def test_a_pid_segment_alone_uses_the_default_delimiters():
    cleaned = run(pid(f5="QUILLFEATHER^ROWAN", f7="1980-03-04"))
    assert cleaned.text == pid(f5="Quillfeather^Rowan", f7="19800304")
    assert codes(cleaned, "PID[1]-7.1")[0] == ["hl7v2.date_written"]


@pytest.mark.parametrize("end", ["\r", "\n", "\r\n"])
def test_segment_breaks_are_kept_as_sent(end):
    sent = message(MSH, EVN, PID, PV1, end=end)
    assert run(sent).text == message(MSH, EVN, CLEAN_PID, PV1, end=end)


def test_mixed_breaks_and_no_final_break_are_kept():
    sent = MSH + "\r\n" + PID + "\n" + PV1
    assert run(sent).text == MSH + "\r\n" + CLEAN_PID + "\n" + PV1


def test_custom_encoding_characters_are_honoured():
    # Not "@": as the escape character it would make the email unreadable.
    custom = {"|": "#", "^": "*", "~": "!", "\\": "/", "&": "%"}
    swap = str.maketrans(custom)
    sent = message(MSH.translate(swap), PID.translate(swap))
    assert run(sent).text == message(MSH.translate(swap), CLEAN_PID.translate(swap))


def test_a_message_with_nothing_to_clean_comes_back_byte_for_byte():
    sent = message(MSH, EVN, CLEAN_PID, PV1)
    cleaned = run(sent)
    assert cleaned.body == sent.encode()
    assert cleaned.findings.changes == []


def test_cleaning_a_cleaned_message_changes_nothing():
    once = run(message(MSH, EVN, PID, PV1))
    twice = run(once.body)
    assert twice.body == once.body
    assert twice.findings.changes == []


# --- escapes and the truncation character -----------------------------------------------


@pytest.mark.parametrize("name, char", [("F", "|"), ("S", "^"), ("T", "&"), ("R", "~"),
                                        ("E", "\\")])
def test_delimiter_escapes_are_read_and_written_again(name, char):
    escape = f"\\{name}\\"
    cleaned = run(pid(f5=f"smith{escape}jones^ODETTE"))
    assert field_of(cleaned.text, 5) == f"Smith{escape}jones^Odette"
    family = [c for c in cleaned.findings.changes if c["field"] == "PID[1]-5[1].1.1"]
    assert family[0]["from"] == f"smith{char}jones"
    assert "names.unexpected_characters" in codes(cleaned, "PID[1]-5[1].1.1")[1]


@pytest.mark.parametrize("raw", ["QUILL\\H\\FEATHER", "QUILL\\N\\FEATHER", "QUILL\\X0D\\FEATHER",
                                 "QUILL\\.br\\FEATHER", "QUILL\\Cxxyy\\FEATHER", "QUILL\\FEATHER",
                                 "QUILL\\\\FEATHER"])
def test_other_escapes_leave_the_element_as_sent(raw):
    sent = pid(f5=f"{raw}^ROWAN~BRAMBLEWOOD^ODETTE", f8="f")
    cleaned = run(sent)
    assert field_of(cleaned.text, 5) == f"{raw}^ROWAN~Bramblewood^Odette"
    assert field_of(cleaned.text, 8) == "F"
    assert codes(cleaned, "PID[1]-5[1].1.1") == ([], ["hl7v2.escape_kept"])


def test_the_truncation_character_of_v2_7():
    header = MSH.replace("^~\\&", "^~\\&#")
    sent = message(header, pid(f5="QUILLFEATHER^ROWA#", f11="9 ash ln^^spring # field^IL"))
    cleaned = run(sent)
    assert field_of(cleaned.text, 5) == "QUILLFEATHER^ROWA#"
    assert codes(cleaned, "PID[1]-5[1].2") == ([], ["hl7v2.truncated"])
    # Written again, a '#' in a value is escaped, since it is a delimiter here.
    assert field_of(cleaned.text, 11) == "9 ASH LN^^SPRING \\P\\ FIELD^IL"
    assert run(cleaned.body).findings.changes == []


def test_empty_fields_and_the_hl7_null_are_left_alone():
    sent = pid(f5='""', f7='""', f8="", f11='""^^""', f13='""~^PRN^PH^^^""^""', f19='""')
    cleaned = run(sent)
    assert cleaned.text == sent
    assert cleaned.findings.changes == cleaned.findings.flags == []


def test_a_null_component_is_kept_and_the_rest_cleaned():
    cleaned = run(pid(f5='QUILLFEATHER^""^J'))
    assert field_of(cleaned.text, 5) == 'Quillfeather^""^J'


# --- each field ---------------------------------------------------------------------------


@pytest.mark.parametrize("sent, written", [
    ("19800304", "19800304"), ("1980-03-04", "19800304"), ("03/04/1980", "19800304"),
    ("198003041230-0500", "198003041230-0500"), ("1980-03", "198003"), ("1980", "1980"),
    ("19800304^D", "19800304^D"), ("3/4/1980 12:30^M", "19800304^M"),
])
def test_birth_dates_are_written_in_dtm_form(sent, written):
    assert field_of(run(pid(f7=sent)).text, 7) == written


def test_the_date_order_option_reads_a_numeric_date():
    assert field_of(run(pid(f7="03/04/1980"), date_order="DMY").text, 7) == "19800403"


def test_a_date_that_cannot_be_read_is_left_as_sent():
    cleaned = run(pid(f7="2/30/1980"))
    assert field_of(cleaned.text, 7) == "2/30/1980"
    assert cleaned.findings.flags and cleaned.findings.changes == []


@pytest.mark.parametrize("sent, written", [
    ("F", "F"), ("f", "F"), (" M ", "M"), ("Female", "F"), ("2", "F"), ("man", "M"),
    ("A", "A"), ("a", "A"), ("N", "N"), ("non-binary", "O"), ("unk", "U"), ("Zorblax", "Zorblax"),
])
def test_sex_is_written_as_a_table_0001_code(sent, written):
    cleaned = run(pid(f8=sent))
    assert field_of(cleaned.text, 8) == written
    if sent == written:
        assert codes(cleaned, "PID[1]-8")[0] == []


@pytest.mark.parametrize("sent, written", [
    ("(217) 555-0142", "+12175550142"), ("217.555.0142 ext 9", "+12175550142X9"),
    ("+12175550142", "+12175550142"), ("+12175550142X12", "+12175550142X12"),
    ("+44 20 7946 0018", "+442079460018"),
])
def test_a_phone_in_xtn_1_is_written_as_e164(sent, written):
    cleaned = run(pid(f13=f"{sent}^PRN^PH"))
    assert field_of(cleaned.text, 13) == f"{written}^PRN^PH"


def test_a_phone_in_xtn_5_to_8_is_written_there():
    cleaned = run(pid(f13="^PRN^PH^^^(217)^555-0142~^PRN^CP^^44^20^7946 0018^22"))
    assert field_of(cleaned.text, 13) == "^PRN^PH^^1^217^5550142~^PRN^CP^^44^20^79460018^22"
    assert codes(cleaned, "PID[1]-13[1]")[0][-1] == "hl7v2.phone_written"


def test_xtn_1_is_cleaned_and_xtn_5_to_8_kept_when_both_are_sent():
    cleaned = run(pid(f13="(217)555-0142^PRN^PH^^1^217^555-0142^4"))
    assert field_of(cleaned.text, 13) == "+12175550142^PRN^PH^^1^217^555-0142^4"


def test_a_phone_that_cannot_be_cleaned_is_left_as_sent():
    cleaned = run(pid(f13="555-0142^PRN^PH~^PRN^PH^^^^555-0143"))
    assert field_of(cleaned.text, 13) == "555-0142^PRN^PH~^PRN^PH^^^^555-0143"
    assert codes(cleaned, "PID[1]-13[2]")[1] == ["phones.missing_area_code"]


def test_a_number_its_region_does_not_have_keeps_its_written_form_and_no_change():
    # (03) 5555 6473 is an Australian number; read in the default region (US)
    # its E.164 form would be a number that does not exist.
    cleaned = run(message(MSH, pid(f13="(03) 5555 6473^WPN^PH")))
    assert field_of(cleaned.text, 13) == "(03) 5555 6473^WPN^PH"
    assert codes(cleaned, "PID[1]-13[1]") == ([], ["phones.invalid"])


def test_an_address_that_cannot_be_read_into_parts_is_left_as_sent():
    cleaned = run(message(MSH + "||||||UNICODE UTF-8", pid(f11="马当路190号^^上海市^^200000")))
    assert field_of(cleaned.text, 11) == "马当路190号^^上海市^^200000"
    changes, flags = codes(cleaned)
    assert changes == [] and "addresses.unparsed" in flags


def test_the_country_option_reads_a_national_phone():
    cleaned = run(pid(f13="020 7946 0018^PRN^PH"), country="GB")
    assert field_of(cleaned.text, 13) == "+442079460018^PRN^PH"


@pytest.mark.parametrize("sent, written", [
    ("^NET^Internet^R.Quill@Example.ORG", "^NET^Internet^R.Quill@example.org"),
    ("R.Quill@Example.ORG^NET^X.400", "R.Quill@example.org^NET^X.400"),
    ("(217) 555-0142^PRN^PH^R.Quill@Example.ORG", "+12175550142^PRN^PH^R.Quill@example.org"),
    ("^NET^internet^ R.Quill@example.org", "^NET^internet^R.Quill@example.org"),
])
def test_email_addresses_in_xtn(sent, written):
    assert field_of(run(pid(f14=sent)).text, 14) == written


def test_ssn_and_whitespace_only_values():
    cleaned = run(pid(f5="QUILLFEATHER^ ", f7=" ", f8=" ", f13=" ^PRN^PH", f19=" 219 45 0172 "))
    assert field_of(cleaned.text, 19) == "219450172"
    assert [field_of(cleaned.text, n) for n in (5, 7, 8, 13)] == ["Quillfeather^", "", "", "^PRN^PH"]


def test_an_address_keeps_its_country_and_type():
    cleaned = run(pid(f11="45 oak street^^cobblestone^va^22401^US^M^^CTY~"
                          "Calle 5 # 12^^Merida^YUC^97000^MEX^H"))
    assert field_of(cleaned.text, 11) == ("45 OAK ST^^COBBLESTONE^VA^22401^US^M^^CTY~"
                                          "Calle 5 # 12^^Merida^YUC^97000^MEX^H")
    assert "addresses.non_us" in codes(cleaned, "PID[1]-11[2]")[1]


def test_only_the_first_subcomponent_of_a_street_or_surname_is_cleaned():
    cleaned = run(pid(f5="QUILLFEATHER&VAN&QUILLFEATHER^ROWAN",
                      f11="12 elm street&ELM STREET&12^^springfield^il"))
    assert field_of(cleaned.text, 5) == "Quillfeather&VAN&QUILLFEATHER^Rowan"
    assert field_of(cleaned.text, 11) == "12 ELM ST&ELM STREET&12^^SPRINGFIELD^IL"


@pytest.mark.parametrize("f5, f11", [
    ('QUILLFEATHER^ROWAN "RO"', ""),           # a nickname
    ("QUILLFEATHER^ROWAN^^MD", ""),            # credentials
    ("", '12 elm street apt 4b^""^springfield^il'),   # a unit bound for a null XAD.2
])
def test_a_part_with_no_component_leaves_the_element_as_sent(f5, f11):
    sent = pid(f5=f5, f11=f11, f8="f")
    cleaned = run(sent)
    assert field_of(cleaned.text, 5) == f5 and field_of(cleaned.text, 11) == f11
    assert field_of(cleaned.text, 8) == "F"
    place = "PID[1]-5[1]" if f5 else "PID[1]-11[1]"
    assert "hl7v2.part_unplaced" in codes(cleaned, place)[1]
    assert not [c for c in cleaned.findings.changes if c["field"].startswith(place)]


def test_a_value_the_character_set_cannot_carry_leaves_the_element_as_sent():
    header = MSH + "||||||8859/1"
    sent = message(header, pid(f5="ÿvonne^rowan", f8="f")).encode("iso-8859-1")
    cleaned = run(sent)
    assert cleaned.body == message(header, pid(f5="ÿvonne^rowan", f8="F")).encode("iso-8859-1")
    assert codes(cleaned, "PID[1]-5[1]") == ([], ["hl7v2.not_encodable"])


# --- character sets ------------------------------------------------------------------------


@pytest.mark.parametrize("declared, charset", [("8859/1", "iso-8859-1"), ("8859/15", "iso-8859-15"),
                                               ("UNICODE UTF-8", "utf-8"), ("unicode utf-8", "utf-8")])
def test_the_body_is_read_and_written_in_the_msh_18_character_set(declared, charset):
    header = MSH + "||||||" + declared + "~UNICODE UTF-8"
    sent = message(header, pid(f5="MUÑOZ^JOSÉ", f23="São Bento")).encode(charset)
    cleaned = run(sent)
    assert cleaned.charset == charset
    assert cleaned.body == message(header, pid(f5="Muñoz^José", f23="São Bento")).encode(charset)


def test_a_body_without_msh_18_that_is_not_utf8_is_read_as_latin1():
    sent = message(MSH, pid(f5="MUÑOZ^JOSÉ", f23="Año")).encode("iso-8859-1")
    cleaned = run(sent)
    assert cleaned.body == message(MSH, pid(f5="Muñoz^José", f23="Año")).encode("iso-8859-1")
    assert codes(cleaned, "MSH-18") == ([], ["hl7v2.charset_assumed"])


# --- errors --------------------------------------------------------------------------------


@pytest.mark.parametrize("body", [
    b"", b"hello", b"MSH", b"MSH|", b"MSH|^~\\", b"MSH|^^\\&", b"MSH|^~\\&A", b"MSHA^~\\&",
    b"MSH|^~\\&|A\rEVN|A04\r", b"PID", b"{\"record\": {}}",
    (MSH + "||||||KLINGON\r" + PID).encode(),
    (MSH + "||||||UNICODE UTF-8\r").encode() + b"PID|1||\xff\xfe",
    (MSH + "||||||ASCII\r" + "PID|1||Ñ").encode(),
])
def test_what_is_not_a_v2_message_is_refused(body):
    with pytest.raises(hl7v2.NotHl7v2):
        run(body)


def test_a_value_longer_than_the_field_limit_is_refused_by_its_place():
    long = "Q" * 600
    with pytest.raises(InvalidInput) as refused:
        run(pid(f5=f"ROWAN~{long}^ROWAN"))
    assert refused.value.problems == [("PID[1]-5[2].1.1", "is longer than 512 characters")]


@pytest.mark.parametrize("old, new", [
    ('other = "O"', 'other = "Q"'),                               # not a Table 0001 code
    ('"BIG-5" = "big5"', '"BIG-5" = "utf-16"'),                   # MSH does not read as ASCII
    ('"BIG-5" = "big5"', '"BIG-5" = "no-such-set"'),
    ('fallback_charset = "iso-8859-1"', 'fallback_charset = "utf-8"'),   # not every byte
    ('default_delimiters = "|^~\\\\&"', 'default_delimiters = "|^^\\\\&"'),
])
def test_broken_rules_stop_start_up(rules_copy, old, new):
    edit_rules(rules_copy, "hl7v2.toml", old, new)
    with pytest.raises(RulesError):
        load_rules(rules_copy)


# --- checked against HL7 v2.5.1 (tests/reference/hl7_v2_251_structures.csv) -------------

STRUCTURES = table("hl7_v2_251_structures.csv")


def component(structure: str, name: str) -> int:
    return next(int(row["position"]) for row in STRUCTURES
                if row["structure"] == structure and row["name"] == name)


def test_the_cleaned_pid_fields_are_those_of_v2_5_1():
    fields = {int(row["position"]): row for row in STRUCTURES if row["structure"] == "PID"}
    expected = {5: ("Patient Name", "XPN"), 7: ("Date/Time of Birth", "TS"),
                8: ("Administrative Sex", "IS"), 11: ("Patient Address", "XAD"),
                13: ("Phone Number - Home", "XTN"), 14: ("Phone Number - Business", "XTN"),
                19: ("SSN Number - Patient", "ST")}
    assert set(hl7v2._FIELDS) == set(expected)
    for number, (name, kind) in expected.items():
        assert (fields[number]["name"], fields[number]["type"]) == (name, kind)
        assert hl7v2._FIELDS[number][1] == (fields[number]["repeats"] == "Y")


@pytest.mark.parametrize("elements, structure, names", [
    (hl7v2._XPN, "XPN", {"family": "Family Name", "given": "Given Name",
                         "middle": "Second and Further Given Names or Initials Thereof",
                         "suffix": "Suffix (e.g. JR or III)", "prefix": "Prefix (e.g. DR)"}),
    (hl7v2._XAD, "XAD", {"line1": "Street Address", "line2": "Other Designation", "city": "City",
                         "state": "State or Province", "postal_code": "Zip or Postal Code",
                         "country": "Country"}),
    (hl7v2._XTN_GROUP, "XTN", {"country": "Country Code", "area": "Area/City Code",
                               "local": "Local Number", "extension": "Extension"}),
    (hl7v2._XTN_PHONE, "XTN", {"phone": "Telephone Number"}),
    (hl7v2._DTM, "TS", {"birth_date": "Time"}),
])
def test_each_element_is_read_from_its_v2_5_1_component(elements, structure, names):
    assert {element.key: element.component for element in elements} == \
        {key: component(structure, name) for key, name in names.items()}


def test_composite_components_are_read_by_their_first_subcomponent():
    # The surname is FN.1 of XPN.1; the street line is SAD.1 of XAD.1.
    assert component("FN", "Surname") == component("SAD", "Street or Mailing Address") == 1
    assert [row["type"] for row in STRUCTURES if row["structure"] == "XPN"][0] == "FN"
    assert [row["type"] for row in STRUCTURES if row["structure"] == "XAD"][0] == "SAD"
    assert (component("XTN", "Telecommunication Equipment Type"),
            component("XTN", "Email Address")) == (hl7v2._XTN_TYPE, hl7v2._XTN_EMAIL)


def test_a_message_built_from_the_reference_positions_is_cleaned_there():
    xtn = [""] * 8
    xtn[component("XTN", "Telecommunication Use Code") - 1] = "WPN"
    xtn[component("XTN", "Country Code") - 1] = "1"
    xtn[component("XTN", "Area/City Code") - 1] = "217"
    xtn[component("XTN", "Local Number") - 1] = "555-0142"
    xtn[component("XTN", "Extension") - 1] = "31"
    cleaned = run(pid(f14="^".join(xtn)))
    written = field_of(cleaned.text, 14).split("^")
    assert written[component("XTN", "Local Number") - 1] == "5550142"
    assert written[component("XTN", "Extension") - 1] == "31"


# Source: HL7 v2 Table 0001 and the FHIR concept map (tests/reference/hl7_v2_table_0001.csv).
def test_sex_codes_are_those_of_table_0001(rules):
    rows = table("hl7_v2_table_0001.csv")
    assert rules["hl7v2"].table_0001 == {row["code"] for row in rows}
    for gender, code in rules["hl7v2"].sex_written_as.items():
        assert {"code": code, "fhir": gender} in [{"code": r["code"], "fhir": r["fhir"]}
                                                  for r in rows]


# --- properties -----------------------------------------------------------------------------

DELIMITERS = "|^~\\&"
plain = st.text(st.characters(codec="utf-8", exclude_characters="|^~\\&\r\n"), max_size=12)
escape = st.sampled_from(["\\F\\", "\\S\\", "\\T\\", "\\R\\", "\\E\\", "\\H\\", "\\X0A\\"])


def field_texts(text: st.SearchStrategy[str]) -> st.SearchStrategy[str]:
    """Fields of repetitions of components of subcomponents of `text` and escapes."""
    value = st.lists(text | escape, max_size=3).map("".join)
    component = st.lists(value, min_size=1, max_size=3).map("&".join)
    repetition = st.lists(component, min_size=1, max_size=4).map("^".join)
    return st.lists(repetition, min_size=1, max_size=3).map("~".join) | st.just('""')


field_text = field_texts(plain)
# What a registration desk types: capitals, digits, marks, other scripts; no
# quotes (a quoted word is a nickname, read on the value as sent).
typed_field_text = field_texts(st.text(st.sampled_from("ABCDELOSZ0158 -.,#/\u00c9\u0620\u4e2d"),
                                       max_size=12))
other_segment = st.builds(lambda name, fields: "|".join([name, *fields]),
                          st.sampled_from(["EVN", "PV1", "NK1", "OBX", "ZPD", "AL1"]),
                          st.lists(field_text, max_size=6))
CLEANED_FIELDS = set(hl7v2._FIELDS)


@settings(max_examples=fuzz_examples(150), deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(before=st.lists(other_segment, max_size=3), after=st.lists(other_segment, max_size=3),
       pid_fields=st.lists(field_text, min_size=1, max_size=22),
       end=st.sampled_from(["\r", "\n", "\r\n"]))
def test_only_the_cleaned_pid_fields_ever_change(before, after, pid_fields, end):
    pid_text = "|".join(["PID", *pid_fields])
    sent = message(MSH, *before, pid_text, *after, end=end)
    try:
        cleaned = run(sent)
    except InvalidInput:
        return
    sent_lines = re.split(r"(\r\n|\r|\n)", sent)
    out_lines = re.split(r"(\r\n|\r|\n)", cleaned.text)
    assert len(out_lines) == len(sent_lines)
    for old, new in zip(sent_lines, out_lines):
        if old.startswith("PID|"):
            old_fields, new_fields = old.split("|"), new.split("|")
            assert len(old_fields) == len(new_fields)
            for number, (a, b) in enumerate(zip(old_fields, new_fields)):
                assert a == b or number in CLEANED_FIELDS
        else:
            assert old == new


@settings(max_examples=fuzz_examples(150), deadline=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(pid_fields=st.lists(typed_field_text, min_size=1, max_size=22))
def test_a_cleaned_message_cleaned_again_is_unchanged(pid_fields):
    try:
        once = run(message(MSH, "|".join(["PID", *pid_fields])))
    except InvalidInput:
        return
    assert run(once.body).body == once.body


# --- HTTP -----------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def client():
    return create_app({"max_body_bytes": 64 * 1024}).test_client()


def post(client, body, media_type="application/hl7-v2", query="", **headers):
    return client.post(f"/v1/hl7v2/clean?reference_date={REFERENCE_DATE}{query}",
                       data=body, content_type=media_type, headers=headers)


@pytest.mark.parametrize("media_type", ["application/hl7-v2", "text/plain"])
def test_the_endpoint_answers_with_the_message(client, media_type):
    response = post(client, message(MSH, EVN, PID, PV1).encode(), media_type)
    assert response.status_code == 200
    assert response.headers["Content-Type"] == f"{media_type}; charset=utf-8"
    assert response.data == message(MSH, EVN, CLEAN_PID, PV1).encode()
    summary = response.headers["Cleaner-Summary"]
    assert summary.startswith("pid-segments=1, changes=")
    assert '"hl7v2.sex_written"' in summary and '"phones.fictional_range"' in summary
    assert "Accept" in response.headers["Vary"]


def test_the_json_sidecar(client, rules):
    response = post(client, message(MSH, PID).encode(), Accept="application/json")
    body = response.get_json()
    assert set(body) == {"message", "changes", "flags", "keys", "rules_version"}
    assert body["message"] == message(MSH, CLEAN_PID)
    assert body["rules_version"] == rules.version
    assert {"field": "PID[1]-8", "from": "female", "to": "F", "reason": "hl7v2.sex_written"} \
        in body["changes"]


def test_a_latin1_message_comes_back_in_latin1(client):
    header = MSH + "||||||8859/1"
    response = post(client, message(header, pid(f5="MUÑOZ^JOSÉ")).encode("iso-8859-1"))
    assert response.headers["Content-Type"] == "application/hl7-v2; charset=iso-8859-1"
    assert response.data == message(header, pid(f5="Muñoz^José")).encode("iso-8859-1")


def test_query_options_apply(client):
    response = post(client, pid(f7="03/04/1980").encode(), query="&date_order=DMY")
    assert field_of(response.data.decode(), 7) == "19800403"
    refused = post(client, pid(f7="03/04/1980").encode(), query="&order=DMY")
    assert refused.status_code == 422


@pytest.mark.parametrize("body, media_type, status", [
    (b"hello", "text/plain", 400), (MSH.encode(), "application/hl7-v2", 400),
    (PID.encode(), "application/json", 415),
    (pid(f5="Q" * 600).encode(), "application/hl7-v2", 422),
    (b"PID|" * 20_000, "text/plain", 413),
])
def test_errors_are_problem_details_that_quote_nothing(client, body, media_type, status):
    response = post(client, body, media_type)
    assert response.status_code == status
    assert response.mimetype == "application/problem+json"
    problem = response.get_json()
    assert problem["status"] == status and problem["detail"]
    assert b"QQQQ" not in response.data and b"hello" not in response.data


def test_no_patient_value_reaches_the_header_or_a_problem(client):
    def secret(family):
        return pid(f5=f"{family}^ZEPHYRINE^^^^^L", f7=SECRETS["birth_date"], f8=SECRETS["sex"],
                   f11=SECRETS["address"].replace(", ", "^"), f13=SECRETS["phone"] + "^PRN^PH",
                   f14=f"^NET^Internet^{SECRETS['email']}", f19=SECRETS["ssn"]).encode()
    answered = post(client, secret("QUILLFEATHER"))
    refused = post(client, secret("QUILLFEATHER" * 50))
    assert (answered.status_code, refused.status_code) == (200, 422)
    for text in (answered.headers["Cleaner-Summary"], refused.data.decode()):
        for fragment in secret_fragments():
            assert fragment.lower() not in text.lower()


@settings(max_examples=fuzz_examples(120), deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(body=st.binary(max_size=300) | st.builds(
    lambda head, rest: (head + rest).encode("utf-8", "surrogatepass"),
    st.sampled_from(["MSH|^~\\&", "MSH|^~\\&#", "PID|", "MSH$*!@%", "MSH|^~\\&|||||||||||||||"]),
    st.text(max_size=300)))
def test_no_body_gets_a_server_error(client, body):
    response = post(client, body)
    assert response.status_code in (200, 400, 413, 422)
