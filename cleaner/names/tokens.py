"""Tokenize and classify: a free-text name cut into comma segments of words,
each word folded and classed (title, suffix, credential, initial, number,
word, nickname) once per distinct word."""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass

from cleaner.names.vocabulary import NameVocabulary, PlaceholderGroup, fold

# A nickname is set apart by double quotes, curly quotes, brackets, or single
# quotes that stand free (so the apostrophe of O'Brien is not one).
_TOKEN = re.compile(r"""(?P<quoted>"[^"]*"|''[^']+''|“[^”]*”|\([^)]*\)|\[[^\]]*\]"""
                    r"""|(?<![^\s,])['‘][^'’]+['’](?![^\s,]))|(?P<comma>,)|(?P<word>[^\s,]+)""")


@dataclass(slots=True)
class Word:
    raw: str                 # as written in the tidied value
    key: str                 # folded, for the vocabulary
    kind: str                # nickname, title, suffix, credential, initial, number, word
    restore_case: bool       # the value it came from was all upper or all lower case
    placeholder: PlaceholderGroup | None   # the placeholder group the word belongs to
    particle: str | None = None   # written form, when it is a particle (van, de la, bin)
    hyphen_particle: str | None = None   # written form of a particle joined by a hyphen (al-)


@functools.lru_cache(maxsize=32768)
def _classified(raw: str, quoted: bool, vocabulary: NameVocabulary
                ) -> tuple[str, str, PlaceholderGroup | None] | None:
    """A word's key, kind and placeholder group, once per distinct word; None
    for a stray mark (".", "-", '""'), which carries no name."""
    if not any(ch.isalnum() for ch in raw):
        return None
    key = fold(raw)
    return key, _kind(raw, key, quoted, vocabulary), vocabulary.placeholder_group(key)


def _kind(raw: str, key: str, quoted: bool, vocabulary: NameVocabulary) -> str:
    if quoted:
        return "nickname"
    if key.isdigit():
        return "number"
    if key in vocabulary.titles:
        return "title"
    if key in vocabulary.suffixes:
        return "suffix"
    if key in vocabulary.credentials:
        return "credential"
    if len(key) == 1 and raw[0].isalpha():
        return "initial"
    return "word"


def tokenize(value: str, vocabulary: NameVocabulary) -> list[list[Word]]:
    """The words of `value` in comma-separated segments (a trailing comma leaves an empty one)."""
    restore = _single_case(value)
    segment: list[Word] = []
    segments = [segment]
    for quoted, comma, word in _TOKEN.findall(value):
        if comma:
            segment = []
            segments.append(segment)
            continue
        raw = quoted or word
        classified = _classified(raw, bool(quoted), vocabulary)
        if classified is not None:
            key, kind, group = classified
            segment.append(Word(raw, key, kind, restore, group))
    return segments


def _single_case(value: str) -> bool:
    # A value with no letter that has case (digits among Arabic or Thai letters)
    # counts too: the letters its digits are repaired to are then cased like
    # any others, and the cleaned value reads the same when cleaned again.
    return value == value.upper() or value == value.lower()
