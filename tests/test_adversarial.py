"""No value can hold a worker: every field kind, given values up to the field
limit built to make a backtracking regular expression try every way to split
them (long runs of one sign, repeated words the rules know, an ending that
fails), answers in milliseconds. A catastrophic pattern would take seconds to
years on these; the bound here is a hundred times the slowest seen."""

from __future__ import annotations

import contextlib
import signal
import time

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import cleaner
from cleaner.engine import KNOWN_KEYS, default_rules

RULES = default_rules()
LIMIT = RULES["record"].max_field_chars
# The record's limit, and each kind's own, past which it keeps a value as sent
# without reading it: the longest values each kind's patterns really run on.
LENGTHS = sorted({LIMIT, RULES["names"].max_length, RULES["addresses"].max_length,
                  RULES["dates"].max_length, 40})
SECONDS = 1.0   # for one whole record; the slowest value here took 15 ms

# Signs and words the tables and patterns of each kind give meaning to.
PIECES = ["a", "A", "1", " ", "-", ".", ",", "/", "#", "'", "(", ")", "@", "+", "é", "\t",
          "0", "x", "a.", "a-", "1-", "1/", "12 ", "a ", "aa@", "a.b", "(1)", "ext ", "apt ",
          "po box ", "jr ", "de ", "van der ", "o'", "mc", "n ", "st ", "rd, ", "1st ", "#1 ",
          "555", "+1 ", "1/1/", "2024-", "march ", "1e", "\u200b", "Ⅳ ", "\"a\" "]
ENDINGS = ["", "!", " x"]


@contextlib.contextmanager
def deadline(seconds: float):
    """Fail, rather than hang, if the block runs longer than `seconds`."""
    def expired(*_):
        raise TimeoutError(f"took longer than {seconds} s")
    previous = signal.signal(signal.SIGALRM, expired)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def _run_at_most(record: dict) -> float:
    started = time.perf_counter()
    with deadline(SECONDS * 5):
        try:
            cleaner.clean(record, {"reference_date": "2026-12-02"})
        except cleaner.InvalidInput:
            pass
    return time.perf_counter() - started


def _filled(piece: str, length: int, ending: str) -> str:
    return (piece * (length // len(piece) + 1))[:length - len(ending)] + ending


@pytest.mark.parametrize("piece", PIECES)
def test_long_runs_of_meaningful_signs_are_answered_quickly(piece):
    slowest = max(_run_at_most({key: _filled(piece, length, ending)})
                  for key in sorted(KNOWN_KEYS) for length in LENGTHS for ending in ENDINGS)
    assert slowest < SECONDS


@settings(max_examples=150, deadline=None)
@given(value=st.text(alphabet=st.sampled_from("a1 -.,/#'()@+é\tx0"), min_size=LIMIT // 2,
                     max_size=LIMIT),
       key=st.sampled_from(sorted(KNOWN_KEYS)))
def test_random_long_values_of_meaningful_signs_are_answered_quickly(value, key):
    assert _run_at_most({key: value}) < SECONDS
