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
from dataclasses import dataclass, field
from pathlib import Path

from nameparser import HumanName
from unidecode import unidecode

NAMES = Path(__file__).parent / "reference" / "probablepeople_names.xml"
PARTS = ("given", "family", "middle", "suffix", "nickname")
_LABEL_PART = {"GivenName": "given", "FirstInitial": "given", "Surname": "family",
               "LastInitial": "family", "MiddleName": "middle", "MiddleInitial": "middle",
               "SuffixGenerational": "suffix", "Nickname": "nickname"}
_NOT_LETTER = re.compile(r"[^A-Z0-9 ]")
_FLAGGED = frozenset(("review", "invalid"))


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


@dataclass
class Score:
    right: dict[str, int] = field(default_factory=lambda: dict.fromkeys(PARTS, 0))
    scored: dict[str, int] = field(default_factory=lambda: dict.fromkeys(PARTS, 0))
    silent: dict[str, int] = field(default_factory=lambda: dict.fromkeys(PARTS, 0))
    misses: list[tuple[str, str, str, str, bool]] = field(default_factory=list)

    def add(self, text: str, want: Mapping[str, str], got: Mapping[str, str], flagged: bool,
            reviewed: Container[tuple[str, str]] = ()) -> None:
        for part in PARTS:
            if (not want[part] and not got[part]) or (text, part) in reviewed:
                continue
            self.scored[part] += 1
            if want[part] == got[part]:
                self.right[part] += 1
            else:
                self.silent[part] += not flagged
                self.misses.append((text, part, want[part], got[part], flagged))

    def share(self, part: str | None = None) -> float:
        parts = PARTS if part is None else (part,)
        return sum(self.right[p] for p in parts) / max(1, sum(self.scored[p] for p in parts))

    def silent_share(self, part: str | None = None) -> float:
        parts = PARTS if part is None else (part,)
        return sum(self.silent[p] for p in parts) / max(1, sum(self.scored[p] for p in parts))


def score(strings: Iterable[Labelled], read: Callable[[str], tuple[dict[str, str], bool]],
          reviewed: Container[tuple[str, str]] = ()) -> Score:
    result = Score()
    for item in strings:
        got, flagged = read(item.text)
        result.add(item.text, from_labels(item.tokens), got, flagged, reviewed)
    return result


def engine_reader(clean: Callable[[dict], dict]) -> Callable[[str], tuple[dict[str, str], bool]]:
    def read(text: str) -> tuple[dict[str, str], bool]:
        body = clean({"name": text})
        flagged = any(flag["code"].startswith("names.") and flag.get("severity") in _FLAGGED
                      for flag in body["flags"])
        return from_engine(body["record"].get("name")), flagged
    return read


def nameparser_reader(text: str) -> tuple[dict[str, str], bool]:
    return from_nameparser(text), False


def table(ours: Score, bare: Score) -> str:
    lines = [f"{'part':10} {'cleaner':>8} {'bare nameparser':>16} {'cleaner silent':>15}"]
    for part in (*PARTS, None):
        lines.append(f"{part or 'all':10} {ours.share(part):8.1%} {bare.share(part):16.1%} "
                     f"{ours.silent_share(part):15.1%}")
    return "\n".join(lines)
