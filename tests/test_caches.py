"""Every cache of the field modules is a fast path: an answer given from warm
caches must be exactly the answer of a cold reading."""

from __future__ import annotations

import datetime as dt
import importlib
import pkgutil
import sys
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

import cleaner
from cleaner import addresses, dates, names, phones
from cleaner.engine import clean_record, default_rules

sys.path.insert(0, str(Path(__file__).parent.parent / "bench"))
import corpus  # noqa: E402  (the benchmark's invented intake records)

# A field kind grown into a package of stage modules keeps its caches in them.
STAGES = [importlib.import_module(f"{package.__name__}.{found.name}")
          for package in (names, addresses) for found in pkgutil.iter_modules(package.__path__)]
VALUE_CACHES = [member for module in (names, addresses, *STAGES, phones, dates)
                for member in vars(module).values() if hasattr(member, "cache_clear")]
OPTIONS = cleaner.Options(reference_date=dt.date(2026, 12, 2))

# Pieces the corpus writes, shuffled into new values so that warm caches meet
# both known and unknown words.
pieces = st.sampled_from([piece for record in corpus.intake_records(200, seed=9)
                          for value in record.values() for piece in value.split()])
mixed = st.lists(st.one_of(pieces, st.text(max_size=8)), max_size=6).map(" ".join)
records = st.one_of(
    st.sampled_from(corpus.intake_records(300, seed=10)),
    st.fixed_dictionaries({}, optional={key: mixed for key in (
        "name", "given", "family", "birth_date", "sex", "phone", "address", "city")}))


def test_the_field_modules_caches_are_found():
    assert {cache.__name__ for cache in VALUE_CACHES} >= {
        "_word_stages", "_part_stages", "_street_and_units", "read_digits"}


@settings(max_examples=300, deadline=None)
@given(batch=st.lists(records, min_size=1, max_size=4))
def test_warm_caches_give_the_answers_of_a_cold_reading(batch):
    rules = default_rules()
    warm = [clean_record(record, OPTIONS, rules) for record in batch * 2][len(batch):]
    for cache in VALUE_CACHES:
        cache.cache_clear()
    assert [clean_record(record, OPTIONS, rules) for record in batch] == warm
