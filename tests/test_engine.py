"""The engine: record shape, unknown keys, the trail, and the rules loader."""

from __future__ import annotations


import pytest

import cleaner
from cleaner import engine
from conftest import edit_rules
from cleaner.rules import DigitRanges, RulesError
from cleaner.trail import Trail, UnknownReason


def test_unknown_keys_come_back_untouched_under_extra(clean):
    nested = {"mrn": "A-0042", "notes": [1, {"x": None}]}
    body = clean({"sex": "F", **nested})
    assert body["record"]["extra"] == nested
    flagged = {f["field"]: f for f in body["flags"]}
    assert flagged["extra.mrn"]["code"] == "record.unknown_key"
    assert flagged["extra.mrn"]["severity"] == "info"
    assert set(flagged) == {"extra.mrn", "extra.notes"}


def test_fields_not_sent_are_absent_and_null_stays_null(clean):
    body = clean({"sex": None})
    assert body["record"] == {"sex": None}
    assert body["changes"] == [] and body["flags"] == []


def test_blank_value_becomes_null_with_a_reason(clean):
    body = clean({"email": "   "})
    assert body["record"]["email"] is None
    assert [c["reason"] for c in body["changes"]] == ["text.whitespace_folded", "text.blank_cleared"]


@pytest.mark.parametrize("record, pointer", [
    ([], "/record"),
    ({"sex": {"code": "F"}}, "/record/sex"),
    ({"ssn": True}, "/record/ssn"),
    ({"phone": ["(217) 555-0142", ["x"]]}, "/record/phone/1"),
    ({"email": ["a@b.org"]}, "/record/email"),
])
def test_wrong_shapes_raise_with_a_pointer(record, pointer):
    with pytest.raises(cleaner.InvalidInput) as caught:
        cleaner.clean(record)
    assert [p for p, _ in caught.value.problems] == [pointer]


LIMIT = 512   # rules/record.toml max_field_chars


@pytest.mark.parametrize("record, pointer", [
    ({"name": "Odalys " * 80}, "/record/name"),
    ({"address": "1" * (LIMIT + 1)}, "/record/address"),
    ({"family": "Q" * (LIMIT + 1), "given": "Odalys"}, "/record/family"),
    ({"phone": ["(217) 555-0142", "5" * (LIMIT + 1)]}, "/record/phone/1"),
    ({"email": "r" * LIMIT + "@example.org"}, "/record/email"),
])
def test_a_value_over_the_field_limit_is_refused_never_cut(record, pointer):
    with pytest.raises(cleaner.InvalidInput) as caught:
        cleaner.clean(record)
    assert caught.value.problems == [(pointer, f"is longer than {LIMIT} characters")]


def test_a_value_at_the_field_limit_is_cleaned_and_unknown_keys_are_not_limited():
    body = cleaner.clean({"ssn": "1" * LIMIT, "chart_note": "x" * (LIMIT * 4)})
    assert body["record"]["ssn"]["valid"] is False
    assert body["record"]["extra"]["chart_note"] == "x" * (LIMIT * 4)


def test_the_field_limit_is_a_rule(rules_copy):
    edit_rules(rules_copy, "record.toml", "max_field_chars = 512", "max_field_chars = 100")
    narrow = engine.load_rules(rules_copy)
    with pytest.raises(cleaner.InvalidInput):
        cleaner.clean({"name": "Odalys Ravensworth " * 6}, rules=narrow)
    edit_rules(rules_copy, "record.toml", "max_field_chars = 100", "max_field_chars = 5")
    with pytest.raises(RulesError, match="max_field_chars"):
        engine.load_rules(rules_copy)


def test_options_are_checked(clean):
    with pytest.raises(cleaner.InvalidInput) as caught:
        cleaner.clean({}, {"date_order": "XYZ", "country": "ZZ", "colour": "red"})
    assert sorted(p for p, _ in caught.value.problems) == [
        "/options", "/options/country", "/options/date_order"]
    assert "colour" not in str(caught.value)


def test_response_has_the_contract_members(clean):
    body = clean({"sex": "m"})
    assert list(body) == ["record", "keys", "changes", "flags", "rules_version"]
    assert body["rules_version"] == engine.default_rules().version


def test_the_text_step_records_each_repair(clean):
    body = clean({"email": "\u200bJos\u0065\u0301@Example.org\t\t"})
    reasons = [c["reason"] for c in body["changes"]]
    assert reasons == ["text.invisible_removed", "text.unicode_composed",
                       "text.whitespace_folded", "email.domain_lowercased"]
    assert body["record"]["email"]["value"] == "Jos\u00e9@example.org"


def test_a_trail_replays_from_raw_to_final(rules):
    trail = Trail("x", " a ", rules.reasons)
    trail.apply("a", "text.whitespace_folded")
    trail.apply("a", "text.whitespace_folded")  # no change, no entry
    trail.apply(None, "text.blank_cleared")
    assert [(c["from"], c["to"]) for c in trail.changes] == [(" a ", "a"), ("a", None)]
    assert trail.revert() == " a " and trail.changes == []


def test_a_trail_refuses_codes_the_rules_do_not_list(rules):
    trail = Trail("x", "a", rules.reasons)
    with pytest.raises(UnknownReason):
        trail.apply("b", "text.not_a_code")
    with pytest.raises(UnknownReason):
        trail.flag("text.whitespace_folded")  # a change code used as a flag


def test_digit_ranges():
    ranges = DigitRanges.parse(["000", "900-999"], "test")
    assert "000" in ranges and "950" in ranges and "899" not in ranges and "0000" not in ranges
    with pytest.raises(RulesError):
        DigitRanges.parse(["9-99"], "test")


def test_rules_version_changes_with_any_table(rules_copy):
    before = engine.load_rules(rules_copy).version
    with (rules_copy / "sex_codes.csv").open("a", encoding="utf-8") as table:
        table.write("femme,female,,common practice (French)\n")
    after = engine.load_rules(rules_copy)
    assert after.version != before and after.version.split("+")[0] == before.split("+")[0]
    assert cleaner.clean({"sex": "FEMME"}, rules=after)["record"]["sex"]["value"] == "female"


@pytest.mark.parametrize("file, text, message", [
    ("sex_codes.csv", "x,martian,,nowhere\n", "value"),
    ("sex_codes.csv", "zz,male,sex.no_such_flag,common practice\n", "unlisted codes"),
    ("ssn.toml", "\n[[reasons]]\ncode = \"ssn.extra\"\nkind = \"flag\"\n"
                 "description = \"A flag without a severity.\"\nsource = \"test\"\n", "severity"),
    ("text.toml", "\n[[reasons]]\ncode = \"sex.misplaced\"\nkind = \"change\"\n"
                  "description = \"Listed in the wrong file.\"\nsource = \"test\"\n", "must start"),
    ("record.toml", "[surprise]\nkey = 1\n", "Unknown field"),
    ("record.toml", "surprise = 1\n", "Unknown field"),
])
def test_broken_rules_stop_start_up(rules_copy, file, text, message):
    with (rules_copy / file).open("a", encoding="utf-8") as table:
        table.write(text)
    with pytest.raises(RulesError, match=message):
        engine.load_rules(rules_copy)


def test_unclaimed_and_missing_rule_files_are_errors(rules_copy):
    (rules_copy / "typo.toml").write_text("")
    with pytest.raises(RulesError, match="typo"):
        engine.load_rules(rules_copy)
    (rules_copy / "typo.toml").unlink()
    (rules_copy / "email.toml").unlink()
    with pytest.raises(RulesError, match="email.toml"):
        engine.load_rules(rules_copy)
