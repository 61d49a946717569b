"""Person names: free text or parts, as HL7 FHIR HumanName parts with
particle-aware family names, restored case, nickname variants, placeholder
marks and phonetic match keys.

Free text goes through small named stages: tokenize (words, commas, quoted
nicknames), classify (title, suffix, credential, initial, number, word),
group (comma segments, titles in front, suffixes and credentials behind),
order (given or family first, inferred only with a flag), assign (family
group with its particles, given, middles, newborn names), and assemble, where
each part's words go through look-alike repair, punctuation, case and
standard forms on the part's own trail. Parts sent apart go through the same
classification and stages. The vocabulary is rules/names.toml; nothing here
knows a particular name.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, NamedTuple

import jellyfish
from marshmallow import Schema, fields, validate
from unidecode import unidecode

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook, RulesError, string_lists
from cleaner.trail import Trail

PARTS = ("prefix", "given", "middle", "family", "suffix")
_PART_FIELDS = {part: f"name.{part}" for part in (*PARTS, "nickname")}
_NAME_PARTS = ("given", "middle", "family")   # the parts a person is known by
NAME_USES = ("usual", "official", "temp", "nickname", "anonymous", "old", "maiden")  # HL7 FHIR R4
FAMILY_FIRST = "family_first"

# A nickname is set apart by double quotes, curly quotes, brackets, or single
# quotes that stand free (so the apostrophe of O'Brien is not one).
_TOKEN = re.compile(r"""(?P<quoted>"[^"]*"|''[^']+''|“[^”]*”|\([^)]*\)|\[[^\]]*\]"""
                    r"""|(?<![^\s,])['‘][^'’]+['’](?![^\s,]))|(?P<comma>,)|(?P<word>[^\s,]+)""")
_QUOTES = "\"“”()[]'‘’"
_NOT_LETTER = re.compile(r"[^A-Z]")
_APOSTROPHE_PREFIX = re.compile(r"^(\w)(['’])(\w)")
# What a name word may hold besides letters: apostrophes, hyphens, periods.
_NAME_WORD = re.compile(r"^[^\W\d_](?:[^\W\d_]|[\-'’.])*$")
_VOWEL = re.compile(r"[AEIOUY]")
_ASCII_LETTER = re.compile(r"[A-Za-z]")


# --- vocabulary ---------------------------------------------------------------

@dataclass(frozen=True)
class PlaceholderGroup:
    code: str
    texts: frozenset[str]        # whole values, case folded
    words: frozenset[str]
    pattern: str | None          # the group's patterns as one alternation
    names: tuple[frozenset[str], ...]
    marks_given: bool            # newborn names: the given group gathers round the word
    use: str | None              # the HL7 FHIR NameUse of a name holding the group's words


@dataclass(frozen=True, eq=False)
class NameVocabulary:
    """What rules/names.toml says, compiled once: the one object to replace
    to read names of other conventions. Hashed by identity, so the word
    caches below can key on it."""
    max_length: int
    max_words: int
    titles: Mapping[str, str]
    title_qualifiers: frozenset[str]       # STATE of STATE SENATOR
    iberian_surnames: frozenset[str]       # two of them make a two-part family name
    alias_markers: frozenset[str]          # AKA: what follows is another name
    credential_phrases: tuple[tuple[str, ...], ...]   # ATTORNEY AT LAW, its words folded
    glued_prefixes: frozenset[str]         # MC, MAC, O typed apart from the name they begin
    suffixes: Mapping[str, str]
    credentials: Mapping[str, str]
    comma_only_credentials: frozenset[str]
    particles: Mapping[tuple[str, ...], str]   # folded words -> written form
    longest_particle: int
    particle_starts: frozenset[str]   # the first folded word of each particle
    particle_ends: frozenset[str]     # the last folded word of each particle
    hyphen_particles: Mapping[str, str]
    joiners: frozenset[str]
    family_first_surnames: frozenset[str]
    surnames_not_given: frozenset[str]
    surnames: frozenset[str]
    given_names: frozenset[str]
    given_births: Mapping[str, int]        # SSA births by given name, the common ones only
    common_given_births: int               # from this many births a word reads as a given name
    variants: Mapping[str, tuple[str, ...]]
    mac_names: Mapping[str, str]
    lookalikes: Mapping[str, tuple[str, str]]
    no_middle: frozenset[str]
    fillers: frozenset[str]
    no_name_texts: frozenset[str]
    groups: tuple[PlaceholderGroup, ...]
    placeholder_words: Mapping[str, PlaceholderGroup]
    placeholder_name_words: frozenset[str]   # every word of the groups' names
    placeholder_texts: Mapping[str, str]     # whole values, case folded -> the first group's code
    placeholder_patterns: re.Pattern[str] | None   # every group's patterns, one named group each

    def use_of(self, codes: Iterable[str]) -> str | None:
        """The FHIR NameUse the placeholder codes give a name, if any gives one."""
        for code in codes:
            for group in self.groups:
                if group.code == code and group.use:
                    return group.use
        return None

    def placeholder_group(self, key: str) -> PlaceholderGroup | None:
        group = self.placeholder_words.get(key)
        if group is None and self.placeholder_patterns is not None:
            match = self.placeholder_patterns.search(key)
            if match:
                group = self.groups[int(match.lastgroup[1:])]
        return group


_WORD = validate.Regexp(r"^[^\s,]+$", error="must be one word")

_GroupSchema = Schema.from_dict({
    "code": fields.String(required=True),
    "texts": fields.List(fields.String(), required=True),
    "words": fields.List(fields.String(validate=_WORD), required=True),
    "patterns": fields.List(fields.String(), required=True),
    "names": fields.List(fields.List(fields.String(validate=_WORD), validate=validate.Length(min=2)),
                         required=True),
    "part": fields.String(required=True, validate=validate.OneOf(("given", "word"))),
    "use": fields.String(load_default=None, validate=validate.OneOf(NAME_USES)),
})

_PlaceholdersSchema = Schema.from_dict({
    **string_lists("fillers", "no_name_texts"),
    "groups": fields.List(fields.Nested(_GroupSchema), required=True),
})

_NameRulesSchema = Schema.from_dict({
    "max_length": fields.Integer(required=True, strict=True, validate=validate.Range(min=20)),
    "max_words": fields.Integer(required=True, strict=True, validate=validate.Range(min=4)),
    **{name: fields.Dict(keys=fields.String(validate=_WORD), values=fields.String(), required=True)
       for name in ("titles", "generational_suffixes", "credentials")},
    **string_lists("credentials_after_comma_only", "title_qualifiers", "iberian_surnames",
                   "alias_markers", "glued_prefixes", "particles", "hyphenated_particles",
                   "surname_joiners", "family_first_surnames", "extra_given_names",
                   "mac_surnames", "no_middle_names"),
    "surnames_table": fields.String(required=True),
    "nicknames_table": fields.String(required=True),
    "credential_phrases": fields.Dict(keys=fields.String(), values=fields.String(), required=True),
    "given_names_table": fields.String(required=True),
    "common_given_births": fields.Integer(required=True, strict=True,
                                          validate=validate.Range(min=1000)),
    "lookalikes": fields.Dict(keys=fields.String(validate=validate.Regexp(r"^\d$")),
                              values=fields.List(fields.String(validate=validate.Length(equal=1)),
                                                 validate=validate.Length(equal=2)), required=True),
    "placeholders": fields.Nested(_PlaceholdersSchema, required=True),
})



# Intake data repeats its words (given names, common surnames), and folding
# through unidecode is the dearest step of reading one; each distinct word is
# folded once per process.
@functools.lru_cache(maxsize=16384)
def fold(word: str) -> str:
    """A word as the vocabulary lists it: ASCII, case folded, no periods or quotes."""
    return text.fold(word).replace(".", "").strip(_QUOTES)


def _folded_map(table: Mapping[str, str]) -> Mapping[str, str]:
    return MappingProxyType({fold(key): value for key, value in table.items()})


def _read_surnames(context: LoadContext, name: str) -> dict[str, bool]:
    rows = context.read_csv(name)
    surnames = {}
    for number, row in enumerate(rows, start=1):
        if row.get("also_given") not in ("yes", "no") or not row.get("surname"):
            raise RulesError(f"names: {name} row {number} needs a surname and also_given yes or no")
        surnames[fold(row["surname"])] = row["also_given"] == "yes"
    return surnames


_INITIAL_LETTER = re.compile(r"(?:^|(?<=[.\- ]))([a-z])")


def _read_variants(context: LoadContext, name: str) -> dict[str, tuple[str, ...]]:
    """Each name's nicknames and the names it is a nickname of, one hop both
    ways, keyed by the folded name and written with capitals (K.C., Mary-Ann)."""
    linked: dict[str, set[str]] = {}
    for number, row in enumerate(context.read_csv(name), start=1):
        first, second = (row.get("name") or "").strip(), (row.get("nickname") or "").strip()
        if not first or not second:
            raise RulesError(f"names: {name} row {number} needs a name and a nickname")
        for one, other in ((first, second), (second, first)):
            linked.setdefault(fold(one), set()).add(
                _INITIAL_LETTER.sub(lambda letter: letter[1].upper(), other.lower()))
    return {key: tuple(sorted(variant for variant in others if fold(variant) != key))
            for key, others in linked.items()}


def _compile_groups(loaded: dict[str, Any], context: LoadContext) -> tuple[PlaceholderGroup, ...]:
    groups = []
    for entry in loaded["groups"]:
        context.require_codes([entry["code"]], "placeholders.groups")
        pattern = "|".join(f"(?:{item})" for item in entry["patterns"]) or None
        try:
            if pattern:
                re.compile(pattern)
        except re.error as exc:
            raise RulesError(f"names: a placeholder pattern of {entry['code']} is invalid: {exc}") \
                from None
        groups.append(PlaceholderGroup(
            code=entry["code"], texts=frozenset(item.casefold() for item in entry["texts"]),
            words=frozenset(map(fold, entry["words"])), pattern=pattern,
            names=tuple(frozenset(map(fold, words)) for words in entry["names"]),
            marks_given=entry["part"] == "given", use=entry["use"]))
    return tuple(groups)


def compile_rules(data: dict[str, Any], context: LoadContext) -> NameVocabulary:
    loaded = context.validated(_NameRulesSchema(), data)
    placeholders = loaded["placeholders"]
    particles = {tuple(fold(word) for word in particle.split()): particle
                 for particle in loaded["particles"]}
    surnames = _read_surnames(context, loaded["surnames_table"])
    variants = _read_variants(context, loaded["nicknames_table"])
    groups = _compile_groups(placeholders, context)
    placeholder_texts: dict[str, str] = {}
    placeholder_words: dict[str, PlaceholderGroup] = {}
    for group in groups:
        for item in group.texts:
            placeholder_texts.setdefault(item, group.code)
        for word in group.words:
            if placeholder_words.setdefault(word, group) is not group:
                raise RulesError(f"names: the placeholder word {word!r} is in two groups")
    return NameVocabulary(
        max_length=loaded["max_length"], max_words=loaded["max_words"],
        titles=_folded_map(loaded["titles"]),
        title_qualifiers=frozenset(map(fold, loaded["title_qualifiers"])),
        iberian_surnames=frozenset(map(fold, loaded["iberian_surnames"])),
        glued_prefixes=frozenset(map(fold, loaded["glued_prefixes"])),
        alias_markers=frozenset(fold(marker).replace(" ", "") for marker in loaded["alias_markers"]),
        suffixes=_folded_map(loaded["generational_suffixes"]),
        credentials=_folded_map({**loaded["credentials"], **loaded["credential_phrases"]}),
        credential_phrases=tuple(tuple(fold(word) for word in phrase.split())
                                 for phrase in loaded["credential_phrases"]),
        comma_only_credentials=frozenset(map(fold, loaded["credentials_after_comma_only"])),
        particles=MappingProxyType(particles), longest_particle=max(map(len, particles)),
        particle_starts=frozenset(words[0] for words in particles if words),
        particle_ends=frozenset(words[-1] for words in particles if words),
        hyphen_particles=_folded_map({word: word for word in loaded["hyphenated_particles"]}),
        joiners=frozenset(map(fold, loaded["surname_joiners"])),
        family_first_surnames=frozenset(map(fold, loaded["family_first_surnames"])),
        surnames_not_given=frozenset(name for name, given in surnames.items() if not given),
        surnames=frozenset(surnames),
        given_names=frozenset(variants) | frozenset(map(fold, loaded["extra_given_names"])),
        given_births=MappingProxyType({fold(row["name"]): int(row["births"])
                                       for row in context.read_csv(loaded["given_names_table"])}),
        common_given_births=loaded["common_given_births"],
        variants=MappingProxyType(variants),
        mac_names=_folded_map({name: name for name in loaded["mac_surnames"]}),
        lookalikes=MappingProxyType({digit: tuple(forms)
                                     for digit, forms in loaded["lookalikes"].items()}),
        no_middle=frozenset(map(fold, loaded["no_middle_names"])),
        fillers=frozenset(map(fold, placeholders["fillers"])),
        no_name_texts=frozenset(item.casefold() for item in placeholders["no_name_texts"]),
        groups=groups, placeholder_words=MappingProxyType(placeholder_words),
        placeholder_name_words=frozenset().union(*(name for group in groups
                                                   for name in group.names)),
        placeholder_texts=MappingProxyType(placeholder_texts),
        placeholder_patterns=re.compile("|".join(
            f"(?P<g{index}>{group.pattern})" for index, group in enumerate(groups)
            if group.pattern)) if any(group.pattern for group in groups) else None)


# --- tokenize and classify -----------------------------------------------------

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


# --- group, order and assign ----------------------------------------------------

@dataclass
class Reading:
    """Which words make which part, and what was inferred on the way."""
    parts: dict[str, list[Word]] = field(default_factory=lambda: {part: [] for part in PARTS})
    nickname: list[Word] = field(default_factory=list)
    credentials: list[Word] = field(default_factory=list)
    flags: list[str] = field(default_factory=list)
    alternatives: list[dict[str, list[Word]]] = field(default_factory=list)


def _is_tail_word(word: Word, after_comma: bool, vocabulary: NameVocabulary) -> bool:
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
    while end > keep and _is_tail_word(words[end - 1], False, vocabulary) \
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


def _mark_particles(family: list[Word], vocabulary: NameVocabulary) -> None:
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
        if segment and all(_is_tail_word(word, True, vocabulary) for word in segment):
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
    _mark_particles(reading.parts["middle"], vocabulary)
    _mark_particles(reading.parts["family"], vocabulary)
    parts = reading.parts
    if len(parts["given"]) + len(parts["middle"]) + len(parts["family"]) == 1:
        reading.flags.append("names.single_word")
    return reading


# --- placeholders -----------------------------------------------------------------

def _placeholder_only(value: str, words: list[Word], vocabulary: NameVocabulary) -> str | None:
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
    for part in _NAME_PARTS:
        for word in parts.get(part, ()):
            keys.add(word.key)
            if word.placeholder is not None:
                marked.add(part)
                if word.placeholder.code not in codes:
                    codes.append(word.placeholder.code)
    whole = _name_placeholder(keys, vocabulary)
    if whole:
        return [whole], set(_NAME_PARTS)
    return codes, marked


# --- each part's stages: look-alikes, punctuation, case, standard form -------

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


def _stage_inputs(words: list[Word]) -> StageInputs:
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
    staged = _part_stages(_stage_inputs(words), part, vocabulary)
    for value, reason in staged.steps:
        trail.apply(value, reason)
    for code in staged.flags:
        trail.flag(code)
    return staged.written


# --- match keys -----------------------------------------------------------------

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


# --- assemble --------------------------------------------------------------------

@dataclass
class Assembly:
    """What the assembler gets from either input form: each part's words and
    the trail that carries them, credentials with theirs, parts kept as sent,
    and the whole name's flags and alternative readings."""
    words: dict[str, list[Word]] = field(default_factory=dict)
    trails: dict[str, Trail] = field(default_factory=dict)
    credentials: list[tuple[Word, Trail]] = field(default_factory=list)
    as_sent: dict[str, tuple[Trail, str]] = field(default_factory=dict)  # kept as sent, and why
    emptied: dict[str, Trail] = field(default_factory=dict)   # parts that end null
    flags: list[str] = field(default_factory=list)
    alternatives: list[dict[str, list[Word]]] = field(default_factory=list)


def _empty_name() -> dict[str, Any]:
    return {"prefix": None, "given": None, "middle": None, "family": None, "suffix": None,
            "nickname": None, "credentials": [], "particles": None, "given_variants": [],
            "alternatives": [], "use": None, "placeholder": False, "valid": True}


def _written_particles(family: list[Word], written: Sequence[str]) -> list[str]:
    """The family name's particles as the name is written (van, Van, al)."""
    return [form.split("-")[0] if word.hyphen_particle else form
            for word, form in zip(family, written) if word.particle or word.hyphen_particle]


def _given_variants(given: list[Word], written: Sequence[str],
                    vocabulary: NameVocabulary) -> list[str]:
    if given[0].kind in ("initial", "number"):
        return []
    return list(vocabulary.variants.get(fold(written[0]), ()))


def _alternative(parts: Mapping[str, list[Word]], vocabulary: NameVocabulary) -> dict[str, Any]:
    return {part: " ".join(_part_stages(_stage_inputs(parts[part]), part, vocabulary).written)
            or None for part in _NAME_PARTS}


def assemble(assembly: Assembly, name_trail: Trail, vocabulary: NameVocabulary) -> Outcome:
    name = _empty_name()
    trails: list[Trail] = []
    written: dict[str, tuple[str, ...]] = {}
    for part, trail in assembly.trails.items():
        words = assembly.words[part]
        trails.append(trail)
        if part == "middle" and vocabulary.no_middle.issuperset([word.key for word in words]):
            trail.apply(None, "names.no_middle_cleared")
            continue
        written[part] = run_stages(trail, words, part, vocabulary)
        name[part] = trail.value
    for part, (trail, _) in assembly.as_sent.items():
        name[part] = trail.value
        trails.append(trail)
    trails += assembly.emptied.values()
    for word, trail in assembly.credentials:
        run_stages(trail, [word], "credentials", vocabulary)
        name["credentials"].append(trail.value)
        trails.append(trail)
    if assembly.credentials:
        name_trail.flag("names.credentials_found")

    family = assembly.words.get("family", [])
    name["particles"] = " ".join(_written_particles(family, written.get("family", ()))) or None
    codes, placeholder_parts = placeholder_marks(assembly.words, vocabulary)
    as_sent_codes = [code for _, code in assembly.as_sent.values()]
    for code in [*codes, *as_sent_codes, *assembly.flags]:
        name_trail.flag(code)
    name["placeholder"] = bool(codes) or any(code != "names.unparsed" for code in as_sent_codes)
    placeholder_parts |= set(assembly.as_sent)  # no keys from a value kept as sent
    name["use"] = vocabulary.use_of(codes)
    name["alternatives"] = [_alternative(parts, vocabulary) for parts in assembly.alternatives]
    given = None if "given" in placeholder_parts else name["given"]
    if given:
        name["given_variants"] = _given_variants(assembly.words["given"], written["given"],
                                                 vocabulary)
    family_written = [] if "family" in placeholder_parts or "family" not in written \
        else list(zip(family, written["family"]))
    keys = match_keys(given, family_written, vocabulary)
    return Outcome(name, trails + [name_trail], keys)


# --- the two input forms ------------------------------------------------------------

def _unparsed(trail: Trail, code: str, vocabulary: NameVocabulary) -> Outcome:
    trail.flag(code)
    name = _empty_name()
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
        else _missing_text(value, vocabulary) or _placeholder_only(value, words, vocabulary)
    if problem:
        return _unparsed(trail, problem, vocabulary)
    reading = read_name(segments, order, vocabulary)
    assembly = Assembly(flags=reading.flags, alternatives=reading.alternatives)
    for part, part_words in [*reading.parts.items(), ("nickname", reading.nickname)]:
        if part_words:
            assembly.words[part] = part_words
            assembly.trails[part] = trail.split_off(
                _PART_FIELDS[part], " ".join([word.raw for word in part_words]),
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
    while end > 1 and _is_tail_word(words[end - 1], False, vocabulary) \
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
        _mark_particles(assembly.words["family"], vocabulary)
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
