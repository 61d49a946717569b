"""Placeholder names: values typed when the name is not known (UNKNOWN,
BABY GIRL, a test patient), marked and left out of the keys."""

from __future__ import annotations

from collections.abc import Mapping

from cleaner.names.tokens import Word
from cleaner.names.vocabulary import NAME_PARTS, NameVocabulary


def placeholder_only(value: str, words: list[Word], vocabulary: NameVocabulary) -> str | None:
    """The code of a value that is a placeholder text, or made only of
    placeholder words and fillers."""
    code = vocabulary.placeholder_texts.get(value.casefold())
    if code:
        return code
    for word in words:
        if word.placeholder is not None:
            code = code or word.placeholder.code
        elif not (word.kind in ("number", "initial") or word.key in vocabulary.fillers
                  or not word.key):
            return None
    return code


def _name_placeholder(keys: set[str], vocabulary: NameVocabulary) -> str | None:
    if vocabulary.placeholder_name_words.isdisjoint(keys):
        return None
    return next((group.code for group in vocabulary.groups
                 if any(name <= keys for name in group.names)), None)


def placeholder_marks(parts: Mapping[str, list[Word]], vocabulary: NameVocabulary
                      ) -> tuple[list[str], set[str]]:
    """Placeholder codes found, and which parts are placeholders (a part
    missing from `parts` has no words)."""
    keys: set[str] = set()
    codes: list[str] = []
    marked: set[str] = set()
    for part in NAME_PARTS:
        for word in parts.get(part, ()):
            keys.add(word.key)
            if word.placeholder is not None:
                marked.add(part)
                if word.placeholder.code not in codes:
                    codes.append(word.placeholder.code)
    whole = _name_placeholder(keys, vocabulary)
    if whole:
        return [whole], set(NAME_PARTS)
    return codes, marked
