"""Micro-benchmark of the field steps that stand on a parsing library: each
cleaner step against the bare library call, on the same seeded corpus of
invented values. Prints one table; run with `make bench`."""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from pathlib import Path

import usaddress
from nameparser import HumanName

sys.path.insert(0, str(Path(__file__).parent))
sys.path.insert(0, str(Path(__file__).parent.parent / "tests"))
import corpus  # noqa: E402
import labelled  # noqa: E402  (the scorer of tests/test_addresses_opendata.py)
import labelled_names  # noqa: E402  (the scorer of tests/test_names_opendata.py)
from test_addresses_opendata import REVIEWED  # noqa: E402
from test_names_opendata import REVIEWED as REVIEWED_NAMES  # noqa: E402

import cleaner  # noqa: E402
from cleaner.addresses import clean_address  # noqa: E402
from cleaner.engine import default_rules  # noqa: E402
from cleaner.names import clean_name  # noqa: E402

RECORDS = 20_000
ROUNDS = 5


def per_value_us(run: Callable, draws: list[list]) -> float:
    """The best over rounds of the mean time per value, in microseconds: the
    least disturbed round, as timeit reports. Each round takes a fresh draw,
    so a cache meets a value again only as often as the corpus repeats it."""
    timings = []
    for values in draws:
        start = time.perf_counter()
        for value in values:
            run(value)
        timings.append((time.perf_counter() - start) / len(values) * 1e6)
    return min(timings)


def bare_usaddress(value: str) -> None:
    try:
        usaddress.tag(value)
    except usaddress.RepeatedLabelError:
        pass


def city_accuracy(lines: list[tuple[str, str]], rules, options) -> tuple[float, float, float]:
    """Share of lines without commas whose city comes out right: bare
    usaddress's PlaceName; cleaner's city; cleaner's city or, when flagged
    for review, its alternative reading."""
    def bare_city(text: str) -> str:
        try:
            return usaddress.tag(text)[0].get("PlaceName", "").upper()
        except usaddress.RepeatedLabelError:
            return ""
    bare = ours = either = 0
    for text, city in lines:
        address = clean_address(text, options, rules).value
        bare += bare_city(text) == city
        ours += address["city"] == city
        either += city in [address["city"]] + [other["city"] for other in address["alternatives"]]
    return bare / len(lines), ours / len(lines), either / len(lines)


def main() -> dict:
    rules = default_rules()
    options = cleaner.Options()
    steps = [
        ("name", corpus.names, "nameparser HumanName(text)", HumanName,
         lambda value: clean_name(value, options, rules)),
        ("address", corpus.addresses, "usaddress.tag(text)", bare_usaddress,
         lambda value: clean_address(value, options, rules)),
    ]
    figures: dict = {}
    print(f"field steps, {ROUNDS} rounds of {RECORDS} fresh invented values each, best round, "
          "one core")
    print(f"{'step':8} {'pipeline':34} {'µs/value':>9} {'values/s':>9} {'vs bare':>8}")
    for field, draw, bare_label, bare, ours in steps:
        draws = [draw(RECORDS, seed=corpus.SEED + round_number) for round_number in range(ROUNDS)]
        bare_us, ours_us = per_value_us(bare, draws), per_value_us(ours, draws)
        distinct = len(set(draws[0])) * 100 // RECORDS
        for label, micros in ((bare_label, bare_us), (f"cleaner ({distinct}% distinct)", ours_us)):
            print(f"{field:8} {label:34} {micros:9.1f} {1e6 / micros:9.0f} {bare_us / micros:7.2f}x")
        figures[field] = {"bare_us": bare_us, "cleaner_us": ours_us, "ratio": bare_us / ours_us}
    lines = corpus.lines_without_commas(2_000)
    bare, ours, either = city_accuracy(lines, rules, options)
    print(f"city right on {len(lines)} invented lines without commas: usaddress.tag {bare:.1%}, "
          f"cleaner {ours:.1%} (or as the flagged alternative: {either:.1%})")
    figures["city_without_commas"] = {"usaddress": bare, "cleaner": ours, "cleaner_or_alternative": either}
    figures["real_addresses"] = real_address_accuracy(rules)
    figures["real_names"] = real_name_accuracy()
    return figures


def real_name_accuracy() -> dict:
    """Parts right on the probablepeople library's hand-labelled person names
    (MIT), the engine beside the bare nameparser call; tests/labelled_names.py scores."""
    strings, couples, single = labelled_names.labelled_names()
    ours = labelled_names.score(strings, labelled_names.engine_reader(cleaner.clean),
                                REVIEWED_NAMES)
    bare = labelled_names.score(strings, labelled_names.nameparser_reader, REVIEWED_NAMES)
    print(f"real names: {len(strings)} hand-labelled names of the probablepeople library's "
          f"training file (MIT), {couples} couples and {single} one-word names left out")
    print(labelled_names.table(ours, bare))
    return ours.figures(bare, "nameparser")


def real_address_accuracy(rules) -> dict:
    """Components right on the usaddress library's hand-labelled strings (MIT),
    the engine beside the bare usaddress.tag call; tests/labelled.py scores."""
    strings, left_out = labelled.labelled_addresses()
    standardiser = labelled.Standardiser(rules["addresses"])
    ours = labelled.score(strings, standardiser, labelled.engine_reader(cleaner.clean, standardiser),
                          REVIEWED)
    bare = labelled.score(strings, standardiser, labelled.tagger_reader(standardiser), REVIEWED)
    print(f"real addresses: {len(strings)} hand-labelled strings of the usaddress library's "
          f"training file (MIT), {left_out} corners and landmarks left out")
    print(labelled.table(ours, bare))
    return ours.figures(bare, "usaddress_tag")


if __name__ == "__main__":
    main()
