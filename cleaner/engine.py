"""Cleans one record: runs each field kind on its keys and assembles the
response body of `POST /v1/clean`, the same for the API, the CLI and batches."""

from __future__ import annotations

import functools
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from marshmallow import Schema, fields, validate

from cleaner import addresses, dates, email, names, phones, sex, ssn, text
from cleaner.fieldkind import FieldKind
from cleaner.options import InvalidInput, Options, read_options
from cleaner.rules import LoadContext, RuleBook, default_directory, load
from cleaner.trail import Trail

# The order of the response's `record` keys.
KINDS: tuple[FieldKind, ...] = (names.KIND, dates.KIND, sex.KIND, phones.KIND, email.KIND,
                                ssn.KIND, addresses.KIND)
KNOWN_KEYS = frozenset(key for kind in KINDS for key in kind.input_keys)
_SCALARS = (str, int, float)


@dataclass(frozen=True)
class RecordRules:
    # Every value a field kind reads is bounded, so that no one record can hold
    # a worker for long; a longer value is refused, never cut.
    max_field_chars: int


_RecordRulesSchema = Schema.from_dict({
    "max_field_chars": fields.Integer(required=True, strict=True,
                                      validate=validate.Range(min=80, max=100_000)),
})


def _record_rules(data: dict[str, Any], context: LoadContext) -> RecordRules:
    return RecordRules(**context.validated(_RecordRulesSchema(), data))


def load_rules(directory: Path | str | None = None) -> RuleBook:
    # The batch and format modules read records through this one, so they are
    # imported here, not above.
    from cleaner import batch
    from cleaner.formats import fhir, hl7v2
    compilers = {"text": text.compile_rules, "record": _record_rules, "batch": batch.compile_rules,
                 "fhir": fhir.compile_rules, "hl7v2": hl7v2.compile_rules}
    compilers.update((kind.name, kind.compile_rules) for kind in KINDS)
    return load(Path(directory) if directory else default_directory(), compilers)


@functools.cache
def default_rules() -> RuleBook:
    """The rules named by CLEANER_RULES_DIR, else the embedded ones; read once."""
    return load_rules(os.environ.get("CLEANER_RULES_DIR"))


def _shape_problems(key: str, value: Any, accepts_list: bool,
                    max_chars: int) -> list[tuple[str, str]]:
    if accepts_list and isinstance(value, list):
        return [problem for index, item in enumerate(value)
                for problem in _item_problems(f"/record/{key}/{index}", item, max_chars)]
    if value is None or _is_scalar(value):
        return _item_problems(f"/record/{key}", value, max_chars)
    return [(f"/record/{key}", "must be a string, a number or a list of them" if accepts_list
             else "must be a string or a number")]


def _item_problems(pointer: str, item: Any, max_chars: int) -> list[tuple[str, str]]:
    if item is not None and not _is_scalar(item):
        return [(pointer, "must be a string or a number")]
    if isinstance(item, str) and len(item) > max_chars:
        return [(pointer, f"is longer than {max_chars} characters")]
    return []


def _is_scalar(value: Any) -> bool:
    return isinstance(value, _SCALARS) and not isinstance(value, bool)


def _check_shape(record: Any, max_chars: int) -> None:
    if not isinstance(record, Mapping):
        raise InvalidInput([("/record", "must be an object")])
    if all(value is None or (type(value) is str and len(value) <= max_chars)
           for key, value in record.items() if key in KNOWN_KEYS):
        return   # the usual record: strings within the limit, and nulls
    problems = [problem for kind in KINDS for key in kind.input_keys if key in record
                for problem in _shape_problems(key, record[key], kind.accepts_list, max_chars)]
    if problems:
        raise InvalidInput(problems)


def clean_record(record: Mapping[str, Any], options: Options, rules: RuleBook) -> dict[str, Any]:
    _check_shape(record, rules["record"].max_field_chars)
    cleaned: dict[str, Any] = {}
    keys: dict[str, Any] = {}
    trails: list[Trail] = []
    for kind in KINDS:
        present = [key for key in kind.input_keys if key in record]
        if not present:
            continue
        raw = record[present[0]] if len(kind.input_keys) == 1 else {k: record[k] for k in present}
        if raw is None:
            cleaned[kind.output_key] = None
            continue
        outcome = kind.clean(raw, options, rules)
        cleaned[kind.output_key] = outcome.value
        keys.update(outcome.keys)
        trails += outcome.trails
    extra = {key: value for key, value in record.items() if key not in KNOWN_KEYS}
    if extra:
        cleaned["extra"] = extra
        for key, value in extra.items():
            trail = Trail(f"extra.{key}", value, rules.reasons)
            trail.flag("record.unknown_key")
            trails.append(trail)
    return {
        "record": cleaned,
        "keys": keys,
        "changes": [change for trail in trails for change in trail.changes],
        "flags": [flag for trail in trails for flag in trail.flags],
        "rules_version": rules.version,
    }


def clean(record: Mapping[str, Any], options: Mapping[str, Any] | Options | None = None,
          *, rules: RuleBook | None = None, defaults: Options | None = None) -> dict[str, Any]:
    """Clean one record; returns exactly the JSON body of `POST /v1/clean`.

    Raises InvalidInput when the record or the options are not the contract's shape.
    """
    return clean_record(record, read_options(options, defaults), rules or default_rules())
