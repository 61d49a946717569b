"""US postal addresses in the USPS Publication 28 standard form.

A one-line address goes through named stages, each recorded on the trail:
the text step; upper case, accents folded and punctuation removed on the
whole line; the last line split off by rule from the right (ZIP, state, then
the city after the last comma); the delivery line read by its form (PO box,
rural route, highway contract, military, general delivery, street) into
components; and each component written in its standard form. Without
commas, usaddress's tagger finds where the street ends and the city begins,
with our correction for towns that begin with a direction word. Parts sent
apart go through the same stages. The vocabulary is rules/addresses.toml and
the Pub 28 tables beside it; nothing here knows a particular place.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, NamedTuple

import usaddress
from marshmallow import Schema, fields, validate
from unidecode import unidecode

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook, RulesError, string_lists
from cleaner.trail import Trail

PARTS = ("line1", "line2", "city", "state", "postal_code", "country")
_PART_FIELDS = {part: f"address.{part}" for part in PARTS}

_ABBREVIATION_PERIOD = re.compile(r"\b([A-Z])\.")   # P.O., N.E., D.C.
_MARK = re.compile(r"[^\w\s,#]|_")
_HASH = re.compile(r"\s*#\s*")
_SPACES = re.compile(r"\s+")
_SPACED_COMMA = re.compile(r"\s*,[\s,]*")
_HAS_DIGIT = re.compile(r"\d")
_NOT_IN_KEY = re.compile(r"[^\w/]|_")
_HOUSE_NUMBER = re.compile(r"^(?:\d+[A-Z]?|\d+-\d+[A-Z]?|[A-Z]?\d+[A-Z]\d+|\d+\.\d+|[A-Z]\d+)$")
_FRACTION = re.compile(r"^\d+/\d+$")
_IDENTIFIER = re.compile(r"^(?:[A-Z0-9]+(?:-[A-Z0-9]+)?)$")
_ZIP5, _ZIP4 = re.compile(r"^\d{5}$"), re.compile(r"^\d{4}$")
_ZIP_PLUS4 = re.compile(r"^(\d{5})-?(\d{4})$")
_ZIP_LIKE = re.compile(r"^\d{3,10}(?:-\d{1,5})?$")


# --- vocabulary -----------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class AddressVocabulary:
    """What rules/addresses.toml and the Pub 28 tables say, compiled once.
    Hashed by identity, so the street cache below can key on it."""
    max_length: int
    suffixes: Mapping[str, str]            # any C1 form -> standard abbreviation
    units: Mapping[str, str]               # any C2 form -> abbreviation
    units_without_range: frozenset[str]    # abbreviations that stand alone (REAR, BSMT)
    directionals: Mapping[str, str]        # word or abbreviation -> abbreviation
    states: Mapping[tuple[str, ...], str]  # name words, code or variant -> code
    state_lengths: Mapping[str, tuple[int, ...]]     # last word -> its phrases' lengths
    countries: Mapping[tuple[str, ...], str]   # name words -> alpha-2
    country_lengths: Mapping[str, tuple[int, ...]]
    usps_countries: frozenset[str]
    boundary_suffixes: frozenset[str]
    zip_first_digits: Mapping[str, frozenset[str]]   # state -> first digits of its ZIPs
    zero_zip_states: frozenset[str]
    number_words: Mapping[str, str]
    forms: Mapping[str, Mapping[tuple[str, ...], str]]
    military_cities: frozenset[str]
    form_fillers: frozenset[str]
    form_openers: frozenset[str]      # first words of every form phrase
    military_states: frozenset[str]
    placeholder_texts: frozenset[str]      # as typed, upper case, and as normalised

    def is_placeholder(self, value: str, normalised: str) -> bool:
        return value.upper() in self.placeholder_texts or (
            normalised.replace(",", "") or None) in self.placeholder_texts
    placeholder_street_lines: frozenset[str]
    placeholder_zips: frozenset[str]


_AddressRulesSchema = Schema.from_dict({
    "max_length": fields.Integer(required=True, strict=True, validate=validate.Range(min=40)),
    **{name: fields.String(required=True) for name in (
        "suffixes_table", "units_table", "states_table", "directionals_table", "countries_table")},
    **string_lists("usps_countries", "us_names", "boundary_suffixes"),
    **{name: fields.Dict(keys=fields.String(), values=fields.String(), required=True)
       for name in ("country_variants", "state_variants", "unit_variants", "number_words")},
    "zip_first_digits": fields.Dict(keys=fields.String(validate=validate.Regexp(r"^\d$")),
                                    values=fields.List(fields.String()), required=True),
    "forms": fields.Nested(Schema.from_dict(string_lists(
        "po_box", "rural_route", "highway_contract", "box", "military_units", "military_cities",
        "general_delivery", "fillers")), required=True),
    "placeholders": fields.Nested(Schema.from_dict(string_lists(
        "texts", "street_lines", "zips")), required=True),
})


def normalise(value: str) -> str:
    """Upper case, accents folded, and Pub 28 punctuation; commas kept as separators."""
    return normalise_stages(value)[2]


def fold_accents(value: str) -> str:
    return value if value.isascii() else unidecode(value).upper()


def _kept_mark(match: re.Match[str]) -> str:
    """Pub 28 keeps a period inside a grid number (39.2), a hyphen with a digit
    beside it (112-10, 12-A, ZIP+4) and a slash in a fraction (1/2); an
    apostrophe joins its letters (O'NEIL); any other mark parts words."""
    mark, at, value = match[0], match.start(), match.string
    before, after = value[at - 1:at], value[at + 1:at + 2]
    if (mark in "./" and before.isdigit() and after.isdigit()) or (
            mark == "-" and before.isalnum() and after.isalnum()
            and (before.isdigit() or after.isdigit())):
        return mark
    return "" if mark in "'’`" else " "


def punctuated(value: str) -> str:
    # Each pass is skipped where its pattern cannot match: most lines hold
    # nothing but letters, digits, spaces and commas, and only a line with
    # marks or odd spaces needs its spaces folded.
    if "." in value:
        value = _ABBREVIATION_PERIOD.sub(r"\1", value)
    if not value.replace(" ", "").replace(",", "").replace("#", "").isalnum():
        value = _MARK.sub(_kept_mark, value)
    if "#" in value:
        value = _HASH.sub(" # ", value)
    if "  " in value or not value.isprintable():   # any white space but ' ' is unprintable
        value = _SPACES.sub(" ", value)
    return _SPACED_COMMA.sub(", ", value).strip(" ,")


def _words(phrase: str) -> tuple[str, ...]:
    return tuple(normalise(phrase).replace(",", " ").split())


def _phrases(items: list[str], standard: str) -> dict[tuple[str, ...], str]:
    return {_words(item): standard for item in items}


def _lengths_by_last_word(table: Mapping[tuple[str, ...], str]) -> Mapping[str, tuple[int, ...]]:
    """The lengths of the phrases that end in each word, longest first: a
    phrase read from the right is looked for only where its last word stands."""
    lengths: dict[str, set[int]] = {}
    for phrase in filter(None, table):
        lengths.setdefault(phrase[-1], set()).add(len(phrase))
    return MappingProxyType({word: tuple(sorted(found, reverse=True))
                             for word, found in lengths.items()})


def compile_rules(data: dict[str, Any], context: LoadContext) -> AddressVocabulary:
    loaded = context.validated(_AddressRulesSchema(), data)
    suffixes: dict[str, str] = {}
    for row in context.read_csv(loaded["suffixes_table"]):
        # MDW stands under both MEADOW and MEADOWS in C1; it is MEADOW's standard form.
        for form in (row["common"], row["primary"], row["standard"]):
            if form not in suffixes or form == row["standard"]:
                suffixes[form] = row["standard"]
    units: dict[str, str] = {}
    without_range = set()
    for row in context.read_csv(loaded["units_table"]):
        units[row["name"]] = units[row["abbreviation"]] = row["abbreviation"]
        if row["requires_range"] == "no":
            without_range.add(row["abbreviation"])
    units.update(loaded["unit_variants"])
    directionals = {}
    for row in context.read_csv(loaded["directionals_table"]):
        directionals[row["name"]] = directionals[row["abbreviation"]] = row["abbreviation"]
    states: dict[tuple[str, ...], str] = {}
    military_states = set()
    for row in context.read_csv(loaded["states_table"]):
        states[_words(row["name"])] = states[(row["abbreviation"],)] = row["abbreviation"]
        if row["category"] == "military":
            military_states.add(row["abbreviation"])
    for variant, code in loaded["state_variants"].items():
        if (code,) not in states:
            raise RulesError(f"addresses: state variant {variant!r} names unknown code {code!r}")
        states[_words(variant)] = code
    countries = {_words(row["name"]): row["alpha2"] for row in
                 context.read_csv(loaded["countries_table"])}
    countries.update({_words(name): code for name, code in loaded["country_variants"].items()})
    countries.update(_phrases(loaded["us_names"], "US"))
    first_digits: dict[str, set[str]] = {}
    for digit, codes in loaded["zip_first_digits"].items():
        for code in codes:
            if (code,) not in states:
                raise RulesError(f"addresses: zip_first_digits names unknown state {code!r}")
            first_digits.setdefault(code, set()).add(digit)
    forms = loaded["forms"]
    return AddressVocabulary(
        max_length=loaded["max_length"], suffixes=MappingProxyType(suffixes),
        units=MappingProxyType(units), units_without_range=frozenset(without_range),
        directionals=MappingProxyType(directionals),
        states=MappingProxyType(states), state_lengths=_lengths_by_last_word(states),
        countries=MappingProxyType(countries), country_lengths=_lengths_by_last_word(countries),
        usps_countries=frozenset(loaded["usps_countries"]),
        boundary_suffixes=frozenset(loaded["boundary_suffixes"]),
        zip_first_digits=MappingProxyType({code: frozenset(digits)
                                           for code, digits in first_digits.items()}),
        zero_zip_states=frozenset(code for code, digits in first_digits.items()
                                  if digits == {"0"}),
        number_words=MappingProxyType(dict(loaded["number_words"])),
        forms=MappingProxyType({
            "po_box": _phrases(forms["po_box"], "PO BOX"),
            "rural_route": _phrases(forms["rural_route"], "RR"),
            "highway_contract": _phrases(forms["highway_contract"], "HC"),
            "box": _phrases(forms["box"], "BOX"),
            "military": {_words(item): item for item in forms["military_units"]},
            "general_delivery": _phrases(forms["general_delivery"], "GENERAL DELIVERY")}),
        military_cities=frozenset(forms["military_cities"]),
        form_fillers=frozenset(forms["fillers"]),
        form_openers=frozenset(phrase[0] for kind in ("po_box", "rural_route", "highway_contract",
                                                      "military_units", "general_delivery")
                               for phrase in map(_words, forms[kind])),
        military_states=frozenset(military_states),
        placeholder_texts=frozenset(form for item in loaded["placeholders"]["texts"]
                                    for form in (item.upper(), normalise(item)) if form),
        placeholder_street_lines=frozenset(loaded["placeholders"]["street_lines"]),
        placeholder_zips=frozenset(loaded["placeholders"]["zips"]))


# --- the delivery line ------------------------------------------------------------

class Token(NamedTuple):   # immutable, as the street cache shares its tokens between lines
    word: str                # as normalised
    role: str                # number, fraction, predirectional, street, suffix, postdirectional,
    #                          unit_type, unit, form, box, route, military_unit_type, military_unit
    standard: str            # as written in the standard form; "" when it joins the word before


_UNIT_ROLES = frozenset(("unit_type", "unit"))


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


def _read_form(words: list[str], vocabulary: AddressVocabulary,
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


def _unit_group(words: list[str], start: int, vocabulary: AddressVocabulary) -> int | None:
    """End of one secondary unit at `start`: a designator and its number, a
    designator that needs none (REAR), or '#' and a number."""
    if start >= len(words):
        return None
    word = words[start]
    if word == "#":
        return start + 2 if start + 1 < len(words) and _is_identifier(words[start + 1], False) \
            else None
    designator = vocabulary.units.get(word)
    if designator is None:
        return None
    after = start + 1
    if after < len(words) and words[after] == "#":
        after += 1
    if after < len(words) and _is_identifier(words[after], needs_digit=len(words[after]) > 1):
        return after + 1
    return start + 1 if designator in vocabulary.units_without_range else None


def _units_from(words: list[str], start: int, vocabulary: AddressVocabulary) -> int | None:
    """The end of a run of units from `start` to the end of `words`, or None."""
    at = start
    while at < len(words):
        end = _unit_group(words, at, vocabulary)
        if end is None:
            return None
        at = end
    return at


def _unit_tokens(words: list[str], vocabulary: AddressVocabulary) -> list[Token]:
    tokens = []
    for word in words:
        if word == "#" and tokens and tokens[-1].role == "unit_type" and tokens[-1].word != "#":
            tokens.append(Token(word, "unit_type", ""))   # APT # 7 is APT 7
        elif word == "#" or (word in vocabulary.units and (not tokens or tokens[-1].role == "unit")):
            tokens.append(Token(word, "unit_type", vocabulary.units.get(word, "#")))
        else:
            tokens.append(Token(word, "unit", word))
    return tokens


def _read_street(words: list[str], vocabulary: AddressVocabulary) -> DeliveryLine | None:
    """NUMBER [FRACTION] [PREDIR] STREET [SUFFIX] [POSTDIR] [UNITS], with units
    also allowed before the street (LOT 4 PINE LN) and a bare unit number
    after the suffix written with '#'."""
    tokens: list[Token] = []
    at = 0
    number = _house_number(words[0], vocabulary)
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
    if not has_number and (not any(token.role == "suffix" for token in named)
                           or sum(token.role == "street" for token in named) > 2):
        return None   # without a number, only a short name and a suffix make a street
    return DeliveryLine("street", [*tokens, *named, *units], has_number)


# Feeds repeat their house numbers, and their streets and units across house
# numbers, and the search for where a line without commas ends reads every
# start of the line: each distinct number and street is read once per process.
@functools.lru_cache(maxsize=4096)
def _house_number(word: str, vocabulary: AddressVocabulary) -> Token | None:
    """The word as a house number (a number word in digits), or None."""
    number = vocabulary.number_words.get(word)
    return Token(word, "number", number or word) if number or _HOUSE_NUMBER.match(word) else None


@functools.lru_cache(maxsize=16384)
def _street_and_units(words: tuple[str, ...], vocabulary: AddressVocabulary
                      ) -> tuple[tuple[Token, ...], tuple[Token, ...]] | None:
    """The street's tokens and its units' (those before the street moved after
    it), from the words that follow the house number."""
    at = 0
    while (end := _unit_group(words, at, vocabulary)) is not None and end < len(words):
        at = end
    units_before = _unit_tokens(words[:at], vocabulary)
    rest = words[at:]
    cut = next((index for index in range(1, len(rest))
                if _units_from(rest, index, vocabulary) is not None), len(rest))
    street, units_after = rest[:cut], _unit_tokens(rest[cut:], vocabulary)
    if len(street) >= 3 and _is_identifier(street[-1]) and street[-2] in vocabulary.suffixes:
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
    name = [Token(word, "street", word) for word in words[start:end]]
    return [token for token in (pre, *name, suffix, post) if token is not None]


def read_delivery_line(words: list[str], vocabulary: AddressVocabulary,
                       military_context: bool) -> DeliveryLine | None:
    if not words:
        return None
    return _read_form(words, vocabulary, military_context) or _read_street(words, vocabulary)


def components(tokens: list[Token]) -> dict[str, str]:
    """The line's components by name; of several units, the last one."""
    found: dict[str, str] = {}
    for token in tokens:
        if token.role == "form" or not token.standard:
            continue
        if token.role == "unit_type":
            found.pop("unit", None)
            found["unit_type"] = token.standard
            continue
        role = "number" if token.role == "fraction" else token.role
        found[role] = f"{found[role]} {token.standard}" if role in found else token.standard
    return found


# --- the last line ------------------------------------------------------------------

@dataclass(slots=True)
class Split:
    """Which words of a one-line address make which part."""
    delivery: list[str] = field(default_factory=list)
    city: list[str] = field(default_factory=list)
    state: list[str] = field(default_factory=list)
    postal_code: list[str] = field(default_factory=list)
    country: list[str] = field(default_factory=list)
    alternatives: list[tuple[list[str], list[str]]] = field(default_factory=list)  # (delivery, city)
    city_unknown: bool = False     # a last line without commas whose city could not be found


def _phrase_before(words: list[str], end: int, table: Mapping[tuple[str, ...], str],
                   lengths: Mapping[str, tuple[int, ...]]) -> int | None:
    """Start of the longest phrase of `table` that ends at `end`."""
    for length in lengths.get(words[end - 1], ()) if end else ():
        if length <= end and tuple(words[end - length:end]) in table:
            return end - length
    return None


def _zip_start(words: list[str], end: int) -> int | None:
    """Where the ZIP code closing `words[:end]` starts: a run of digits (and a
    hyphen), well formed or not; clean_zip judges its shape."""
    if end >= 1 and _ZIP_LIKE.match(words[end - 1]):
        if end >= 2 and _ZIP5.match(words[end - 2]) and _ZIP4.match(words[end - 1]):
            return end - 2
        return end - 1
    return None


# A state name this long may hold commas (ARMED FORCES EUROPE, THE MIDDLE EAST, AND CANADA).
_NAME_WITH_COMMAS = 3


def _in_one_segment(segment_of: list[int], start: int | None, end: int) -> int | None:
    return start if start is not None and segment_of[start] == segment_of[end - 1] else None


def split_one_line(value: str, vocabulary: AddressVocabulary) -> Split:
    """The last line split off from the right: country, ZIP, state, then the
    city after the last comma, or where usaddress's tagger ends the street."""
    segments = [segment.split() for segment in value.split(",")]
    words = [word for segment in segments for word in segment]
    segment_of = [index for index, segment in enumerate(segments) for _ in segment]
    split = Split()
    end = len(words)
    country = _in_one_segment(segment_of, _phrase_before(
        words, end, vocabulary.countries, vocabulary.country_lengths), end)
    if country is not None and _phrase_before(words, end, vocabulary.states,
                                              vocabulary.state_lengths) is None:
        split.country, end = words[country:end], country
    zip_start = _zip_start(words, end)
    state_end = zip_start if zip_start is not None else end
    state = _phrase_before(words, state_end, vocabulary.states, vocabulary.state_lengths) \
        if state_end else None
    if state is not None and state_end - state < _NAME_WITH_COMMAS:
        state = _in_one_segment(segment_of, state, state_end)
    if state is not None and state > 0 and (
            zip_start is not None or segment_of[state] > 0
            or (len(words[:state]) >= 3 and any(word in vocabulary.suffixes
                                                for word in words[1:state - 1]))):
        split.state = words[state:state_end]
        split.postal_code = words[zip_start:end] if zip_start is not None else []
        end = state
    elif zip_start is not None and zip_start > 0 and (
            _ZIP5.match(words[zip_start]) or _ZIP_PLUS4.match("".join(words[zip_start:end]))):
        split.postal_code, end = words[zip_start:end], zip_start
    if end == len(words) - len(split.country) and not split.state:
        return _without_last_line(split, segments, words[:end], vocabulary)
    last_segment = segment_of[end - 1] if end else 0
    first_of_last = segment_of.index(last_segment) if end else 0
    if last_segment > 0:
        split.city = words[first_of_last:end]
        split.delivery = words[:first_of_last]
        if not split.city and last_segment >= 2:
            previous = segment_of.index(last_segment - 1)
            split.city, split.delivery = words[previous:first_of_last], words[:previous]
    else:
        _split_without_commas(split, words[:len(words) - len(split.country)], end, vocabulary)
    return split


def _without_last_line(split: Split, segments: list[list[str]], words: list[str],
                       vocabulary: AddressVocabulary) -> Split:
    """No state or ZIP: a last comma segment that is no unit is the city."""
    last = segments[-1] if len(segments) > 1 else []
    if last and _units_from(last, 0, vocabulary) is None and len(words) > len(last):
        split.delivery, split.city = words[:-len(last)], last
    else:
        split.delivery = words
    return split


def _split_without_commas(split: Split, line: list[str], end: int,
                          vocabulary: AddressVocabulary) -> None:
    """Where the street ends and the city begins in `line[:end]`, by
    usaddress's tagger over the whole line, else by our closing-element rule.
    A direction word spelled out at the boundary (OAK ST EAST COBBLESTONE) is
    given to the city, flagged, with the other reading kept; a city that
    cannot be found is flagged, never silently left in the street line."""
    words = line[:end]
    military_context = vocabulary.states.get(tuple(split.state)) in vocabulary.military_states
    start = _closing_end(words, vocabulary, military_context, trusted_only=True)
    if start is None:
        start = _tagged_city_start(line, end, vocabulary, military_context)
    if start is None:
        start = _closing_end(words, vocabulary, military_context, trusted_only=False)
    if start is None or start >= len(words):
        split.delivery = words
        split.city_unknown = True
        return
    units_end = _units_before_city(words, start, vocabulary)
    if units_end > start:
        start = units_end
    else:
        if _spelled_directional(words[start - 1], vocabulary) and start > 2:
            start -= 1
        if _spelled_directional(words[start], vocabulary) and start + 1 < len(words):
            split.alternatives.append((words[:start + 1], words[start + 1:]))
    split.delivery, split.city = words[:start], words[start:]


def _units_before_city(words: list[str], start: int, vocabulary: AddressVocabulary) -> int:
    """Units never begin a city: where the city starts once any units at
    `start` (and a direction word before them, the postdirectional) are
    given back to the delivery line."""
    at = start + 1 if words[start] in vocabulary.directionals else start
    end = at
    while (unit_end := _unit_group(words, end, vocabulary)) is not None and unit_end < len(words):
        end = unit_end
    return end if end > at else start


def _tagged_city_start(line: list[str], end: int, vocabulary: AddressVocabulary,
                       military_context: bool) -> int | None:
    """Where usaddress's tagger, given the whole line, starts the city that
    ends at `end`; its boundary stands only if what it leaves is a delivery line."""
    labels = _labels(line)
    if labels is None or labels[end - 1] != "PlaceName":
        return None
    start = end
    while start > 1 and labels[start - 1] == "PlaceName":
        start -= 1
    return start if read_delivery_line(line[:start], vocabulary, military_context) else None


def _spelled_directional(word: str, vocabulary: AddressVocabulary) -> bool:
    return len(word) > 2 and word in vocabulary.directionals


def _closing_end(words: list[str], vocabulary: AddressVocabulary, military_context: bool,
                 trusted_only: bool) -> int | None:
    """Where the delivery line ends: the shortest one at the start of `words`
    that closes with a suffix, a box or a form (GENERAL DELIVERY), carried on
    over units, an abbreviated postdirectional, and a second suffix word that
    a plain word follows (COUNTRY CLUB RD | SPRINGFIELD, but PENWARDEN CT |
    PARK RIDGE); a city must be left after it. `trusted_only` takes only a
    box, a form or a boundary suffix, with no digit opening the city."""
    for end in range(1, len(words)):
        line = read_delivery_line(words[:end], vocabulary, military_context)
        if line is None or line.tokens[-1].role not in _CLOSING_ROLES:
            continue
        if trusted_only and (words[end][0].isdigit() or (
                line.tokens[-1].role == "suffix"
                and line.tokens[-1].standard not in vocabulary.boundary_suffixes)):
            continue
        while end < len(words) - 1:
            unit_end = _unit_group(words, end, vocabulary)
            if unit_end is not None and unit_end < len(words):
                end = unit_end
            elif (words[end] in vocabulary.directionals and len(words[end]) <= 2) or (
                    words[end] in vocabulary.suffixes and words[end + 1] not in vocabulary.suffixes):
                end += 1
            else:
                break
        return end
    return None


_CLOSING_ROLES = ("suffix", "box", "form")


def _labels(words: list[str]) -> list[str] | None:
    """usaddress's label of each word, or None when it cannot tag them one to one."""
    try:
        tagged = usaddress.parse(" ".join(words))
    except Exception:  # usaddress raises bare Exceptions and RepeatedLabelError alike
        return None
    if [token for token, _ in tagged] != words:
        return None
    return [label for _, label in tagged]


# --- each part's stages ----------------------------------------------------------

# The standard forms, one stage (and one reason) after another.
_LINE_STAGES = ((("number",), "addresses.number_words"),
                (("predirectional", "postdirectional"), "addresses.directional_abbreviated"),
                (("suffix",), "addresses.suffix_standardised"),
                (("unit_type",), "addresses.unit_standardised"),
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


def normalise_stages(value: str) -> tuple[str, str, str]:
    """The value upper-cased, then with accents folded, then punctuated."""
    upper = value.upper()
    folded = fold_accents(upper)
    return upper, folded, punctuated(folded)


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


# --- assemble ------------------------------------------------------------------------

@dataclass(slots=True)
class Assembly:
    """The parts' trails and what was read of them, from either input form."""
    trails: dict[str, Trail] = field(default_factory=dict)
    line: DeliveryLine | None = None
    line2_units: list[Token] = field(default_factory=list)   # a unit sent in line2
    emptied: dict[str, Trail] = field(default_factory=dict)  # parts sent blank
    as_sent: dict[str, Trail] = field(default_factory=dict)  # placeholders and unreadable parts
    state: str | None = None
    zip_code: str | None = None
    kind: str | None = None
    flags: list[str] = field(default_factory=list)
    alternatives: list[dict[str, str]] = field(default_factory=list)


def _empty_address() -> dict[str, Any]:
    return {"line1": None, "line2": None, "city": None, "state": None, "postal_code": None,
            "country": None, "kind": None, "components": {}, "alternatives": [],
            "placeholder": False, "valid": True}


def _move_units(assembly: Assembly) -> None:
    """The secondary unit goes to line2 unless a line2 was sent."""
    if "line2" in assembly.trails:
        return
    units: list[str] = []
    others: list[str] = []
    for token in assembly.line.tokens:
        (units if token.role in _UNIT_ROLES else others).append(token.standard)
    if not units:
        return
    line1 = assembly.trails["line1"]
    moved = assembly.emptied.pop("line2", None) or line1.fork("address.line2")
    moved.apply(" ".join(filter(None, units)), "addresses.unit_moved")
    line1.apply(" ".join(filter(None, others)), "addresses.unit_moved")
    assembly.trails["line2"] = moved


def _street_key(line: DeliveryLine, found: Mapping[str, str]) -> str | None:
    """Number and street name (12ELM, 1231/2MAIN), or the box line (POBOX12,
    RR2BOX152); none for general delivery, which many people share."""
    if line.kind == "general_delivery":
        return None
    if line.kind == "street":
        words = [found.get("number", ""), found.get("street", "")]
    else:
        words = [token.standard for token in line.tokens if token.role not in _UNIT_ROLES]
    return _NOT_IN_KEY.sub("", "".join(words)) or None


def assemble(assembly: Assembly, whole: Trail, country: str | None,
             vocabulary: AddressVocabulary) -> Outcome:
    address = _empty_address()
    for part, trail in [*assembly.trails.items(), *assembly.as_sent.items()]:
        address[part] = trail.value
    address["country"] = address["country"] or country
    line = assembly.line
    placeholder = "addresses.placeholder" in assembly.flags
    if line is not None:
        address["kind"] = line.kind
        address["components"] = components(line.tokens + assembly.line2_units)
        if not line.has_number:
            assembly.flags.append("addresses.no_house_number")
        placeholder = placeholder or address["line1"] in vocabulary.placeholder_street_lines
    address["kind"] = assembly.kind or address["kind"]
    if placeholder and "addresses.placeholder" not in assembly.flags:
        assembly.flags.append("addresses.placeholder")
    for code in assembly.flags:
        whole.flag(code)
    address.update(placeholder=placeholder, valid=address["kind"] != "unparsed",
                   alternatives=assembly.alternatives)
    keys: dict[str, Any] = {}
    if not placeholder and address["kind"] not in ("unparsed", "non_us"):
        if assembly.zip_code:
            keys["zip5"] = assembly.zip_code[:5]
        street_key = _street_key(line, address["components"]) if line else None
        if street_key:
            keys["street_key"] = street_key
    return Outcome(address, [*assembly.emptied.values(), *assembly.trails.values(),
                             *assembly.as_sent.values(), whole], keys)


# --- the two input forms ------------------------------------------------------------

def _kept_whole(trail: Trail, raw: Any, rules: RuleBook, code: str, kind: str,
               country: str | None, written: str | None = None) -> Outcome:
    """The whole tidied value in line1 (or as `written`), with the reason why."""
    line1 = trail.fork("address.line1")
    if written is not None:
        line1.apply(written, "addresses.upper_cased")
    address = _empty_address()
    address.update(line1=line1.value, kind=kind, country=country,
                   placeholder=code == "addresses.placeholder", valid=kind == "non_us")
    flags = Trail("address", raw, rules.reasons)
    flags.flag(code)
    return Outcome(address, [line1, flags])


def _country_code(words: list[str], vocabulary: AddressVocabulary) -> str | None:
    return vocabulary.countries.get(tuple(words))


def clean_one_line(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    vocabulary: AddressVocabulary = rules["addresses"]
    trail = Trail("address", raw, rules.reasons)
    value = text.tidy(trail)
    if value is None:
        return Outcome(None, [trail])
    if len(value) > vocabulary.max_length:
        return _kept_whole(trail, raw, rules, "addresses.unparsed", "unparsed", options.country)
    stages = normalise_stages(value)
    normal = stages[2]
    if vocabulary.is_placeholder(value, normal):
        return _kept_whole(trail, raw, rules, "addresses.placeholder", "unparsed", options.country,
                           value.upper())
    split = split_one_line(normal, vocabulary)
    country = _country_code(split.country, vocabulary) if split.country else options.country
    if country not in vocabulary.usps_countries and not (split.state and split.postal_code):
        return _kept_whole(trail, raw, rules, "addresses.non_us", "non_us", country)
    state_code = vocabulary.states.get(tuple(split.state))
    line = read_delivery_line(split.delivery, vocabulary, military_context=(
        " ".join(split.city) in vocabulary.military_cities or state_code in vocabulary.military_states))
    if line is None:
        return _kept_whole(trail, raw, rules, "addresses.unparsed", "unparsed", options.country)

    record_normalising(trail, stages)
    assembly = Assembly(line=line, alternatives=[
        {"line1": " ".join(_standard_words(delivery, vocabulary, state_code)),
         "city": " ".join(city)} for delivery, city in split.alternatives])
    if split.alternatives or split.city_unknown:
        assembly.flags.append("addresses.city_boundary_ambiguous")
    for part, words in (("line1", split.delivery), ("city", split.city), ("state", split.state),
                        ("postal_code", split.postal_code), ("country", split.country)):
        if words:
            assembly.trails[part] = trail.split_off(_PART_FIELDS[part], " ".join(words),
                                                    "addresses.split_into_parts")
    standardise_line(assembly.trails["line1"], line.tokens)
    _move_units(assembly)
    _clean_last_line(assembly, vocabulary)
    return assemble(assembly, Trail("address", raw, rules.reasons), "US", vocabulary)


def _standard_words(words: list[str], vocabulary: AddressVocabulary,
                    state_code: str | None) -> list[str]:
    """A delivery line's words in standard form, for an alternative reading."""
    line = read_delivery_line(words, vocabulary, state_code in vocabulary.military_states)
    return [token.standard for token in line.tokens if token.standard] if line else words


def _clean_last_line(assembly: Assembly, vocabulary: AddressVocabulary) -> None:
    trails = assembly.trails
    if "state" in trails:
        assembly.state = clean_state(trails["state"], trails["state"].value.split(), vocabulary)
    if "postal_code" in trails:
        assembly.zip_code, flags = clean_zip(trails["postal_code"], trails["postal_code"].value,
                                             assembly.state, vocabulary)
        assembly.flags += flags
    if "country" in trails:
        code = _country_code(trails["country"].value.split(), vocabulary)
        if code:
            trails["country"].apply(code, "addresses.country_standardised")


def clean_parts(raw: Mapping[str, Any], options: Options, rules: RuleBook) -> Outcome:
    vocabulary: AddressVocabulary = rules["addresses"]
    assembly = Assembly()
    for part in PARTS:
        if raw.get(part) is None:
            continue
        trail = Trail(f"address.{part}", raw[part], rules.reasons)
        if text.tidy(trail) is not None:
            assembly.trails[part] = trail
        elif part == "country":
            trail.apply(options.country, "addresses.country_defaulted")
            assembly.trails[part] = trail
        else:
            assembly.emptied[part] = trail
    trails = assembly.trails
    if not trails:
        return Outcome(None, list(assembly.emptied.values()))   # every part sent blank
    whole = Trail("address", None, rules.reasons)
    country = options.country
    if "country" in trails:
        country = _country_code(normalise(trails["country"].value).split(), vocabulary) \
            or trails["country"].value
    if country not in vocabulary.usps_countries:
        address = _empty_address()
        address.update({part: trail.value for part, trail in trails.items()},
                       kind="non_us", country=country)
        if "country" in trails and country != trails["country"].value and len(country) == 2:
            address["country"] = trails["country"].apply(country, "addresses.country_standardised")
        whole.flag("addresses.non_us")
        return Outcome(address, [*trails.values(), *assembly.emptied.values(), whole])

    for part, trail in list(trails.items()):
        sent = str(trail.value)
        upper, folded, tidied = normalise_stages(sent.replace(",", " ").strip())
        # A part holds no comma, and folding can write one (a cedilla alone reads as ",").
        stages = (upper, folded, punctuated(folded.replace(",", " ")) if "," in folded
                  else tidied)
        if vocabulary.is_placeholder(sent, stages[2]):
            assembly.flags.append("addresses.placeholder")
            assembly.kind = "unparsed" if part == "line1" else assembly.kind
            trail.apply(sent.upper(), "addresses.upper_cased")
            del trails[part]
            assembly.as_sent[part] = trail
        elif not record_normalising(trail, stages):
            trail.revert()   # nothing but marks: kept as sent
            assembly.flags.append("addresses.unparsed")
            del trails[part]
            assembly.as_sent[part] = trail
    _clean_last_line(assembly, vocabulary)
    city = trails["city"].value if "city" in trails else ""
    if "line1" in trails:
        line1 = trails["line1"]
        assembly.line = read_delivery_line(line1.value.split(), vocabulary, military_context=(
            city in vocabulary.military_cities or assembly.state in vocabulary.military_states))
        if assembly.line is None:
            line1.revert()
            assembly.kind = "unparsed"
            assembly.flags.append("addresses.unparsed")
        else:
            standardise_line(line1, assembly.line.tokens)
            _move_units(assembly)
    if "line2" in trails and raw.get("line2") is not None:
        words = trails["line2"].value.split()
        if words and _units_from(words, 0, vocabulary) == len(words):
            assembly.line2_units = _unit_tokens(words, vocabulary)
            standardise_line(trails["line2"], assembly.line2_units)
    return assemble(assembly, whole, "US", vocabulary)


def clean_address(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    """A one-line `address`, or a dict of the parts that were sent."""
    if not isinstance(raw, Mapping):
        return clean_one_line(raw, options, rules)
    if any(raw.get(part) is not None for part in PARTS):
        return clean_parts(raw, options, rules)
    if raw.get("address") is None:
        return Outcome(None, [])
    return clean_one_line(raw["address"], options, rules)


KIND = FieldKind(name="addresses", input_keys=("address", *PARTS), output_key="address",
                 clean=clean_address, compile_rules=compile_rules)
