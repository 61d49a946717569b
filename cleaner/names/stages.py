"""Each part's stages on its own trail: look-alike repair, punctuation, case
and standard forms."""

from __future__ import annotations

import functools
import re
from typing import NamedTuple

from cleaner.names.tokens import Word
from cleaner.names.vocabulary import NameVocabulary, fold
from cleaner.trail import Trail

_QUOTES = "\"“”()[]'‘’"
_APOSTROPHE_PREFIX = re.compile(r"^(\w)(['’])(\w)")
# What a name word may hold besides letters: apostrophes, hyphens, periods.
_NAME_WORD = re.compile(r"^[^\W\d_](?:[^\W\d_]|[\-'’.])*$")


def repair_lookalikes(raw: str, vocabulary: NameVocabulary) -> str:
    """Digits typed inside a word of letters, as the letter they look like in
    the case of the letters beside them."""
    if raw.isalpha() or sum(ch.isalpha() for ch in raw) < 2:
        return raw
    letters = [ch for ch in raw if ch.isalpha()]
    repaired = []
    for index, ch in enumerate(raw):
        forms = vocabulary.lookalikes.get(ch)
        if forms is None:
            repaired.append(ch)
            continue
        beside = [c for c in raw[max(index - 1, 0):index] + raw[index + 1:index + 2] if c.isalpha()]
        repaired.append(forms[0] if (beside or letters)[0].isupper() else forms[1])
    return "".join(repaired)


def proper_case(raw: str, part: str, vocabulary: NameVocabulary) -> str:
    """A word typed in one case, in the case names are written in."""
    return "-".join(_proper_piece(piece, part, vocabulary) for piece in raw.split("-"))


def _proper_piece(piece: str, part: str, vocabulary: NameVocabulary) -> str:
    lower = piece.lower()
    if not lower:
        return piece
    if part == "family":
        mac = vocabulary.mac_names.get(fold(piece))
        if mac is not None:
            return mac
    if lower.startswith("mc") and len(lower) > 3 and lower[2].isalpha():
        return "Mc" + lower[2].upper() + lower[3:]
    apostrophe = _APOSTROPHE_PREFIX.match(lower)
    if apostrophe:
        return apostrophe[1].upper() + apostrophe[2] + apostrophe[3].upper() + lower[3:]
    return lower[0].upper() + lower[1:]


# The part whose words of one kind are written in the vocabulary's standard form.
_STANDARD_FORMS = {"prefix": ("title", "titles", "names.title_standardised"),
                   "suffix": ("suffix", "suffixes", "names.suffix_standardised"),
                   "credentials": ("credential", "credentials", "names.credential_standardised")}


class WordStages(NamedTuple):
    """One word's text after each stage, in the order the stages run."""
    split: str
    repaired: str
    unpunctuated: str
    cased: str
    standard: str


# The reason recorded when a stage changes a word; the standard form's is the part's.
_STAGE_REASONS = ("names.lookalikes_repaired", "names.punctuation_removed",
                  "names.case_restored")


def _unpunctuated(kind: str, raw: str) -> str:
    if kind == "nickname":
        return raw.strip(_QUOTES).strip()
    if kind in ("initial", "word") and raw.count(".") == 1:
        return raw.rstrip(".")
    return raw


# Intake data repeats its words (given names, common surnames): each distinct
# word in each part is taken through the stages once per process.
@functools.lru_cache(maxsize=32768)
def _word_stages(raw: str, kind: str, restore_case: bool, particle: str | None,
                 hyphen_particle: str | None, part: str, vocabulary: NameVocabulary) -> WordStages:
    repaired = repair_lookalikes(raw, vocabulary) if kind == "word" else raw
    unpunctuated = _unpunctuated(kind, repaired)
    standard_kind, table, _ = _STANDARD_FORMS.get(part, (None, None, None))
    if kind == standard_kind:
        return WordStages(raw, repaired, unpunctuated, unpunctuated,
                          getattr(vocabulary, table)[fold(raw)])
    cased = unpunctuated
    if restore_case and kind != "number":
        cased = proper_case(unpunctuated, part, vocabulary)
        if particle is not None:
            cased = particle
        elif part == "family" and hyphen_particle is not None:
            cased = hyphen_particle + cased[cased.index("-"):]
    return WordStages(raw, repaired, unpunctuated, cased, cased)


class PartStages(NamedTuple):
    """A part's text after each stage with the reason a change to it records,
    the flags its words raise, and each word as finally written."""
    steps: tuple[tuple[str, str], ...]
    flags: tuple[str, ...]
    written: tuple[str, ...]


# A part's words as the stages read them.
StageInputs = tuple[tuple[str, str, bool, str | None, str | None], ...]


def stage_inputs(words: list[Word]) -> StageInputs:
    return tuple([(word.raw, word.kind, word.restore_case, word.particle, word.hyphen_particle)
                  for word in words])


# Intake data repeats whole parts too (a given name alone, a family name): the
# texts and flags of a part's words are worked out once per process.
@functools.lru_cache(maxsize=32768)
def _part_stages(words: StageInputs, part: str, vocabulary: NameVocabulary) -> PartStages:
    stages = [_word_stages(*word, part, vocabulary) for word in words]
    # The first reason: a part sent apart may hold commas or stray marks between its words.
    reasons = ("names.punctuation_removed", *_STAGE_REASONS)
    if part in _STANDARD_FORMS:
        reasons += (_STANDARD_FORMS[part][2],)
    steps = [(" ".join(column), reason) for column, reason in zip(zip(*stages), reasons)]
    flags = []
    if any(step.repaired != step.split for step in stages):
        flags.append("names.lookalikes")
    if any(kind == "word" and _NAME_WORD.match(step.repaired) is None
           for (_, kind, *_), step in zip(words, stages)):
        flags.append("names.unexpected_characters")
    return PartStages(tuple(steps), tuple(flags), tuple(step.standard for step in stages))


def run_stages(trail: Trail, words: list[Word], part: str,
               vocabulary: NameVocabulary) -> tuple[str, ...]:
    """Take a part's words through the stages, recording on the part's trail
    each stage that changes something; returns each word as finally written."""
    staged = _part_stages(stage_inputs(words), part, vocabulary)
    for value, reason in staged.steps:
        trail.apply(value, reason)
    for code in staged.flags:
        trail.flag(code)
    return staged.written
