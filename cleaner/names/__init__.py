"""Person names: free text or parts, as HL7 FHIR HumanName parts with
particle-aware family names, restored case, nickname variants, placeholder
marks and phonetic match keys.

Free text goes through small named stages, one module each: tokenize and
classify (tokens.py: words, commas, quoted nicknames; title, suffix,
credential, initial, number, word); group, order and assign (reading.py:
comma segments, titles in front, suffixes and credentials behind, an alias
after AKA, given or family first inferred only with a flag, the family group
with its particles, given, middles, newborn names); placeholders
(placeholders.py); and assemble (assemble.py), where each part's words go
through look-alike repair, punctuation, case and standard forms on the part's
own trail (stages.py) and the match keys are made (keys.py). Parts sent apart
(here) go through the same classification and stages. The vocabulary is
rules/names.toml and the tables beside it (vocabulary.py); nothing here knows
a particular name.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.names.assemble import Assembly, assemble, empty_name
from cleaner.names.placeholders import placeholder_only
from cleaner.names.reading import is_tail_word, mark_particles, read_name
from cleaner.names.tokens import Word, tokenize
from cleaner.names.vocabulary import NameVocabulary, PARTS, PART_FIELDS, compile_rules
from cleaner.options import Options
from cleaner.rules import RuleBook
from cleaner.trail import Trail

_ASCII_LETTER = re.compile(r"[A-Za-z]")


def _unparsed(trail: Trail, code: str, vocabulary: NameVocabulary) -> Outcome:
    trail.flag(code)
    name = empty_name()
    name.update(value=trail.revert(), valid=False, placeholder=code != "names.unparsed",
                use=vocabulary.use_of([code]))
    return Outcome(name, [trail])


def _missing_text(value: str, vocabulary: NameVocabulary) -> str | None:
    """The code of a value that says there is no name, or holds no letters."""
    if value.casefold() in vocabulary.no_name_texts or not _has_letter(value):
        return "names.placeholder_missing"
    return None


def _has_letter(value: str) -> bool:
    # One pass of a regular expression reads ASCII text several times faster
    # than a loop over its characters; beyond ASCII only str.isalpha knows.
    if value.isascii():
        return _ASCII_LETTER.search(value) is not None
    return any(ch.isalpha() for ch in value)


def clean_free_text(raw: Any, order: str, rules: RuleBook) -> Outcome:
    vocabulary: NameVocabulary = rules["names"]
    trail = Trail("name", raw, rules.reasons)
    value = text.tidy(trail)
    if value is None:
        return Outcome(None, [trail])
    if len(value) > vocabulary.max_length:
        return _unparsed(trail, "names.unparsed", vocabulary)
    segments = tokenize(value, vocabulary)
    words = [word for segment in segments for word in segment]
    problem = "names.unparsed" if len(words) > vocabulary.max_words \
        else _missing_text(value, vocabulary) or placeholder_only(value, words, vocabulary)
    if problem:
        return _unparsed(trail, problem, vocabulary)
    reading = read_name(segments, order, vocabulary)
    assembly = Assembly(flags=reading.flags, alternatives=reading.alternatives)
    for part, part_words in [*reading.parts.items(), ("nickname", reading.nickname)]:
        if part_words:
            assembly.words[part] = part_words
            assembly.trails[part] = trail.split_off(
                PART_FIELDS[part], " ".join([word.raw for word in part_words]),
                "names.split_into_parts")
    for index, word in enumerate(reading.credentials):
        assembly.credentials.append((word, trail.split_off(
            f"name.credentials[{index}]", word.raw, "names.split_into_parts")))
    return assemble(assembly, Trail("name", raw, rules.reasons), vocabulary)


def _move(assembly: Assembly, part: str, moving: list[Word], target: str, field_name: str,
          reason: str) -> Trail:
    """Move `moving` out of `part` onto the trail of `target`: a new one that
    starts from the part's raw value, or the trail of a part that was sent
    but emptied, which goes on from there."""
    source = assembly.trails[part]
    moved = assembly.emptied.pop(target, None) or source.fork(field_name)
    moved.apply(" ".join(word.raw for word in moving), reason)
    assembly.words[part] = [word for word in assembly.words[part] if word not in moving]
    source.apply(" ".join(word.raw for word in assembly.words[part]) or None, reason)
    return moved


def _misplaced(words: list[Word], part: str, suffix_sent: bool,
               vocabulary: NameVocabulary) -> list[Word]:
    """Quoted nicknames anywhere, and the suffixes and credentials that close
    a part they do not belong to: a credential in the suffix, a suffix or a
    credential after a given, middle or family name."""
    quoted = [word for word in words if word.kind == "nickname"]
    if part == "suffix":
        return quoted + [word for word in words if word.kind == "credential"]
    end = len(words)
    while end > 1 and is_tail_word(words[end - 1], False, vocabulary) \
            and len(words[end - 1].key) > 1 and not (words[end - 1].kind == "suffix" and suffix_sent):
        end -= 1
    return quoted + words[end:]


_MOVES = (("nickname", "names.nickname_moved"), ("suffix", "names.part_moved"))


def clean_parts(raw: Mapping[str, Any], rules: RuleBook) -> Assembly:
    """Parts sent apart, each on its own trail. A part that is a placeholder is
    kept as sent; words that belong to another part are moved there."""
    vocabulary: NameVocabulary = rules["names"]
    assembly = Assembly()
    for part in PARTS:
        if raw.get(part) is None:
            continue
        trail = Trail(f"name.{part}", raw[part], rules.reasons)
        value = text.tidy(trail)
        if value is None:
            assembly.emptied[part] = trail
            continue
        words = [word for segment in tokenize(value, vocabulary) for word in segment]
        too_long = len(value) > vocabulary.max_length or len(words) > vocabulary.max_words
        code = "names.unparsed" if too_long else _missing_text(value, vocabulary)
        if code:
            trail.revert()
            assembly.as_sent[part] = trail, code
            continue
        assembly.words[part], assembly.trails[part] = words, trail

    # The suffix first: a suffix part that held only a credential can then take
    # the Jr sent in the family name.
    for part in ("suffix", "given", "middle", "family"):
        if part not in assembly.trails:
            continue
        occupied = assembly.trails.keys() | assembly.as_sent.keys()
        misplaced = _misplaced(assembly.words[part], part, "suffix" in occupied, vocabulary)
        for kind, reason in _MOVES:
            moving = [word for word in misplaced if word.kind == kind]
            if moving and kind not in occupied:
                assembly.trails[kind] = _move(assembly, part, moving, kind, f"name.{kind}", reason)
                assembly.words[kind] = moving
        for word in (word for word in misplaced if word.kind == "credential"):
            field_name = f"name.credentials[{len(assembly.credentials)}]"
            assembly.credentials.append(
                (word, _move(assembly, part, [word], "credentials", field_name,
                             "names.part_moved")))
        if not assembly.words[part]:
            del assembly.words[part]
            assembly.emptied[part] = assembly.trails.pop(part)
    if "family" in assembly.words:
        mark_particles(assembly.words["family"], vocabulary)
    return assembly


def clean_name(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    """A free-text `name`, or a dict of the keys that were sent: the parts are
    used when any was sent, and a free text sent beside them comes back as sent."""
    vocabulary: NameVocabulary = rules["names"]
    if not isinstance(raw, Mapping):
        return clean_free_text(raw, options.name_order, rules)
    if not any(raw.get(part) is not None for part in PARTS):
        if raw.get("name") is None:
            return Outcome(None, [])
        return clean_free_text(raw["name"], options.name_order, rules)
    name_trail = Trail("name", raw.get("name"), rules.reasons)
    outcome = assemble(clean_parts(raw, rules), name_trail, vocabulary)
    if raw.get("name") is not None:
        name_trail.flag("names.free_text_unused")
        outcome.value["value"] = raw["name"]
    return outcome


KIND = FieldKind(name="names", input_keys=("name", *PARTS), output_key="name",
                 clean=clean_name, compile_rules=compile_rules)
