"""Two readings of a one-line address, and which is kept.

The rule reading splits the last line off from the right and reads the
delivery line by its forms; the tagger's reading (tagged.py) labels every
token. Before either reads, what is not the postal address is set apart (a
care-of or attention line, a note, a repeat) and a Puerto Rico urbanization
taken out. Where the rule reading is certain (see _certain), the tagger is
not asked. Otherwise both are read; when they agree nothing is flagged, and
when they differ the likelier is kept (see _weigh), flagged for review, and
the other listed among the alternatives.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass, field

from cleaner.addresses.delivery import UNIT_ROLES, DeliveryLine, components, read_delivery_line
from cleaner.addresses.lastline import Split, split_one_line
from cleaner.addresses.tagged import read_tagged
from cleaner.addresses.vocabulary import AddressVocabulary, normalise

# Longer city names are read by both readings: most are a note or an office
# name typed before the city.
_LONGEST_CERTAIN_CITY = 3
_PARENTHESISED = re.compile(r"\([^()]*\)?")


@dataclass(slots=True)
class Reading:
    split: Split
    line: DeliveryLine | None
    other: list[str] = field(default_factory=list)   # words set apart from the address
    urbanization: list[str] = field(default_factory=list)   # URB LAS GLADIOLAS (Puerto Rico)
    compared: tuple | None = None

    def parts(self, vocabulary: AddressVocabulary) -> tuple:
        """What two readings are compared on: the delivery line's components,
        the city, the state's code and the ZIP."""
        if self.compared is None:
            standard = frozenset(components(self.line.tokens, vocabulary).items()) \
                if self.line else tuple(self.split.delivery)
            state = vocabulary.states.get(tuple(self.split.state), " ".join(self.split.state))
            self.compared = (standard, tuple(self.split.city), state,
                             "".join(self.split.postal_code))
        return self.compared

    def alternative(self, vocabulary: AddressVocabulary) -> dict[str, str | None]:
        if self.line is None:
            line1, line2 = " ".join(self.split.delivery) or None, None
        else:
            line1 = " ".join(token.standard for token in self.line.tokens
                             if token.standard and token.role not in UNIT_ROLES) or None
            line2 = " ".join(token.standard for token in self.line.tokens
                             if token.standard and token.role in UNIT_ROLES) or None
        state = self.parts(vocabulary)[2]
        return {"line1": line1, "line2": line2, "city": " ".join(self.split.city) or None,
                "state": state or None, "postal_code": "".join(self.split.postal_code) or None}


def _military_context(split: Split, vocabulary: AddressVocabulary) -> bool:
    return " ".join(split.city) in vocabulary.military_cities \
        or vocabulary.states.get(tuple(split.state)) in vocabulary.military_states


def _ends_a_state_name(text: str, vocabulary: AddressVocabulary) -> bool:
    words = normalise(text).replace(",", " ").split()
    return bool(words) and any(tuple(words[-length:]) in vocabulary.states
                               for length in vocabulary.state_lengths.get(words[-1], ()))


def set_apart(value: str, vocabulary: AddressVocabulary) -> tuple[str, list[str]]:
    """The line without what is not part of a postal address (a care-of or
    attention line, a note in parentheses, the address typed a second time),
    and the normalised words of what was set apart."""
    other: list[str] = []

    def keep(match: re.Match[str]) -> str:
        if _ends_a_state_name(match.string[:match.end()], vocabulary):
            return match[0]   # ARMED FORCES AMERICAS (EXCEPT CANADA)
        other.extend(normalise(match[0]).replace(",", " ").split())
        return ", " if match[0].endswith(",") else " "
    value = _PARENTHESISED.sub(keep, value) if "(" in value else value
    lowered = value.lower()
    if any(hint in lowered for hint in vocabulary.recipient_hints):
        value = vocabulary.recipient_opener.sub(keep, value)
    words = value.split()
    half = len(words) // 2
    if half >= 3 and len(words) % 2 == 0 and \
            normalise(" ".join(words[:half])) == normalise(" ".join(words[half:])):
        other.extend(normalise(" ".join(words[half:])).replace(",", " ").split())
        value = " ".join(words[:half])
    return value.strip(" ,;"), other


def urbanization(value: str, vocabulary: AddressVocabulary) -> tuple[str, list[str]]:
    """The line without a Puerto Rico urbanization (URB, COND, RES... and its
    name, up to a comma, a number or a unit), and the normalised words of it."""
    segments = value.split(",")
    for at, segment in enumerate(segments):
        words = segment.split()
        if len(words) < 2 or normalise(words[0]) not in vocabulary.urbanization_types:
            continue
        taken = 1
        while taken < len(words) and (word := normalise(words[taken])) \
                and not word[0].isdigit() and word not in vocabulary.units:
            taken += 1
        if taken < 2:
            continue
        rest = " ".join(words[taken:])
        kept = [*segments[:at], *([rest] if rest else []), *segments[at + 1:]]
        return ",".join(kept).strip(" ,"), normalise(" ".join(words[:taken])).split()
    return value, []


def rule_reading(normal: str, vocabulary: AddressVocabulary) -> Reading:
    split = split_one_line(normal, vocabulary)
    return Reading(split, read_delivery_line(split.delivery, vocabulary,
                                             _military_context(split, vocabulary)))


def _certain(reading: Reading, normal: str, vocabulary: AddressVocabulary) -> bool:
    """A comma between the street and the city, or a boundary suffix (AVE,
    RD...) right before a city, neither of them a word that also opens town
    names (ST for SAINT, MOUNT) and the city holding no direction or short
    word; the state with a ZIP; and a street
    line read whole: a house number and a suffix where the street closes, or
    a box form."""
    split, line = reading.split, reading.line
    if line is None or not split.city or not split.postal_code or split.alternatives \
            or split.city_unknown:
        return False
    state = vocabulary.states.get(tuple(split.state))
    city = split.city
    after_comma = f", {' '.join(city)}" in normal
    if not after_comma and not (
            split.trusted_boundary and split.delivery and split.delivery[-1] in vocabulary.suffixes
            and split.delivery[-1] not in vocabulary.city_openers
            and city[0] not in vocabulary.city_openers and city[0] not in vocabulary.directionals
            and all(len(word) > 2 for word in city)):
        return False
    if state is None or len(city) > _LONGEST_CERTAIN_CITY \
            or (city[0] in vocabulary.directionals and len(city[0]) <= 2) \
            or (city[-1],) in vocabulary.states \
            or any(word in vocabulary.units or word[0].isdigit() for word in city):
        return False
    if line.kind != "street":
        return True
    roles = [token.role for token in line.tokens if token.role not in UNIT_ROLES]
    return line.has_number and roles[-1] in ("suffix", "postdirectional") and \
        roles.count("suffix") == 1


def _abroad(reading: Reading, vocabulary: AddressVocabulary) -> bool:
    """A country named at the end that the USPS does not deliver to: the
    line is kept as sent, and the tagger (trained on US lines) is not asked."""
    country = vocabulary.countries.get(tuple(reading.split.country))
    return bool(reading.split.country) and country not in vocabulary.usps_countries


def _named_after_its_type(reading: Reading, vocabulary: AddressVocabulary) -> Reading | None:
    """A street read as a Spanish type alone (150 CALLE | TULIPAN SAN JUAN)
    takes the next word of the city for its name."""
    line, split = reading.line, reading.split
    if line is None or len(split.city) < 2 or [token.word for token in line.tokens
                                                if token.role == "street"] != split.delivery[-1:] \
            or split.delivery[-1] not in vocabulary.spanish_street_types:
        return None
    moved = Split(split.delivery + split.city[:1], split.city[1:], split.state,
                  split.postal_code, split.country)
    return Reading(moved, read_delivery_line(moved.delivery, vocabulary, False),
                   reading.other, reading.urbanization)


# Feeds repeat whole address lines (a household, a facility): each distinct
# line is read once per process. The readings are shared: nothing changes them
# after this but the memo of their compared parts.
@functools.lru_cache(maxsize=8192)
def read_one_line(value: str, normal: str, vocabulary: AddressVocabulary
                  ) -> tuple[Reading, Reading | None]:
    """The reading kept, and the other when the two differ, of a line as typed
    and as normalised."""
    kept_text, other = set_apart(value, vocabulary)
    kept_text, place = urbanization(kept_text, vocabulary)
    if other or place:
        normal = normalise(kept_text)
    rules = rule_reading(normal, vocabulary)
    rules.other, rules.urbanization = other, place
    if (named := _named_after_its_type(rules, vocabulary)) is not None:
        return named, rules
    if _certain(rules, normal, vocabulary) or _abroad(rules, vocabulary):
        return rules, None
    tagged = read_tagged(kept_text, vocabulary, military_context=False)
    if tagged is None:
        return rules, None
    split, tagged_other, line = tagged
    if _military_context(split, vocabulary) and line is None:
        line = read_delivery_line(split.delivery, vocabulary, True)
    return _weigh(rules, Reading(split, line, other + tagged_other, place), bool(tagged_other),
                  vocabulary)


def _weigh(rules: Reading, tagger: Reading, tagger_set_apart: bool,
           vocabulary: AddressVocabulary) -> tuple[Reading, Reading | None]:
    """Which of two readings is kept, and the other when a person should see
    both. On real text the tagger's is right more often; the rules keep
    the forms the tagger was not taught and the words their tables know."""
    split = tagger.split
    if rules.parts(vocabulary) == tagger.parts(vocabulary) and not tagger_set_apart:
        return rules, None
    if (split.delivery, split.city) in rules.split.alternatives:
        return tagger, rules   # the tagger takes the reading the rules thought second likeliest
    if rules.line is not None and rules.line.kind != "street" \
            and rules.parts(vocabulary)[1:] == tagger.parts(vocabulary)[1:]:
        return rules, None   # a box or route form the tagger has no words for (CALLER, PSC)
    if rules.line is not None and rules.line.kind == "street" and any(
            token.role == "street" and token.word in vocabulary.spanish_street_types
            for token in rules.line.tokens[:2]):
        return rules, tagger   # CALLE 5 BLQ 3: a Puerto Rico form the tagger was not taught
    if rules.line is not None and any(token.role in UNIT_ROLES and token.word in split.city
                                      for token in rules.line.tokens):
        return rules, tagger   # a unit the rules know (LOWER LEVEL) that the tagger puts in the town
    if len(rules.split.state) > 1 and split.state != rules.split.state:
        return rules, None   # a state name of the table, that the tagger takes for a city
    if tagger.line is None and (split.delivery or not (split.city or split.state
                                                        or split.postal_code)):
        return rules, tagger
    return tagger, rules
