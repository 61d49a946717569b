"""The delivery line read by its form: PO box, rural route, highway contract,
military, general delivery, or a street with its units; each word a token
with its role and its standard form."""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import NamedTuple

from cleaner.addresses.vocabulary import AddressVocabulary

_HAS_DIGIT = re.compile(r"\d")
_HOUSE_NUMBER = re.compile(r"^(?:\d+[A-Z]?|\d+-\d+[A-Z]?|[A-Z]?\d+[A-Z]\d+|\d+\.\d+|[A-Z]\d+)$")
_FRACTION = re.compile(r"^\d+/\d+$")
_ORDINAL = re.compile(r"^(\d+)(?:ST|ND|RD|TH)$")
_IDENTIFIER = re.compile(r"^(?:[A-Z0-9]+(?:-[A-Z0-9]+)?)$")

class Token(NamedTuple):   # immutable, as the street cache shares its tokens between lines
    word: str                # as normalised
    role: str                # number, fraction, predirectional, street, suffix, postdirectional,
    #                          unit_type, unit, form, box, route, military_unit_type, military_unit
    standard: str            # as written in the standard form; "" when it joins the word before


UNIT_ROLES = frozenset(("unit_type", "unit"))


@dataclass(slots=True)
class DeliveryLine:
    kind: str
    tokens: list[Token]
    has_number: bool = True


def _phrase_at(words: list[str], start: int, table: Mapping[tuple[str, ...], str]) -> int | None:
    """End of the longest phrase of `table` that starts at `start`."""
    for length in range(min(4, len(words) - start), 0, -1):
        if tuple(words[start:start + length]) in table:
            return start + length
    return None


def _form_tokens(words: list[str], end: int, standard: str, role: str = "form") -> list[Token]:
    """The words of a form's phrase: the first carries the standard words, the rest join it."""
    return [Token(word, role, standard if index == 0 else "")
            for index, word in enumerate(words[:end])]


def _is_identifier(word: str, needs_digit: bool = True) -> bool:
    return _IDENTIFIER.match(word) is not None and (not needs_digit or bool(_HAS_DIGIT.search(word)))


def _boxed(words: list[str], start: int, vocabulary: AddressVocabulary) -> list[Token] | None:
    """BOX n closing a line from `start`."""
    end = _phrase_at(words, start, vocabulary.forms["box"])
    if end is None or end != len(words) - 1 or not _is_identifier(words[end]):
        return None
    return _form_tokens(words[start:], end - start, "BOX") + [Token(words[end], "box", words[end])]


def read_form(words: list[str], vocabulary: AddressVocabulary,
               military_context: bool) -> DeliveryLine | None:
    """The delivery forms that are not streets (Pub 28 sections 225, 24 to 28),
    read without the filler words (NO., #) that those lines drop."""
    if words[0] not in vocabulary.form_openers and words[0] not in vocabulary.form_fillers:
        return None   # the street lines that most feeds hold, answered before any copy
    kept = [word for word in words if word not in vocabulary.form_fillers]
    if not kept or kept[0] not in vocabulary.form_openers:
        return None
    line = _read_form_words(kept, vocabulary, military_context)
    if line is None or len(kept) == len(words):
        return line
    tokens = iter(line.tokens)
    line.tokens = [Token(word, "form", "") if word in vocabulary.form_fillers else next(tokens)
                   for word in words]
    return line


def _read_form_words(words: list[str], vocabulary: AddressVocabulary,
                     military_context: bool) -> DeliveryLine | None:
    forms = vocabulary.forms
    end = _phrase_at(words, 0, forms["general_delivery"])
    if end == len(words):
        return DeliveryLine("general_delivery", _form_tokens(words, end, "GENERAL DELIVERY"))
    end = _phrase_at(words, 0, forms["po_box"])
    if end == len(words) - 1 and _is_identifier(words[end]):
        return DeliveryLine("po_box", _form_tokens(words, end, "PO BOX")
                            + [Token(words[end], "box", words[end])])
    for kind, standard, number_role in (("rural_route", "RR", "route"),
                                        ("highway_contract", "HC", "route"),
                                        ("military", None, "military_unit")):
        end = _phrase_at(words, 0, forms[kind])
        if end is None or end >= len(words) - 2 or not _is_identifier(words[end]) \
                or (kind == "military" and not military_context):
            continue
        box = _boxed(words, end + 1, vocabulary)
        if box is not None:
            head_role = "military_unit_type" if kind == "military" else "form"
            head = _form_tokens(words, end, standard or forms[kind][tuple(words[:end])], head_role)
            return DeliveryLine(kind, head + [Token(words[end], number_role, words[end])] + box)
    return None


def unit_group(words: list[str], start: int, vocabulary: AddressVocabulary) -> int | None:
    """End of one secondary unit at `start`: a designator and its number, a
    designator that needs none (REAR), or '#' and a number."""
    if start >= len(words):
        return None
    if tuple(words[start:start + 2]) in vocabulary.unit_phrases:
        return start + 2   # LOWER LEVEL
    word = words[start]
    if word == "#":
        return start + 2 if start + 1 < len(words) and _is_identifier(words[start + 1], False) \
            else None
    designator = vocabulary.units.get(word)
    if designator is None:
        return start + 2 if floor_number(words, start, vocabulary) else None
    after = start + 1
    if after < len(words) and words[after] == "#":
        after += 1
    if after < len(words) and _is_identifier(words[after], needs_digit=len(words[after]) > 1):
        return after + 1
    return start + 1 if designator in vocabulary.units_without_range else None


def units_from(words: list[str], start: int, vocabulary: AddressVocabulary) -> int | None:
    """The end of a run of units from `start` to the end of `words`, or None."""
    at = start
    while at < len(words):
        end = unit_group(words, at, vocabulary)
        if end is None:
            return None
        at = end
    return at


def floor_number(words: list[str], start: int, vocabulary: AddressVocabulary) -> str | None:
    """The number of a floor written before its designator (15TH FLOOR, SECOND FL)."""
    if start + 1 >= len(words) or vocabulary.units.get(words[start + 1]) \
            not in vocabulary.units_after_number:
        return None
    word = words[start]
    ordinal = _ORDINAL.match(word)
    return ordinal[1] if ordinal else vocabulary.ordinal_words.get(word) or (
        word if word.isdigit() or word in vocabulary.floor_names else None)


def _closed(tokens: list[Token], vocabulary: AddressVocabulary) -> bool:
    """The units so far end in a designator that takes no number (UPPR REAR)."""
    designator = next((token.standard for token in reversed(tokens) if token.standard), "")
    return tokens[-1].role == "unit_type" and designator in vocabulary.units_without_range


def unit_tokens(words: list[str], vocabulary: AddressVocabulary) -> list[Token]:
    """The units' tokens, a designator first: 15TH FLOOR is FL 15."""
    tokens: list[Token] = []
    skip = False
    for at, word in enumerate(words):
        if skip:
            skip = False
            continue
        if (phrase := vocabulary.unit_phrases.get(tuple(words[at:at + 2]))) is not None:
            tokens += [Token(word, "unit_type", phrase), Token(words[at + 1], "unit_type", "")]
            skip = True
        elif (number := floor_number(words, at, vocabulary)) is not None:
            designator = words[at + 1]
            tokens += [Token(designator, "unit_type", vocabulary.units[designator]),
                       Token(word, "unit", number)]
            skip = True
        elif word == "#" and tokens and tokens[-1].role == "unit_type" and tokens[-1].word != "#":
            tokens.append(Token(word, "unit_type", ""))   # APT # 7 is APT 7
        elif word == "#" or (word in vocabulary.units and (
                not tokens or tokens[-1].role == "unit" or _closed(tokens, vocabulary))):
            tokens.append(Token(word, "unit_type", vocabulary.units.get(word, "#")))
        else:
            tokens.append(Token(word, "unit", word))
    return tokens


def _read_street(words: list[str], vocabulary: AddressVocabulary) -> DeliveryLine | None:
    """NUMBER [FRACTION] [PREDIR] STREET [SUFFIX] [POSTDIR] [UNITS], with units
    also allowed before the street (LOT 4 PINE LN) or the whole line (APT 4B
    12 ELM ST) and a bare unit number after the suffix written with '#'."""
    lead = 0
    while (end := unit_group(words, lead, vocabulary)) is not None and end < len(words):
        lead = end
    if lead and house_number(words[lead], vocabulary) is not None:
        line = _read_street(words[lead:], vocabulary)
        if line is not None:
            line.tokens += unit_tokens(words[:lead], vocabulary)
        return line
    tokens: list[Token] = []
    at = 0
    number = house_number(words[0], vocabulary)
    if number is not None:
        tokens.append(number)
        at = 1
        if at < len(words) and _FRACTION.match(words[at]):
            tokens.append(Token(words[at], "fraction", words[at]))
            at += 1
    after_number = _street_and_units(tuple(words[at:]), vocabulary)
    if after_number is None:
        return None
    named, units = after_number
    has_number = at > 0
    if not has_number and named[0].word not in vocabulary.spanish_street_types and (
            not any(token.role == "suffix" for token in named)
            or sum(token.role == "street" for token in named) > 2):
        return None   # without a number, only a short name and a suffix, or CALLE 5, make a street
    return DeliveryLine("street", [*tokens, *named, *units], has_number)


# Feeds repeat their house numbers, and their streets and units across house
# numbers, and the search for where a line without commas ends reads every
# start of the line: each distinct number and street is read once per process.
@functools.lru_cache(maxsize=4096)
def house_number(word: str, vocabulary: AddressVocabulary) -> Token | None:
    """The word as a house number (a number word in digits), or None."""
    number = vocabulary.number_words.get(word)
    return Token(word, "number", number or word) if number or _HOUSE_NUMBER.match(word) else None


@functools.lru_cache(maxsize=16384)
def _street_and_units(words: tuple[str, ...], vocabulary: AddressVocabulary
                      ) -> tuple[tuple[Token, ...], tuple[Token, ...]] | None:
    """The street's tokens and its units' (those before the street moved after
    it), from the words that follow the house number."""
    at = 0
    while (end := unit_group(words, at, vocabulary)) is not None and end < len(words):
        at = end
    units_before = unit_tokens(words[:at], vocabulary)
    rest = words[at:]
    cut = next((index for index in range(1, len(rest))
                if units_from(rest, index, vocabulary) is not None), len(rest))
    street, units_after = rest[:cut], unit_tokens(rest[cut:], vocabulary)
    if len(street) >= 3 and _is_identifier(street[-1]) and street[-2] in vocabulary.suffixes \
            and street[-2] not in vocabulary.route_types:   # STATE HIGHWAY 16 is a name
        units_after = [Token("#", "unit_type", "#"), Token(street[-1], "unit", street[-1])] \
            + units_after
        street = street[:-1]
    named = _street_tokens(street, vocabulary)
    if named is None:
        return None
    return tuple(named), (*units_before, *units_after)


def _street_tokens(words: list[str], vocabulary: AddressVocabulary) -> list[Token] | None:
    """Predirectional, name, suffix and postdirectional, peeled from the ends
    so long as a name is left: NORTH ST is the street NORTH."""
    if not words or not all(word.isalnum() for word in words):
        return None
    end, start = len(words), 0
    post = suffix = pre = None
    if end - start >= 2 and words[end - 1] in vocabulary.directionals:
        end -= 1
        post = Token(words[end], "postdirectional", vocabulary.directionals[words[end]])
    if end - start >= 2 and words[end - 1] in vocabulary.suffixes:
        end -= 1
        suffix = Token(words[end], "suffix", vocabulary.suffixes[words[end]])
    if end - start >= 2 and words[start] in vocabulary.directionals:
        pre = Token(words[start], "predirectional", vocabulary.directionals[words[start]])
        start += 1
    name = [Token(word, "pretype", vocabulary.route_types[word])
            if word in vocabulary.route_types and route_number(words[at + 1:end])
            else Token(word, "street", word) for at, word in enumerate(words[start:end], start)]
    return [token for token in (pre, *name, suffix, post) if token is not None]


def route_number(words: list[str]) -> bool:
    """What follows a route's type is its number or letter (16, K, 1960, A1A)."""
    return len(words) == 1 and (len(words[0]) == 1 or _HAS_DIGIT.search(words[0]) is not None)


def read_delivery_line(words: list[str], vocabulary: AddressVocabulary,
                       military_context: bool) -> DeliveryLine | None:
    if not words:
        return None
    return read_form(words, vocabulary, military_context) or _read_street(words, vocabulary)


def components(tokens: list[Token], vocabulary: AddressVocabulary) -> dict[str, str]:
    """The line's components by name: a type written before the name is part
    of the street's name (STATE HIGHWAY 16); of several units the last that is
    not a building or a private mailbox is the unit, and the others are kept
    in their order as other_units (BLDG C before STE 200)."""
    found: dict[str, str] = {}
    units: list[list[str]] = []
    for token in tokens:
        if token.role == "form" or not token.standard:
            continue
        if token.role == "unit_type":
            units.append([token.standard])
        elif token.role == "unit":
            if not units or len(units[-1]) > 1:
                units.append(["#"])
            units[-1].append(token.standard)
        else:
            role = _COMPONENT_OF_ROLE.get(token.role, token.role)
            found[role] = f"{found[role]} {token.standard}" if role in found else token.standard
    inner = [at for at, unit in enumerate(units) if unit[0] not in vocabulary.outer_units]
    if units:
        chosen = units.pop(inner[-1] if inner else -1)
        found["unit_type"] = chosen[0]
        if len(chosen) > 1:
            found["unit"] = chosen[1]
        if units:
            found["other_units"] = " ".join(word for unit in units for word in unit)
    return found


_COMPONENT_OF_ROLE = {"fraction": "number", "pretype": "street"}