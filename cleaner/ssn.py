"""US Social Security Numbers: nine digits, checked against the SSA's
never-issued rules and the placeholder numbers seen at registration desks."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from marshmallow import Schema, fields

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import DigitRanges, LoadContext, RuleBook, string_lists
from cleaner.trail import Trail

SSN_DIGITS = 9


@dataclass(frozen=True)
class SsnRules:
    separators: str
    never_issued_areas: DigitRanges
    never_issued_groups: DigitRanges
    never_issued_serials: DigitRanges
    itin_areas: DigitRanges
    itin_groups: DigitRanges
    placeholders: DigitRanges
    repeated_digit_is_placeholder: bool


_SsnRulesSchema = Schema.from_dict({
    "separators": fields.String(required=True),
    "repeated_digit_is_placeholder": fields.Boolean(required=True),
    **string_lists("never_issued_areas", "never_issued_groups", "never_issued_serials",
                   "itin_areas", "itin_groups", "placeholders")})


def compile_rules(data: dict[str, Any], context: LoadContext) -> SsnRules:
    loaded = context.validated(_SsnRulesSchema(), data)
    ranges = {key: DigitRanges.parse(value, f"ssn.toml {key}")
              for key, value in loaded.items() if isinstance(value, list)}
    return SsnRules(separators=loaded["separators"],
                    repeated_digit_is_placeholder=loaded["repeated_digit_is_placeholder"],
                    **ranges)


def _never_issued(digits: str, rules: SsnRules) -> bool:
    return (digits[:3] in rules.never_issued_areas or digits[3:5] in rules.never_issued_groups
            or digits[5:] in rules.never_issued_serials)


def _placeholder(digits: str, rules: SsnRules) -> bool:
    return digits in rules.placeholders or (
        rules.repeated_digit_is_placeholder and len(set(digits)) == 1)


def clean_ssn(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    trail = Trail("ssn", raw, rules.reasons)
    ssn_rules: SsnRules = rules["ssn"]
    sent_as_number = isinstance(raw, int)
    value = text.tidy(trail)
    if value is None:
        return Outcome(None, [trail])
    value = trail.apply(value.translate({ord(ch): None for ch in ssn_rules.separators}),
                        "ssn.separators_removed")
    if rules["text"].lookalike_digits(value):
        value = text.repair_digit_lookalikes(trail, value, rules["text"])
    if sent_as_number and value.isdigit() and len(value) < SSN_DIGITS:
        value = trail.apply(value.zfill(SSN_DIGITS), "ssn.leading_zeros_restored")
        trail.flag("ssn.leading_zeros")
    if not (value.isascii() and value.isdigit() and len(value) == SSN_DIGITS):
        trail.flag("ssn.malformed")
        return Outcome({"value": trail.revert(), "valid": False}, [trail])

    valid = True
    if value[:3] in ssn_rules.itin_areas and value[3:5] in ssn_rules.itin_groups:
        trail.flag("ssn.itin_shaped")
        valid = False
    elif _never_issued(value, ssn_rules):
        trail.flag("ssn.never_issued")
        valid = False
    placeholder = _placeholder(value, ssn_rules)
    if placeholder:
        trail.flag("ssn.placeholder")
    keys = {"ssn": value, "ssn_last4": value[5:]} if valid and not placeholder else {}
    return Outcome({"value": value, "valid": valid}, [trail], keys)


KIND = FieldKind(name="ssn", input_keys=("ssn",), output_key="ssn", clean=clean_ssn,
                 compile_rules=compile_rules)
