"""Sex: codes and words read as HL7 FHIR AdministrativeGender."""

from __future__ import annotations

import pytest

from conftest import field_codes
from reference import table


def sex_of(clean, value):
    return clean({"sex": value})["record"]["sex"]


# Source: HL7 FHIR R4 AdministrativeGender value set (tests/reference).
@pytest.mark.parametrize("row", table("fhir_administrative_gender.csv"), ids=lambda r: r["code"])
def test_fhir_codes_and_displays_read_as_themselves(clean, row):
    assert sex_of(clean, row["code"]) == {"value": row["code"], "valid": True}
    assert sex_of(clean, row["display"].upper())["value"] == row["code"]


# Source: HL7 v2 Table 0001 and the FHIR concept map to it (tests/reference).
@pytest.mark.parametrize("row", table("hl7_v2_table_0001.csv"), ids=lambda r: r["code"])
def test_hl7_v2_table_0001(clean, row):
    assert sex_of(clean, row["code"])["value"] == row["fhir"]
    assert sex_of(clean, row["code"].lower())["value"] == row["fhir"]


# Source: ISO/IEC 5218:2004 (tests/reference); digits may arrive as JSON numbers.
@pytest.mark.parametrize("row", table("iso_iec_5218.csv"), ids=lambda r: r["code"])
def test_iso_iec_5218_digits(clean, row):
    assert sex_of(clean, row["code"])["value"] == row["fhir"]
    assert sex_of(clean, int(row["code"]))["value"] == row["fhir"]


@pytest.mark.parametrize("word, code", [
    ("Masculino", "male"), ("FEMENINO", "female"), ("Mujer", "female"), ("hombre", "male"),
    ("Varón", "male"), ("niña", "female"), ("Desconocido", "unknown"), ("otro", "other"),
    ("Woman", "female"), ("non-binary", "other"), ("  f  ", "female"),
])
def test_words_in_english_and_spanish(clean, word, code):
    """Common practice (no source): the words registration staff type."""
    assert sex_of(clean, word)["value"] == code


def test_a_change_says_why(clean):
    body = clean({"sex": "F"})
    assert body["changes"] == [{"field": "sex", "from": "F", "to": "female", "reason": "sex.coded"}]
    assert body["keys"] == {"sex": "female"}


def test_unknown_is_kept_out_of_the_match_keys(clean):
    assert clean({"sex": "U"})["keys"] == {}


def test_not_applicable_and_ambiguous_are_noted(clean):
    assert field_codes(clean({"sex": "9"}), "sex")[1] == ["sex.not_applicable"]
    assert field_codes(clean({"sex": "A"}), "sex")[1] == ["sex.ambiguous_widened"]


@pytest.mark.parametrize("value", ["Q", " xyz ", 7, "male female"])
def test_unmapped_values_are_returned_as_sent_and_flagged(clean, value):
    body = clean({"sex": value})
    assert body["record"]["sex"] == {"value": value, "valid": False}
    assert body["changes"] == []
    assert [(f["code"], f["severity"]) for f in body["flags"]] == [("sex.unrecognised", "invalid")]
