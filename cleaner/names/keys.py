"""Match keys: the folded and phonetic keys of the given and family names, and
the family name's parts without particles."""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping
from types import MappingProxyType
from typing import Any

import jellyfish
from unidecode import unidecode

from cleaner.names.tokens import Word
from cleaner.names.vocabulary import NameVocabulary

_NOT_LETTER = re.compile(r"[^A-Z]")


@functools.lru_cache(maxsize=32768)
def folded_key(value: str) -> str:
    """Upper-case ASCII letters only: accents folded, spaces and punctuation gone."""
    return _NOT_LETTER.sub("", unidecode(value).upper())


@functools.lru_cache(maxsize=32768)
def _phonetic_keys(part: str, folded: str) -> Mapping[str, str]:
    return MappingProxyType({f"{part}_folded": folded, f"{part}_soundex": jellyfish.soundex(folded),
                             f"{part}_nysiis": jellyfish.nysiis(folded),
                             f"{part}_metaphone": jellyfish.metaphone(folded)})


_NO_KEYS: Mapping[str, Any] = MappingProxyType({})


# A family name's words as its keys read them: the written form, whether the
# word is part of the core (not a particle or joiner), whether a particle is
# joined to it by a hyphen, whether it is a prefix typed apart from the word
# it begins (MC DONALD).
FamilyKeyInputs = tuple[tuple[str, bool, bool, bool], ...]   # written, in the core, hyphenated, glued


# The keys of a given name and of a family name are worked out once per
# distinct part, read-only: each outcome copies them into its own dict.
@functools.lru_cache(maxsize=32768)
def _family_keys(family: FamilyKeyInputs) -> Mapping[str, Any]:
    folded_family = folded_key(" ".join(written for written, *_ in family))
    if not folded_family:
        return _NO_KEYS
    core: list[str] = []
    glue = ""
    for written, in_core, hyphenated, glued in family:
        if glued:
            glue += folded_key(written)   # MC DONALD and O BRIEN key as MCDONALD and OBRIEN
            continue
        pieces = [folded_key(piece) for piece in written.split("-")[1 if hyphenated else 0:]]
        if in_core or glue:
            pieces[0] = glue + pieces[0]
            core += pieces
        glue = ""
    core = [piece for piece in core if piece] or [folded_family]
    return MappingProxyType({**_phonetic_keys("family", folded_family),
                             "family_core": "".join(core), "family_parts": tuple(core)})


@functools.lru_cache(maxsize=32768)
def _given_keys(given: str) -> Mapping[str, str]:
    folded_given = folded_key(given)
    if not folded_given:
        return _NO_KEYS
    return MappingProxyType({**_phonetic_keys("given", folded_given),
                             "given_initial": folded_given[0]})


def match_keys(given: str | None, family: list[tuple[Word, str]],
               vocabulary: NameVocabulary) -> dict[str, Any]:
    """Folded and phonetic keys of a given name and of a family name (its words
    with their written forms), and each part of the family name without particles."""
    keys = {**_family_keys(tuple([(written, word.particle is None
                                   and word.key not in vocabulary.joiners,
                                   bool(word.hyphen_particle),
                                   word.key in vocabulary.glued_prefixes and at + 1 < len(family))
                                  for at, (word, written) in enumerate(family)])),
            **_given_keys(given or "")}
    if "family_parts" in keys:
        keys["family_parts"] = list(keys["family_parts"])  # a list of each outcome's own
    return keys
