"""Micro-benchmark of the name step: cleaner's names field against the bare
nameparser parse, on the same seeded corpus. Prints one table; run with
`make bench`."""

from __future__ import annotations

import sys
import time
from pathlib import Path

from nameparser import HumanName

sys.path.insert(0, str(Path(__file__).parent))
import corpus  # noqa: E402

import cleaner  # noqa: E402
from cleaner.engine import default_rules  # noqa: E402
from cleaner.names import clean_name  # noqa: E402

RECORDS = 20_000
ROUNDS = 5


def per_record_us(run, values) -> float:
    """The best over rounds of the mean time per value, in microseconds: the
    least disturbed round, as timeit reports."""
    timings = []
    for _ in range(ROUNDS):
        start = time.perf_counter()
        for value in values:
            run(value)
        timings.append((time.perf_counter() - start) / len(values) * 1e6)
    return min(timings)


def main() -> None:
    values = corpus.names(RECORDS)
    rules = default_rules()
    options = cleaner.Options()
    distinct = list(dict.fromkeys(values))
    rows = [
        ("bare nameparser: HumanName(text)", per_record_us(HumanName, values)),
        ("cleaner names step (clean_name)", per_record_us(
            lambda value: clean_name(value, options, rules), values)),
        ("cleaner.clean({'name': text})", per_record_us(
            lambda value: cleaner.clean({"name": value}, options, rules=rules), values)),
        ("cleaner names step, distinct values only", per_record_us(
            lambda value: clean_name(value, options, rules), distinct)),
    ]
    print(f"name step, {RECORDS} invented names ({len(distinct)} distinct), "
          f"best of {ROUNDS} rounds, one core")
    print(f"{'pipeline':44} {'µs/name':>9} {'names/s':>9} {'vs bare':>8}")
    bare = rows[0][1]
    for label, micros in rows:
        print(f"{label:44} {micros:9.1f} {1e6 / micros:9.0f} {bare / micros:7.2f}x")


if __name__ == "__main__":
    main()
