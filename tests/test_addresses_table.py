"""The table of address cases in tests/cases/addresses.toml: one-line and
parts, read by their expected parts, kind, components, flags and match keys."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

CASES = tomllib.loads((Path(__file__).parent / "cases" / "addresses.toml").read_text("utf-8"))["case"]
NULL_BY_DEFAULT = ("line1", "line2", "city", "state", "postal_code", "other_text", "urbanization")
# An alternative where the street ends and the city begins has these members;
# the reading not kept when the rule and tagger readings differ has all five.
BOUNDARY_ALTERNATIVE = ("line1", "city")
OTHER_READING = ("line1", "line2", "city", "state", "postal_code")


def test_the_table_is_large_and_its_ids_unique():
    assert len(CASES) >= 150
    assert len({case["id"] for case in CASES}) == len(CASES)


@pytest.mark.parametrize("case", CASES, ids=[case["id"] for case in CASES])
def test_address_case(clean, case):
    record = {"address": case["address"]} if "address" in case else dict(case["parts"])
    body = clean(record, **case.get("options", {}))
    address = body["record"]["address"]
    expected = dict.fromkeys(NULL_BY_DEFAULT) | {"country": "US", "kind": "street",
                                                  "placeholder": False}
    expected |= case["expect"]
    if "alternatives" in expected:  # TOML has no null: a member not listed is null
        other_reading = "addresses.readings_differ" in case["flags"]
        expected["alternatives"] = [
            dict.fromkeys(OTHER_READING if other_reading else BOUNDARY_ALTERNATIVE) | alternative
            for alternative in expected["alternatives"]]
    assert {key: address.get(key) for key in expected} == expected
    if "components" in case:
        assert address["components"] == case["components"]
    flags = {flag["code"] for flag in body["flags"] if flag["code"].startswith("addresses.")}
    assert flags == set(case["flags"])
    assert {key: body["keys"].get(key) for key in case.get("keys", {})} == case.get("keys", {})
