"""Each part's standard form, one change (and one reason) after another."""

from __future__ import annotations

import re

from cleaner.addresses.delivery import Token
from cleaner.addresses.vocabulary import AddressVocabulary
from cleaner.trail import Trail

_ZIP5, _ZIP4 = re.compile(r"^\d{5}$"), re.compile(r"^\d{4}$")
_ZIP_PLUS4 = re.compile(r"^(\d{5})-?(\d{4})$")

# The standard forms, one stage (and one reason) after another.
_LINE_STAGES = ((("number",), "addresses.number_words"),
                (("predirectional", "postdirectional"), "addresses.directional_abbreviated"),
                (("suffix",), "addresses.suffix_standardised"),
                (("pretype",), "addresses.route_type_written"),
                (("unit_type", "unit"), "addresses.unit_standardised"),
                (("form", "military_unit_type"), "addresses.box_standardised"))
_STAGE_OF_ROLE = {role: stage for stage, (roles, _) in enumerate(_LINE_STAGES) for role in roles}


def standardise_line(trail: Trail, tokens: list[Token]) -> None:
    written = [token.word for token in tokens]
    rewrites: dict[int, list[int]] = {}   # stage -> the tokens whose words it rewrites
    for index, token in enumerate(tokens):
        stage = _STAGE_OF_ROLE.get(token.role)
        if stage is not None and token.standard != token.word:
            rewrites.setdefault(stage, []).append(index)
    for stage, (_, reason) in enumerate(_LINE_STAGES):
        # A stage that rewrites no word would record nothing, but the first
        # one also writes the tokens in their order (units after the street).
        if stage and stage not in rewrites:
            continue
        for index in rewrites.get(stage, ()):
            written[index] = tokens[index].standard
        trail.apply(" ".join(filter(None, written)), reason)



_NORMALISING = ("addresses.upper_cased", "addresses.diacritics_folded",
                "addresses.punctuation_removed")


def record_normalising(trail: Trail, stages: tuple[str, str, str]) -> str:
    """Upper case, accents and punctuation, each a change of its own."""
    for stage, reason in zip(stages, _NORMALISING):
        trail.apply(stage, reason)
    return trail.value


def clean_zip(trail: Trail, value: str, state: str | None, vocabulary: AddressVocabulary
              ) -> tuple[str | None, list[str]]:
    """The ZIP code in its standard form (None when malformed) and the flags it raises."""
    compact = value.replace(" ", "")
    plus4 = _ZIP_PLUS4.match(compact)
    if plus4:
        zip_code = trail.apply(f"{plus4[1]}-{plus4[2]}", "addresses.zip_formatted")
    elif _ZIP5.match(compact):
        zip_code = trail.apply(compact, "addresses.zip_formatted")
    elif _ZIP4.match(compact) and state in vocabulary.zero_zip_states:
        zip_code = trail.apply("0" + compact, "addresses.zip_leading_zero_restored")
        trail.flag("addresses.zip_leading_zero")
    else:
        trail.flag("addresses.zip_malformed")
        trail.revert(since="addresses.split_into_parts")
        return None, []
    digits = vocabulary.zip_first_digits.get(state or "")
    if digits and zip_code[0] not in digits:
        trail.flag("addresses.zip_state_mismatch")
    return zip_code, ["addresses.placeholder"] if zip_code[:5] in vocabulary.placeholder_zips else []


def clean_state(trail: Trail, words: list[str], vocabulary: AddressVocabulary) -> str | None:
    code = vocabulary.states.get(tuple(words))
    if code is None:
        trail.flag("addresses.state_unrecognised")
        trail.revert(since="addresses.split_into_parts")
        return None
    return trail.apply(code, "addresses.state_standardised")

