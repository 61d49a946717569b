"""The table of name cases in tests/cases/names.toml: free text and parts,
read by their expected parts, flags, variants and match keys."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

CASES = tomllib.loads((Path(__file__).parent / "cases" / "names.toml").read_text("utf-8"))["case"]
NULL_BY_DEFAULT = ("prefix", "given", "middle", "family", "suffix", "nickname", "particles")


def test_the_table_is_large_and_its_ids_unique():
    assert len(CASES) >= 150
    assert len({case["id"] for case in CASES}) == len(CASES)


@pytest.mark.parametrize("case", CASES, ids=[case["id"] for case in CASES])
def test_name_case(clean, case):
    record = {"name": case["name"]} if "name" in case else dict(case["parts"])
    options = {"name_order": case["order"]} if "order" in case else {}
    body = clean(record, **options)
    name = body["record"]["name"]
    expected = dict.fromkeys(NULL_BY_DEFAULT) | {"credentials": [], "placeholder": False}
    expected |= case["expect"]
    if "alternatives" in expected:  # TOML has no null: a part not listed is null
        expected["alternatives"] = [dict.fromkeys(("given", "middle", "family")) | alternative
                                    for alternative in expected["alternatives"]]
    assert {key: name.get(key) for key in expected} == expected
    flags = {flag["code"] for flag in body["flags"] if flag["code"].startswith("names.")}
    assert flags == set(case["flags"])
    assert set(case.get("variants", [])) <= set(name["given_variants"])
    assert {key: body["keys"].get(key) for key in case.get("keys", {})} == case.get("keys", {})
