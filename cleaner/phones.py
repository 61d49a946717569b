"""Phone numbers (being written)."""

from __future__ import annotations

from typing import Any

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook
from cleaner.trail import Trail


def compile_rules(data: dict[str, Any], context: LoadContext) -> dict[str, Any]:
    return data


def clean_phones(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    trail = Trail("phones[0]", raw, rules.reasons)
    value = text.tidy(trail)
    return Outcome([] if value is None else [{"e164": None, "raw": value}], [trail])


KIND = FieldKind(name="phones", input_keys=("phone",), output_key="phones",
                 clean=clean_phones, compile_rules=compile_rules, accepts_list=True)
