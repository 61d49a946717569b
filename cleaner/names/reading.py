"""Group, order and assign: which words of a free-text name are the given
name, the middle names, the family name with its particles, the suffixes and
credentials, and the flags and other readings when that is inferred."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field

from cleaner.names.tokens import Word
from cleaner.names.vocabulary import FAMILY_FIRST, NameVocabulary, PARTS, fold

_VOWEL = re.compile(r"[AEIOUY]")


@dataclass
class Reading:
    """Which words make which part, and what was inferred on the way."""
    parts: dict[str, list[Word]] = field(default_factory=lambda: {part: [] for part in PARTS})
    nickname: list[Word] = field(default_factory=list)
    credentials: list[Word] = field(default_factory=list)
    flags: list[str] = field(default_factory=list)
    alternatives: list[dict[str, list[Word]]] = field(default_factory=list)


def is_tail_word(word: Word, after_comma: bool, vocabulary: NameVocabulary) -> bool:
    """A suffix or credential that may close a name."""
    if word.kind == "suffix":
        return True
    return word.kind == "credential" and (after_comma or word.key not in vocabulary.comma_only_credentials)


def _take_tail(words: list[Word], reading: Reading, vocabulary: NameVocabulary,
               keep: int, one_letter_suffix: bool) -> list[Word]:
    """Move trailing suffixes and credentials of `words` out, keeping at least `keep` words."""
    end = len(words)
    for phrase in vocabulary.credential_phrases:
        if end - len(phrase) >= keep and tuple(word.key for word in words[-len(phrase):]) == phrase:
            typed = " ".join(word.raw for word in words[-len(phrase):])   # ATTORNEY AT LAW
            reading.credentials.append(Word(typed, fold(typed), "credential",
                                            words[-1].restore_case, None))
            words = words[:-len(phrase)]
            end = len(words)
            break
    while end > keep and is_tail_word(words[end - 1], False, vocabulary) \
            and (len(words[end - 1].key) > 1 or one_letter_suffix):
        end -= 1
    if end < len(words):
        _sort_tail(words[end:], reading)
    return words[:end]


def _sort_tail(words: Iterable[Word], reading: Reading) -> None:
    for word in words:
        (reading.parts["suffix"] if word.kind == "suffix" else reading.credentials).append(word)


def _take_titles(words: list[Word], reading: Reading, vocabulary: NameVocabulary) -> list[Word]:
    start = 0
    while start < len(words) - 1 and (words[start].kind == "title" or (
            words[start].key in vocabulary.title_qualifiers and start < len(words) - 2
            and words[start + 1].kind == "title")):
        start += 1
    reading.parts["prefix"] += words[:start]
    return words[start:]


def _particle_before(words: list[Word], end: int, vocabulary: NameVocabulary,
                     lowest: int) -> int | None:
    """Start of the longest particle ending just before `end`, not below `lowest`."""
    if end <= lowest or words[end - 1].key not in vocabulary.particle_ends:
        return None
    for length in range(min(vocabulary.longest_particle, end - lowest), 0, -1):
        keys = tuple([word.key for word in words[end - length:end]])
        if keys in vocabulary.particles:
            return end - length
    return None


def _particle_at(words: list[Word], start: int, vocabulary: NameVocabulary) -> int | None:
    """End of the longest particle starting at `start` and followed by a word."""
    if start >= len(words) - 1 or words[start].key not in vocabulary.particle_starts:
        return None
    for length in range(min(vocabulary.longest_particle, len(words) - start - 1), 0, -1):
        keys = tuple([word.key for word in words[start:start + length]])
        if keys in vocabulary.particles:
            return start + length
    return None


def _can_follow_particle(word: Word, vocabulary: NameVocabulary) -> bool:
    return word.kind == "word" and word.key not in vocabulary.family_first_surnames


def mark_particles(family: list[Word], vocabulary: NameVocabulary) -> None:
    for word in family:
        first, hyphen, rest = word.raw.partition("-")
        if hyphen and rest:
            word.hyphen_particle = vocabulary.hyphen_particles.get(fold(first))
    index = 0
    while index < len(family) - 1:
        end = _particle_at(family, index, vocabulary)
        if end is not None and _can_follow_particle(family[end], vocabulary):
            written = vocabulary.particles[tuple(word.key for word in family[index:end])].split()
            for word, form in zip(family[index:end], written):
                word.particle = form
            index = end
        else:
            index += 1


def _family_start_from_end(words: list[Word], vocabulary: NameVocabulary) -> int:
    """Where the family name begins when it closes the name: the last word, with
    the particles and joined surnames before it; the first word is never taken."""
    start = len(words) - 1
    while start > 1 and _can_follow_particle(words[start], vocabulary):
        particle = _particle_before(words, start, vocabulary, lowest=1)
        if particle is not None:
            start = particle
        elif words[start - 1].key in vocabulary.joiners and start >= 3:
            start -= 2
        else:
            break
    return start


def _family_end_from_start(words: list[Word], vocabulary: NameVocabulary) -> int:
    """Where the family name ends when it opens the name: its particles, a word,
    and a joined second surname; the last word is never taken."""
    end = 0 if words[0].key in vocabulary.family_first_surnames \
        else _particle_at(words, 0, vocabulary) or 0
    if end and not (end < len(words) - 1 and _can_follow_particle(words[end], vocabulary)):
        end = 0
    end += 1
    if end + 2 < len(words) and words[end].key in vocabulary.joiners:
        end += 2
    return end


def _is_surname_only(word: Word, vocabulary: NameVocabulary) -> bool:
    return word.kind == "word" and word.key in vocabulary.surnames_not_given


def _is_given_name(word: Word, vocabulary: NameVocabulary) -> bool:
    return word.kind == "word" and word.key in vocabulary.given_names \
        and word.key not in vocabulary.surnames_not_given


def _newborn_marker(word: Word) -> bool:
    return word.placeholder is not None and word.placeholder.marks_given


def _family_first_evidence(words: list[Word], vocabulary: NameVocabulary) -> bool:
    """Whether a given-first name without a comma reads better family first."""
    first, second, last = words[0], words[1], words[-1]
    upper_first = first.raw.isupper() and first.kind == "word" and len(first.key) > 1 \
        and any(not word.raw.isupper() for word in words[1:]) and _VOWEL.search(first.key.upper())
    family_first_surname = first.key in vocabulary.family_first_surnames \
        and last.key not in vocabulary.family_first_surnames and last.key not in vocabulary.surnames
    surname_before_given = _is_surname_only(first, vocabulary) and (
        _is_given_name(second, vocabulary) or (
            len(words) > 2 and _is_surname_only(second, vocabulary)
            and _is_given_name(words[2], vocabulary)))
    # A word no one is given before a common given name (HINCAPIE JANICE), or
    # two names before an initial (BRINES MARK R): lists write the family first.
    births = vocabulary.given_births
    common = vocabulary.common_given_births
    unknown_before_given = len(words) <= 3 and first.kind == second.kind == "word" \
        and first.key not in births and first.key not in vocabulary.given_names \
        and births.get(second.key, 0) >= common and second.key not in vocabulary.surnames \
        and (len(words) == 2 or last.kind == "initial" or births.get(last.key, 0) >= common)
    names_before_initial = len(words) == 3 and first.kind == second.kind == "word" \
        and last.kind == "initial" and births.get(first.key, 0) < births.get(second.key, 0)
    newborn_last = _newborn_marker(last) or (
        len(words) > 2 and _newborn_marker(words[-2])
        and last.kind in ("initial", "number"))
    return bool(upper_first or family_first_surname or surname_before_given
                or unknown_before_given or names_before_initial) or (
        newborn_last and not _newborn_marker(first))


def _given_and_middle(words: list[Word]) -> tuple[list[Word], list[Word]]:
    """The first word is the given name, unless newborn words gather the given
    group round them (Baby Girl, Judy Girl A, Twin B)."""
    markers = [index for index, word in enumerate(words) if _newborn_marker(word)]
    if not markers:
        return words[:1], words[1:]
    end = markers[-1] + 1
    if end < len(words) and words[end].kind in ("initial", "number"):
        end += 1
    return words[:end], words[end:]


def _assign(words: list[Word], family_first: bool, vocabulary: NameVocabulary,
            infer_compound: bool = True) -> tuple[dict[str, list[Word]], bool]:
    """Given, middle and family of a name without commas, and whether a
    two-part family name was inferred. Family first, every word after the
    family name is given name (Xiaoming; Van An; Min Jun)."""
    compound = False
    if len(words) == 1:
        return {"given": words, "middle": [], "family": []}, False
    if family_first:
        end = _family_end_from_start(words, vocabulary)
        if infer_compound and end == 1 < len(words) - 1 and _is_surname_only(words[1], vocabulary):
            end, compound = 2, True
        rest = words[end:]
        if len(rest) > 1 and words[0].key not in vocabulary.family_first_surnames and (
                rest[-1].kind == "initial" or rest[0].key in vocabulary.given_births):
            # MEYER CHARLES LOWELL, BRINES MARK R: a US list's given name, then the middle
            return {"given": rest[:1], "middle": rest[1:], "family": words[:end]}, compound
        return {"given": rest, "middle": [], "family": words[:end]}, compound
    start = _family_start_from_end(words, vocabulary)
    if start == len(words) - 1 >= 2 and _is_surname_only(words[start - 1], vocabulary):
        # GIVEN X FAMILY with X a surname: X is the middle name, as US
        # registration usually means it, unless both are surnames of Spanish or
        # Portuguese custom (MARIA LOPEZ GARCIA); the other reading is offered.
        two_surnames = {words[start - 1].key, words[start].key} <= vocabulary.iberian_surnames
        if two_surnames == infer_compound:
            start -= 1
            # DE LA CRUZ RODRIGUEZ: the particles of the first family name go with it.
            start = _particle_before(words, start, vocabulary, lowest=1) or start
        compound = True
    given, middle = _given_and_middle(words[:start])
    return {"given": given, "middle": middle, "family": words[start:]}, compound


def _read_natural(words: list[Word], reading: Reading, order: str,
                  vocabulary: NameVocabulary) -> None:
    if not words:
        return
    words = _take_titles(words, reading, vocabulary)
    words = _take_tail(words, reading, vocabulary, keep=1, one_letter_suffix=False)
    # A suffix of more than one letter typed inside the name (DAVID B. III HILL).
    inside = [word for word in words[1:-1] if word.kind == "suffix" and len(word.key) > 1]
    if inside:
        reading.parts["suffix"] += inside
        words = [word for word in words if word not in inside]
    if len(words) == 1 and reading.parts["prefix"]:
        reading.parts["family"] = words
        return
    family_first = order == FAMILY_FIRST
    inferred = not family_first and len(words) > 1 and _family_first_evidence(words, vocabulary)
    if not (family_first or inferred) and len(words) > 2:
        words = _take_tail(words, reading, vocabulary, keep=2, one_letter_suffix=True)
    assigned, compound = _assign(words, family_first or inferred, vocabulary)
    reading.parts.update(assigned)
    if inferred:
        reading.flags.append("names.family_first_inferred")
        reading.alternatives.append(_assign(words, False, vocabulary, infer_compound=False)[0])
    middle = reading.parts["middle"]
    if not compound and not (family_first or inferred) and middle and middle[-1].kind == "word" \
            and middle[-1].key not in vocabulary.given_births \
            and middle[-1].key not in vocabulary.given_names \
            and middle[-1].key not in vocabulary.no_middle and middle[-1].placeholder is None:
        # GIVEN [M] X FAMILY with X no one is given: X may be a first family name.
        reading.flags.append("names.middle_or_second_family")
        reading.alternatives.append({"given": reading.parts["given"], "middle": middle[:-1],
                                     "family": middle[-1:] + reading.parts["family"]})
    if compound:
        two_part = len(reading.parts["family"]) > 1
        reading.flags.append("names.compound_family_inferred" if family_first or inferred
                             or two_part else "names.middle_or_second_family")
        reading.alternatives.append(
            _assign(words, family_first or inferred, vocabulary, infer_compound=False)[0])


def _read_comma_form(family: list[Word], rest: list[Word], reading: Reading,
                     vocabulary: NameVocabulary) -> None:
    family = _take_tail(family, reading, vocabulary, keep=1, one_letter_suffix=False)
    rest = _take_titles(rest, reading, vocabulary)
    rest = _take_tail(rest, reading, vocabulary, keep=1, one_letter_suffix=False)
    given, middle = _given_and_middle(rest)
    reading.parts.update(given=given, middle=middle, family=family)


def _comma_ends_no_family(first: list[Word], rest: list[Word]) -> bool:
    """A first segment of several words that ends in an initial or a title."""
    return len(first) > 1 and first[-1].kind in ("initial", "title") and len(rest) == 1


def _without_alias(segments: list[list[Word]], vocabulary: NameVocabulary
                   ) -> tuple[list[list[Word]], list[Word]]:
    """The segments up to an alias marker (AKA, A.K.A., ALIAS), and the words after it."""
    for at, segment in enumerate(segments):
        for index, word in enumerate(segment):
            if word.key.rstrip(":") in vocabulary.alias_markers:
                after = segment[index + 1:] + [word for later in segments[at + 1:] for word in later]
                return [*segments[:at], segment[:index]], after
    return segments, []


def read_name(segments: list[list[Word]], order: str, vocabulary: NameVocabulary) -> Reading:
    """Assign every word of a free-text name to a part."""
    reading = Reading()
    segments, alias = _without_alias(segments, vocabulary)
    quoted = [word for segment in segments for word in segment if word.kind == "nickname"]
    # A suffix in parentheses or quotes (W. ROWAN (JR.) FENN) is the suffix.
    # An alias is a second name of its own: HL7 v2 name type A, and in FHIR a
    # HumanName of use nickname, which FHIR maps to v3 P (Other/Pseudonym/Alias).
    reading.nickname = [word for word in quoted if word.key not in vocabulary.suffixes] + alias
    if alias:
        reading.flags.append("names.alias_found")
    reading.parts["suffix"] += [word for word in quoted if word.key in vocabulary.suffixes]
    if quoted:
        segments = [[word for word in segment if word.kind != "nickname"] for segment in segments]
    # Empty segments after the first are stray commas (a trailing one, a doubled one), and
    # a later segment of suffixes and credentials only (FENN, BSN, RN, CHRISTINE) is the tail.
    tail: list[Word] = []
    kept = [list(segments[0])]
    for segment in segments[1:]:
        if segment and all(is_tail_word(word, True, vocabulary) for word in segment):
            tail += segment
        elif segment:
            kept.append(segment)
    if len(kept) == 1 and len(segments) > 1 and len(kept[0]) == 1:
        kept.append([])   # HOLLOWAY, : a family name closed by its comma
    segments = kept
    rest = [word for segment in segments[1:] for word in segment]
    if len(segments) > 1 and segments[0] and _comma_ends_no_family(segments[0], rest):
        # CAROLYN E, SAVAGE and PATRICIA MRS, NATKE: the comma does not close a family name.
        reading.flags.append("names.comma_not_after_family")
        segments = [segments[0] + rest]
    if len(segments) > 1 and segments[0] and len(rest) == 1 and rest[0].kind == "initial":
        _read_natural(segments[0], reading, order, vocabulary)   # JOSEPH AROJOJOYE, B
        reading.parts["middle"] += rest
    elif len(segments) == 1 or not segments[0] or (not rest and len(segments[0]) > 1):
        _read_natural([word for segment in segments for word in segment], reading, order,
                      vocabulary)
    else:
        _read_comma_form(segments[0], rest, reading, vocabulary)
    _sort_tail(tail, reading)
    for word in reading.parts["family"]:
        # A family name in capitals among mixed-case words is a convention, not a spelling.
        word.restore_case = word.restore_case or (word.raw.isupper() and len(word.key) > 1)
    mark_particles(reading.parts["middle"], vocabulary)
    mark_particles(reading.parts["family"], vocabulary)
    parts = reading.parts
    if len(parts["given"]) + len(parts["middle"]) + len(parts["family"]) == 1:
        reading.flags.append("names.single_word")
    return reading
