"""The memo of cleaned field values: an answer recalled from it is exactly the
answer cleaned afresh, and no caller can alter what the next one gets."""

from __future__ import annotations

import dataclasses
import datetime as dt
import pickle
import sys
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

import cleaner
from cleaner.engine import clean_record, default_rules
from cleaner.memo import FieldMemo, memo_key

sys.path.insert(0, str(Path(__file__).parent.parent / "bench"))
import corpus  # noqa: E402  (the benchmark's invented intake records)

OPTIONS = cleaner.Options(reference_date=dt.date(2026, 12, 2))

scalars = st.one_of(st.none(), st.text(max_size=40), st.integers(-10**12, 10**12),
                    st.floats(allow_nan=False, allow_infinity=False))
field_values = st.one_of(scalars, st.lists(scalars, max_size=3))
records = st.one_of(
    st.sampled_from(corpus.intake_records(300, seed=7)),
    st.fixed_dictionaries({}, optional={
        "name": scalars, "given": scalars, "family": scalars, "birth_date": scalars,
        "sex": scalars, "phone": field_values, "email": scalars, "ssn": scalars,
        "address": scalars, "city": scalars, "postal_code": scalars, "mrn": field_values}))


def fresh_rules(size: int = 64):
    """The default rules with a memo of their own (a copy of the book starts empty)."""
    rules = dataclasses.replace(default_rules())
    object.__setattr__(rules, "memo", FieldMemo(size))
    return rules


def cleaned_or_refused(record, rules):
    try:
        return clean_record(record, OPTIONS, rules)
    except cleaner.InvalidInput as refused:
        return refused.problems


@settings(max_examples=300, deadline=None)
@given(record=records)
def test_recalled_answers_equal_answers_cleaned_afresh(record):
    rules = fresh_rules()
    without_memo = fresh_rules(size=0)
    # The first time is cleaned, the second remembered, the third recalled.
    answers = [cleaned_or_refused(record, rules) for _ in range(3)]
    assert answers[0] == answers[1] == answers[2] == cleaned_or_refused(record, without_memo)


def test_an_edited_answer_does_not_change_the_next_one():
    rules = fresh_rules()
    record = {"name": "Rowan J Hartwell", "address": "12 OAK ST, Springfield, IL 62704"}
    first = [clean_record(record, OPTIONS, rules) for _ in range(2)][1]
    expected = clean_record(record, OPTIONS, fresh_rules(size=0))
    first["record"]["name"]["given"] = "edited"
    first["changes"].clear()
    first["keys"]["zip5"] = "00000"
    assert clean_record(record, OPTIONS, rules) == expected


def test_values_that_look_alike_are_kept_apart():
    keys = {memo_key("ssn", value, OPTIONS) for value in ("1", 1, 1.0, ["1"], None)}
    assert len(keys) == 5
    assert memo_key("sex", True, OPTIONS) is None   # refused by the record's shape check anyway
    assert memo_key("names", "Ann", OPTIONS) != memo_key(
        "names", "Ann", dataclasses.replace(OPTIONS, name_order="family_first"))


def test_the_memo_is_bounded_and_travels_empty():
    rules = fresh_rules(size=10)
    for record in corpus.intake_records(200, seed=8) * 2:
        clean_record(record, OPTIONS, rules)
    assert 0 < len(rules.memo) <= 10
    copied = pickle.loads(pickle.dumps(rules.memo))
    assert len(copied) == 0 and copied.size == 10
