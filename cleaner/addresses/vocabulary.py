"""The address vocabulary: rules/addresses.toml and the Publication 28 tables
beside it, compiled once; and the normalising every reading starts from."""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

from marshmallow import Schema, fields, validate
from unidecode import unidecode

from cleaner.rules import LoadContext, RulesError, string_lists

_ABBREVIATION_PERIOD = re.compile(r"\b([A-Z])\.")   # P.O., N.E., D.C.
_MARK = re.compile(r"[^\w\s,#]|_")
_HASH = re.compile(r"\s*#\s*")
_SPACES = re.compile(r"\s+")
_SPACED_COMMA = re.compile(r"\s*,[\s,]*")

@dataclass(frozen=True, eq=False)
class AddressVocabulary:
    """What rules/addresses.toml and the Pub 28 tables say, compiled once.
    Hashed by identity, so the street cache below can key on it."""
    max_length: int
    suffixes: Mapping[str, str]            # any C1 form -> standard abbreviation
    units: Mapping[str, str]               # any C2 form -> abbreviation
    units_without_range: frozenset[str]    # abbreviations that stand alone (REAR, BSMT)
    foreign_postal_codes: tuple[tuple[str, re.Pattern[str], frozenset[tuple[str, ...]]], ...]
    urbanization_types: Mapping[str, str]  # URBANIZACION -> URB
    spanish_street_types: frozenset[str]   # CALLE: the name follows
    city_openers: frozenset[str]           # first words of towns that also end streets (SAINT)
    outer_units: frozenset[str]            # a building or mailbox: the unit is another, if any
    units_after_number: frozenset[str]     # abbreviations also written after their number (2ND FL)
    ordinal_words: Mapping[str, str]       # SECOND -> 2
    floor_names: frozenset[str]            # a floor named, not numbered (GROUND FLOOR)
    unit_phrases: Mapping[tuple[str, ...], str]   # two words for one designator (LOWER LEVEL)
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
    recipient_opener: re.Pattern[str]      # c/o, ATTN: to the next comma or number
    recipient_hints: frozenset[str]        # what a line with an opener holds, lower case
    route_types: Mapping[str, str]         # a type written before a route's name -> in full
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
    **string_lists("usps_countries", "us_names", "boundary_suffixes", "units_after_number",
                   "recipient_openers", "outer_units", "city_openers",
                   "spanish_street_types", "floor_names"),
    **{name: fields.Dict(keys=fields.String(), values=fields.String(), required=True)
       for name in ("country_variants", "state_variants", "unit_variants", "number_words",
                                    "route_types", "ordinal_words", "urbanization_types",
                                    "unit_phrases")},
    "zip_first_digits": fields.Dict(keys=fields.String(validate=validate.Regexp(r"^\d$")),
                                    values=fields.List(fields.String()), required=True),
    "foreign_postal_codes": fields.List(fields.Nested(Schema.from_dict({
        "country": fields.String(required=True, validate=validate.Regexp(r"^[A-Z]{2}$")),
        "pattern": fields.String(required=True),
        "regions": fields.List(fields.String(), required=True)})), required=True),
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


def _pattern(pattern: str) -> re.Pattern[str]:
    try:
        return re.compile(pattern)
    except re.error as error:
        raise RulesError(f"addresses: foreign postal code pattern {pattern!r}: {error}") from None


def _opener_pattern(openers: list[str]) -> re.Pattern[str]:
    """An opener as typed (any case, spaces or none around its marks) and the
    words after it up to a comma or a word that starts with a digit."""
    forms = sorted(openers, key=len, reverse=True)
    alternatives = "|".join(re.escape(form).replace(r"\ ", r"\s+").replace("/", r"\s*/\s*")
                            .replace(r"\.", r"\.\s*") for form in forms)
    return re.compile(rf"(?<![\w/])(?:{alternatives})(?![\w])[:\s]*(?:[^,\d\s][^,\s]*\s*)*,?",
                      re.IGNORECASE)


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
        route_types=MappingProxyType(dict(loaded["route_types"])),
        recipient_opener=_opener_pattern(loaded["recipient_openers"]),
        recipient_hints=frozenset(max(opener.lower().split(), key=len)[:3]
                                  for opener in loaded["recipient_openers"]),
        ordinal_words=MappingProxyType(dict(loaded["ordinal_words"])),
        floor_names=frozenset(loaded["floor_names"]),
        unit_phrases=MappingProxyType({_words(phrase): designator for phrase, designator
                                       in loaded["unit_phrases"].items()}),
        units_after_number=frozenset(loaded["units_after_number"]),
        outer_units=frozenset(loaded["outer_units"]),
        city_openers=frozenset(loaded["city_openers"]),
        spanish_street_types=frozenset(loaded["spanish_street_types"]),
        urbanization_types=MappingProxyType({normalise(form): standard for form, standard
                                             in loaded["urbanization_types"].items()}),
        foreign_postal_codes=tuple(
            (entry["country"], _pattern(entry["pattern"]), frozenset(map(_words, entry["regions"])))
            for entry in loaded["foreign_postal_codes"]),
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



def normalise_stages(value: str) -> tuple[str, str, str]:
    """The value upper-cased, then with accents folded, then punctuated."""
    upper = value.upper()
    folded = fold_accents(upper)
    return upper, folded, punctuated(folded)

