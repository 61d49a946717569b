"""US Social Security Numbers."""

from __future__ import annotations

import pytest

from conftest import field_codes


def ssn_of(clean, value):
    body = clean({"ssn": value})
    return body["record"]["ssn"], field_codes(body, "ssn")[1], body["keys"]


@pytest.mark.parametrize("value", ["219 45 0172", "219-45-0172", "219.45.0172", "219450172",
                                   " 219 - 45 - 0172 ", 219450172])
def test_separators_go_and_nine_digits_stay(clean, value):
    record, flags, keys = ssn_of(clean, value)
    assert record == {"value": "219450172", "valid": True} and flags == []
    assert keys == {"ssn": "219450172", "ssn_last4": "0172"}


# Source: SSA, "Social Security Number Randomization" FAQ: area numbers 000, 666
# and 900-999, group 00 and serial 0000 are never assigned.
@pytest.mark.parametrize("value", ["000-45-0172", "666-45-0172", "921-45-0172", "999-45-0172",
                                   "219-00-0172", "219-45-0000"])
def test_never_issued_numbers_are_invalid(clean, value):
    record, flags, keys = ssn_of(clean, value)
    assert record["valid"] is False and flags == ["ssn.never_issued"] and keys == {}


# Source: SSA randomization FAQ: since 2011 formerly unassigned areas (e.g. 734-749,
# above 772) are issued, so only the structural rules are applied.
@pytest.mark.parametrize("value", ["734-45-0172", "899-45-0172", "665-45-0172", "667-45-0172"])
def test_areas_opened_by_randomisation_are_valid(clean, value):
    assert ssn_of(clean, value)[0]["valid"] is True


def test_itin_shaped_numbers_are_noted(clean):
    """IRS ITINs: area 9xx with groups 50-65, 70-88, 90-92, 94-99 (from memory)."""
    record, flags, _ = ssn_of(clean, "912-70-0172")
    assert record["valid"] is False and flags == ["ssn.itin_shaped"]


@pytest.mark.parametrize("value", ["123-45-6789", "111-11-1111", "222222222", "078-05-1120",
                                   "219-09-9999", "123-12-1234"])
def test_placeholders_need_review_and_stay_out_of_keys(clean, value):
    """Common practice; 078-05-1120 and 219-09-9999 from SSA's history of misused numbers."""
    record, flags, keys = ssn_of(clean, value)
    assert "ssn.placeholder" in flags and keys == {}


def test_advertising_numbers_are_placeholders_of_itin_shape(clean):
    """987-65-4320..4329: SSA's advertising numbers (from memory)."""
    assert ssn_of(clean, "987-65-4321")[1] == ["ssn.itin_shaped", "ssn.placeholder"]


def test_look_alike_letters_are_repaired_for_review(clean):
    body = clean({"ssn": "2l9-45-O172"})
    assert body["record"]["ssn"] == {"value": "219450172", "valid": True}
    assert [c["reason"] for c in body["changes"]] == ["ssn.separators_removed",
                                                      "text.digit_lookalikes_repaired"]
    assert field_codes(body, "ssn")[1] == ["text.digit_lookalikes"]


def test_a_number_that_lost_its_leading_zeros_gets_them_back(clean):
    record, flags, _ = ssn_of(clean, 12450172)
    assert record["value"] == "012450172" and flags == ["ssn.leading_zeros"]


@pytest.mark.parametrize("value", ["12345", "219-45-01723", "SSN on file", "219-45-O17X"])
def test_malformed_values_are_returned_as_sent(clean, value):
    body = clean({"ssn": value})
    assert body["record"]["ssn"] == {"value": value, "valid": False}
    assert body["changes"] == [] and field_codes(body, "ssn")[1] == ["ssn.malformed"]
