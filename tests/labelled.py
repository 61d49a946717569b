"""Scores address readings against hand-labelled real text: the usaddress
library's training file (tests/reference/usaddress_labeled.xml, MIT, a seeded
two-thirds sample; its licence beside it). Each string's tokens are tagged by
hand; the components scored are the house number, city, state, ZIP5 and unit.

Both readings, the engine's and the bare tagger's, are standardised the same
way before they are compared with the labels: upper case, accents and
punctuation as the engine writes them, a state as its Publication 28 code, a
unit as its Appendix C2 designator and identifier, an ordinal floor as its
number. A component is scored on a string when the labels or the reading hold
it, so a city read where there is none counts as wrong. A wrong component is
silent when its record carried no `review` or `invalid` address flag.
Used by tests/test_addresses_opendata.py and bench/steps.py."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ElementTree
from collections.abc import Callable, Container, Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

import scoring
import usaddress

from cleaner.addresses import AddressVocabulary, normalise

ADDRESSES = Path(__file__).parent / "reference" / "usaddress_labeled.xml"
COMPONENTS = ("number", "city", "state", "zip5", "unit")
# Strings outside the job of a patient's address: street corners and places known by name alone.
OUT_OF_SCOPE_TAGS = frozenset(("IntersectionSeparator", "CornerOf", "LandmarkName"))
_ORDINAL = re.compile(r"^(\d+)(?:ST|ND|RD|TH)$")


@dataclass(frozen=True)
class Labelled:
    text: str
    tokens: tuple[tuple[str, str], ...]   # (token as typed, label)


def labelled_addresses(path: Path = ADDRESSES) -> tuple[list[Labelled], int]:
    """The strings in scope, and how many were left out."""
    kept, left_out = [], 0
    for element in ElementTree.parse(path).getroot():
        tokens = tuple((child.text or "", child.tag) for child in element)
        if OUT_OF_SCOPE_TAGS & {label for _, label in tokens}:
            left_out += 1
            continue
        kept.append(Labelled("".join(element.itertext()), tokens))
    return kept, left_out


def _grouped(tokens: Iterable[tuple[str, str]]) -> dict[str, list[str]]:
    groups: dict[str, list[str]] = {}
    for token, label in tokens:
        groups.setdefault(label, []).append(token)
    return groups


class Standardiser:
    """Writes each component of either side in one comparable form."""

    def __init__(self, vocabulary: AddressVocabulary):
        self.vocabulary = vocabulary

    def words(self, value: str | None) -> str:
        return " ".join(normalise(value or "").replace(",", " ").replace("#", " ").split())

    def number(self, value: str | None) -> str:
        words = self.words(value)
        return self.vocabulary.number_words.get(words, words)

    def state(self, value: str | None) -> str:
        words = self.words(value)
        return self.vocabulary.states.get(tuple(words.split()), words)

    def zip5(self, value: str | None) -> str:
        """Five digits; four are a ZIP that lost its leading zero."""
        digits = re.sub(r"\D", "", value or "")
        return ("0" + digits if len(digits) == 4 else digits)[:5]

    def identifier(self, value: str | None) -> str:
        words = self.words(value)
        ordinal = _ORDINAL.match(words)
        return ordinal[1] if ordinal else self.vocabulary.ordinal_words.get(words, words)

    def secondary(self, words: Iterable[str]) -> str:
        """The secondary units of a line (Pub 28's secondary address: a suite, a
        floor, a building, a mailbox), each as its C2 designator and
        identifier, sorted; a designator may follow its number (2ND FLOOR),
        '#' gives way to a designator beside it, and one that needs no range
        may stand alone (REAR)."""
        units: list[list] = []   # [designator or None, identifier]
        words = list(words)
        for at in range(len(words) - 1):   # 4TH FLOOR is FLOOR 4TH
            if self.vocabulary.units.get(words[at + 1]) in self.vocabulary.units_after_number \
                    and (_ORDINAL.match(words[at]) or words[at] in self.vocabulary.ordinal_words):
                words[at], words[at + 1] = words[at + 1], words[at]
        for word in words:
            designator = "#" if word in ("#", "NO") else self.vocabulary.units.get(word)
            if designator is None:
                if not units:
                    units.append([None, ""])
                units[-1][1] = f"{units[-1][1]} {self.identifier(word)}".strip()
            elif units and (units[-1][0] is None or (units[-1][0] == "#" and not units[-1][1])):
                units[-1][0] = designator
            elif designator != "#" or not units or units[-1][1]:
                units.append([designator, ""])
        written = [f"{designator or '#'} {identifier}".strip() for designator, identifier in units
                   if identifier or designator in self.vocabulary.units_without_range]
        return " | ".join(sorted(written))

    def from_labels(self, tokens: Iterable[tuple[str, str]]) -> dict[str, str]:
        tokens = list(tokens)
        groups = {label: " ".join(found) for label, found in _grouped(tokens).items()}
        return {
            "number": self.number(" ".join(filter(None, (groups.get(
                f"AddressNumber{part}") for part in ("Prefix", "", "Suffix"))))),
            "city": self.words(groups.get("PlaceName")),
            "state": self.state(groups.get("StateName")),
            "zip5": self.zip5(groups.get("ZipCode")),
            "unit": self.secondary(word for token, label in tokens
                                   if label.startswith(("Occupancy", "Subaddress"))
                                   for word in self.words(token).split()),
        }

    def from_engine(self, address: Mapping | None) -> dict[str, str]:
        address = address or {}
        found = address.get("components") or {}
        return {
            "number": self.number(found.get("number")),
            "city": self.words(address.get("city")),
            "state": self.state(address.get("state")),
            "zip5": self.zip5(address.get("postal_code")),
            "unit": self.secondary(self.words(address.get("line2") or " ".join(filter(None, (
                found.get(part) for part in ("other_units", "unit_type", "unit"))))).split()),
        }


def bare_tagger_reading(text: str) -> list[tuple[str, str]]:
    """What the bare usaddress.tag call gives, as (words, label) pairs; a
    string it refuses (a label in two places) gives nothing."""
    try:
        tagged, _ = usaddress.tag(text)
    except usaddress.RepeatedLabelError:
        return []
    return list((words, label) for label, words in tagged.items())


def score(strings: Iterable[Labelled], standardiser: Standardiser,
          read: Callable[[str], tuple[dict[str, str], bool]],
          reviewed: Container[tuple[str, str]] = ()) -> scoring.Score:
    return scoring.score(strings, COMPONENTS, lambda item: standardiser.from_labels(item.tokens),
                         read, reviewed)


def engine_reader(clean: Callable[[dict], dict], standardiser: Standardiser
                  ) -> Callable[[str], tuple[dict[str, str], bool]]:
    def read(text: str) -> tuple[dict[str, str], bool]:
        body = clean({"address": text})
        return standardiser.from_engine(body["record"].get("address")), scoring.flagged(
            body, "addresses")
    return read


def tagger_reader(standardiser: Standardiser) -> Callable[[str], tuple[dict[str, str], bool]]:
    def read(text: str) -> tuple[dict[str, str], bool]:
        return standardiser.from_labels(bare_tagger_reading(text)), False
    return read


def table(ours: scoring.Score, bare: scoring.Score) -> str:
    return scoring.table(ours, bare, "component", "bare tagger")
