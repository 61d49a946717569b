"""The cleaned name assembled from its parts' trails: the values, the
credentials, particles, variants, flags, other readings and keys."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from cleaner.fieldkind import Outcome
from cleaner.names.keys import match_keys
from cleaner.names.placeholders import placeholder_marks
from cleaner.names.stages import _part_stages, run_stages, stage_inputs
from cleaner.names.tokens import Word
from cleaner.names.vocabulary import NAME_PARTS, NameVocabulary, fold
from cleaner.trail import Trail


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


def empty_name() -> dict[str, Any]:
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
    return {part: " ".join(_part_stages(stage_inputs(parts[part]), part, vocabulary).written)
            or None for part in NAME_PARTS}


def assemble(assembly: Assembly, name_trail: Trail, vocabulary: NameVocabulary) -> Outcome:
    name = empty_name()
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
