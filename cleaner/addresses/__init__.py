"""US postal addresses in the USPS Publication 28 standard form.

A one-line address goes through named stages, each recorded on the trail:
the text step; upper case, accents folded and punctuation removed on the
whole line; a line ending in another country's postal code kept as sent;
then two readings (reconcile.py): the rules' (lastline.py splits the last
line off from the right, delivery.py reads the delivery line by its form)
and, where the rules are not sure, usaddress's tagger (tagged.py, crf.py),
the likelier kept and a difference flagged; the parts split off, units moved
to line2, and each component written in its standard form (standard.py,
assemble.py). Parts sent apart go through the same stages without the
tagger. The vocabulary is rules/addresses.toml and the Pub 28 tables beside
it (vocabulary.py); nothing here knows a particular place.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from cleaner import text
from cleaner.addresses.assemble import Assembly, assemble, empty_address, move_units
from cleaner.addresses.delivery import read_delivery_line, unit_tokens, units_from
from cleaner.addresses.lastline import foreign_country
from cleaner.addresses.reconcile import read_one_line
from cleaner.addresses.standard import clean_state, clean_zip, record_normalising, standardise_line
from cleaner.addresses.vocabulary import (AddressVocabulary, compile_rules, normalise,
                                          normalise_stages, punctuated)
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import RuleBook
from cleaner.trail import Trail

PARTS = ("line1", "line2", "city", "state", "postal_code", "country")
_PART_FIELDS = {part: f"address.{part}" for part in (*PARTS, "other_text", "urbanization")}


def _kept_whole(trail: Trail, raw: Any, rules: RuleBook, code: str, kind: str,
               country: str | None, written: str | None = None) -> Outcome:
    """The whole tidied value in line1 (or as `written`), with the reason why."""
    line1 = trail.fork("address.line1")
    if written is not None:
        line1.apply(written, "addresses.upper_cased")
    address = empty_address()
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
    abroad = foreign_country(normal.replace(",", " ").split(), vocabulary)
    if abroad is not None:
        return _kept_whole(trail, raw, rules, "addresses.non_us", "non_us", abroad)
    # The readings do not depend on case (the tagger reads words in lower case,
    # the rules in upper): lines that differ only in case share one reading.
    kept, other = read_one_line(value.upper() if value.isascii() else value, normal, vocabulary)
    split = kept.split
    country = _country_code(split.country, vocabulary) if split.country else options.country
    if country not in vocabulary.usps_countries and not (split.state and split.postal_code):
        return _kept_whole(trail, raw, rules, "addresses.non_us", "non_us", country)
    if kept.line is None and not (split.city or split.state or split.postal_code):
        return _kept_whole(trail, raw, rules, "addresses.unparsed", "unparsed", options.country)

    record_normalising(trail, stages)
    state_code = vocabulary.states.get(tuple(split.state))
    assembly = Assembly(line=kept.line, alternatives=[
        {"line1": " ".join(_standard_words(delivery, vocabulary, state_code)),
         "city": " ".join(city)} for delivery, city in split.alternatives])
    if split.alternatives or split.city_unknown:
        assembly.flags.append("addresses.city_boundary_ambiguous")
    if other is not None:
        assembly.flags.append("addresses.readings_differ")
        assembly.alternatives.append(other.alternative(vocabulary))
    if kept.other:
        assembly.flags.append("addresses.text_set_apart")
    for part, words in (("line1", split.delivery), ("city", split.city), ("state", split.state),
                        ("postal_code", split.postal_code), ("country", split.country),
                        ("other_text", kept.other), ("urbanization", kept.urbanization)):
        if words:
            assembly.trails[part] = trail.split_off(_PART_FIELDS[part], " ".join(words),
                                                    "addresses.split_into_parts")
    if kept.urbanization:
        place = assembly.trails["urbanization"]
        place.apply(" ".join([vocabulary.urbanization_types[kept.urbanization[0]],
                              *kept.urbanization[1:]]), "addresses.urbanization_standardised")
    if kept.line is None:
        assembly.kind = "unparsed"
        assembly.flags.append("addresses.unparsed")
    else:
        standardise_line(assembly.trails["line1"], kept.line.tokens)
        move_units(assembly)
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
        address = empty_address()
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
            move_units(assembly)
    if "line2" in trails and raw.get("line2") is not None:
        words = trails["line2"].value.split()
        if words and units_from(words, 0, vocabulary) == len(words):
            assembly.line2_units = unit_tokens(words, vocabulary)
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
