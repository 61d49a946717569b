"""Scores name readings against hand-labelled real text: the probablepeople
library's person-name training strings (tests/reference/probablepeople_names.xml,
MIT, a seeded two-thirds sample; its licence beside it). Each string's tokens
are tagged by hand; the parts scored are the given name (or first initial),
the family name (or last initial), the middle names and initials, the
generational suffix and the nickname.

Both readings, the engine's and the bare nameparser call's, are compared with
the labels after folding: accents to ASCII, upper case, punctuation and
quotes dropped. A part is scored on a string when the labels or the reading
hold it. A wrong part is silent when its record carried no `review` or
`invalid` name flag. Couples (an `And` label) and one-word names are left out.
Used by tests/test_names_opendata.py and bench/steps.py."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ElementTree
from collections.abc import Callable, Container, Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

import scoring
from nameparser import HumanName
from unidecode import unidecode

NAMES = Path(__file__).parent / "reference" / "probablepeople_names.xml"
PARTS = ("given", "family", "middle", "suffix", "nickname")
_LABEL_PART = {"GivenName": "given", "FirstInitial": "given", "Surname": "family",
               "LastInitial": "family", "MiddleName": "middle", "MiddleInitial": "middle",
               "SuffixGenerational": "suffix", "Nickname": "nickname"}
_NOT_LETTER = re.compile(r"[^A-Z0-9 ]")


@dataclass(frozen=True)
class Labelled:
    text: str
    tokens: tuple[tuple[str, str], ...]


def labelled_names(path: Path = NAMES) -> tuple[list[Labelled], int, int]:
    """The names in scope, the couples left out and the one-word names left out."""
    kept, couples, single = [], 0, 0
    for element in ElementTree.parse(path).getroot():
        tokens = tuple((child.text or "", child.tag) for child in element)
        text = "".join(element.itertext()).strip()
        if any(label == "And" for _, label in tokens):
            couples += 1
        elif len(tokens) < 2:
            single += 1
        else:
            kept.append(Labelled(text, tokens))
    return kept, couples, single


def folded(value: str | None) -> str:
    return " ".join(_NOT_LETTER.sub(" ", unidecode(value or "").upper()).split())


def from_labels(tokens: Iterable[tuple[str, str]]) -> dict[str, str]:
    found: dict[str, list[str]] = {part: [] for part in PARTS}
    for token, label in tokens:
        if label in _LABEL_PART:
            found[_LABEL_PART[label]].append(token)
    return {part: folded(" ".join(words)) for part, words in found.items()}


def from_engine(name: Mapping | None) -> dict[str, str]:
    name = name or {}
    return {part: folded(name.get(part) if isinstance(name.get(part), str) else None)
            for part in PARTS}


def from_nameparser(text: str) -> dict[str, str]:
    parsed = HumanName(text)
    return {"given": folded(parsed.first), "family": folded(parsed.last),
            "middle": folded(parsed.middle), "suffix": folded(parsed.suffix),
            "nickname": folded(parsed.nickname)}


def score(strings: Iterable[Labelled], read: Callable[[str], tuple[dict[str, str], bool]],
          reviewed: Container[tuple[str, str]] = ()) -> scoring.Score:
    return scoring.score(strings, PARTS, lambda item: from_labels(item.tokens), read, reviewed)


def engine_reader(clean: Callable[[dict], dict]) -> Callable[[str], tuple[dict[str, str], bool]]:
    def read(text: str) -> tuple[dict[str, str], bool]:
        body = clean({"name": text})
        return from_engine(body["record"].get("name")), scoring.flagged(body, "names")
    return read


def nameparser_reader(text: str) -> tuple[dict[str, str], bool]:
    return from_nameparser(text), False


def table(ours: scoring.Score, bare: scoring.Score) -> str:
    return scoring.table(ours, bare, "part", "bare nameparser")
