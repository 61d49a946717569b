"""The names vocabulary: rules/names.toml and the tables beside it, compiled
once into one immutable structure, and the folding every word is compared in."""

from __future__ import annotations

import functools
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

from marshmallow import Schema, fields, validate

from cleaner import text
from cleaner.rules import LoadContext, RulesError, string_lists

PARTS = ("prefix", "given", "middle", "family", "suffix")
PART_FIELDS = {part: f"name.{part}" for part in (*PARTS, "nickname")}
NAME_PARTS = ("given", "middle", "family")   # the parts a person is known by
NAME_USES = ("usual", "official", "temp", "nickname", "anonymous", "old", "maiden")  # HL7 FHIR R4
FAMILY_FIRST = "family_first"
_QUOTES = "\"“”()[]'‘’"


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
