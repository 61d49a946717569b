"""Birth dates (being written)."""

from __future__ import annotations

from typing import Any

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook
from cleaner.trail import Trail


def compile_rules(data: dict[str, Any], context: LoadContext) -> dict[str, Any]:
    return data


def clean_birth_date(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    trail = Trail("birth_date", raw, rules.reasons)
    value = text.tidy(trail)
    return Outcome(None if value is None else {"value": value}, [trail])


KIND = FieldKind(name="dates", input_keys=("birth_date",), output_key="birth_date",
                 clean=clean_birth_date, compile_rules=compile_rules)
