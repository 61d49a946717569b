"""Sex: any code or word a registration system sends, as an HL7 FHIR
AdministrativeGender code. The vocabulary is the table in rules/."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from marshmallow import Schema, fields, validate

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook, RulesError
from cleaner.trail import Trail

GENDER_CODES = ("male", "female", "other", "unknown")


@dataclass(frozen=True)
class GenderMapping:
    value: str
    flag: str


class _RowSchema(Schema):
    input = fields.String(required=True, validate=validate.Length(min=1))
    value = fields.String(required=True, validate=validate.OneOf(GENDER_CODES))
    flag = fields.String(load_default="")
    source = fields.String(required=True, validate=validate.Length(min=3))


def compile_rules(data: dict[str, Any], context: LoadContext) -> dict[str, GenderMapping]:
    rows = context.read_csv(data["table"])
    table: dict[str, GenderMapping] = {}
    for number, row in enumerate(rows, start=1):
        entry = context.validated(_RowSchema(), row, f" {data['table']} row {number}")
        key = text.fold(entry["input"])
        if key in table:
            raise RulesError(f"sex: {data['table']} lists {key!r} twice")
        context.require_codes([entry["flag"]], f"{data['table']} row {number}")
        table[key] = GenderMapping(entry["value"], entry["flag"])
    return table


def clean_sex(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    trail = Trail("sex", raw, rules.reasons)
    word = text.tidy(trail)
    if word is None:
        return Outcome(None, [trail])
    mapping = rules["sex"].get(text.fold(word))
    if mapping is None:
        trail.flag("sex.unrecognised")
        return Outcome({"value": trail.revert(), "valid": False}, [trail])
    trail.apply(mapping.value, "sex.coded")
    if mapping.flag:
        trail.flag(mapping.flag)
    keys = {"sex": mapping.value} if mapping.value != "unknown" else {}
    return Outcome({"value": mapping.value, "valid": True}, [trail], keys)


KIND = FieldKind(name="sex", input_keys=("sex",), output_key="sex", clean=clean_sex,
                 compile_rules=compile_rules)
