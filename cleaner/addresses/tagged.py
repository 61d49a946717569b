"""The tagger's reading of a one-line address.

usaddress's conditional random field labels every token of the line as typed
(its features read case-folded words, periods and trailing commas, so it is
given the text before our normalising removes them). Each token's label is
carried onto the words the normalised token becomes, and the words are then
grouped into the parts of an address and the roles of a delivery line, their
standard forms taken from our vocabulary. Nothing here decides whether this
reading or the rule reading is kept: see reconcile.py.
"""

from __future__ import annotations

import functools
from collections.abc import Iterable

import usaddress

from cleaner.addresses import crf

from cleaner.addresses.delivery import (DeliveryLine, Token, house_number, read_form,
                                        route_number, unit_group, unit_tokens)
from cleaner.addresses.lastline import Split
from cleaner.addresses.vocabulary import AddressVocabulary, normalise

# The tagger's labels by the part of the address their words go to.
_PART_OF_LABEL = {"PlaceName": "city", "StateName": "state", "ZipCode": "postal_code",
                  "ZipPlus4": "postal_code", "CountryName": "country",
                  "Recipient": "other", "BuildingName": "other", "NotAddress": "other",
                  "LandmarkName": "other"}
# Within the delivery line, the role each label's words take.
_ROLE_OF_LABEL = {
    "AddressNumberPrefix": "number", "AddressNumber": "number", "AddressNumberSuffix": "number",
    "StreetNamePreDirectional": "predirectional", "StreetNamePreModifier": "street",
    "StreetNamePreType": "pretype", "StreetName": "street", "StreetNamePostType": "suffix",
    "StreetNamePostDirectional": "postdirectional", "StreetNamePostModifier": "street",
    "SubaddressType": "unit_type", "SubaddressIdentifier": "unit",
    "OccupancyType": "unit_type", "OccupancyIdentifier": "unit",
    "USPSBoxType": "form", "USPSBoxID": "form", "USPSBoxGroupType": "form",
    "USPSBoxGroupID": "form"}
# Lines the tagger reads as street corners are left to the rule reading.
_CORNER_LABELS = frozenset(("IntersectionSeparator", "CornerOf"))
_RANK = {"number": 0, "predirectional": 1, "pretype": 2, "street": 2, "suffix": 3,
         "postdirectional": 4}
_STREET_ORDER = ("number", "predirectional", "pretype", "street", "suffix", "postdirectional")


@functools.lru_cache(maxsize=4096)
def labelled_words(text: str) -> tuple[tuple[str, str], ...]:
    """Each word of the normalised line with the label of the token it came from."""
    tokens = usaddress.tokenize(text)
    if not tokens:
        return ()
    labels = crf.labels(tokens)
    return tuple((word, label) for token, label in zip(tokens, labels)
                 for word in _token_words(token))


@functools.lru_cache(maxsize=8192)
def _token_words(token: str) -> tuple[str, ...]:
    return tuple(normalise(token).replace(",", " ").split())


def read_tagged(text: str, vocabulary: AddressVocabulary, military_context: bool
                ) -> tuple[Split, list[str], DeliveryLine | None] | None:
    """The split, the words set apart (a recipient, an organisation, a note),
    and the delivery line of the tagger's reading, or None for a corner."""
    words = labelled_words(text)
    if not words or any(label in _CORNER_LABELS for _, label in words):
        return None
    split, other = Split(), []
    delivery: list[tuple[str, str]] = []
    for word, label in words:
        part = _PART_OF_LABEL.get(label, "delivery")
        if part == "other":
            other.append(word)
        elif part == "delivery":
            delivery.append((word, _ROLE_OF_LABEL[label]))
        else:
            getattr(split, part).append(word)
    split.delivery = [word for word, _ in delivery]
    if tuple(split.state) not in vocabulary.states:
        _united_states_as_country(split, vocabulary)
    return split, other, _delivery_line(delivery, vocabulary, military_context)


def _united_states_as_country(split: Split, vocabulary: AddressVocabulary) -> None:
    """USA or UNITED STATES written where the state goes, which the tagger
    may read as a state or as the end of the city, is the country."""
    place = split.city + split.state
    for length in range(min(4, len(place)), 0, -1):
        if vocabulary.countries.get(tuple(place[-length:])) == "US":
            split.country = place[-length:] + split.country
            split.city, split.state = place[:-length], []
            return


def _delivery_line(words: list[tuple[str, str]], vocabulary: AddressVocabulary,
                   military_context: bool) -> DeliveryLine | None:
    """The street (its words in their order, the units after it) or the box
    form the labels give; the forms read by the rules, which know their
    standard words."""
    ranks = [_RANK[role] for _, role in words if role in _RANK]
    if not words or ranks != sorted(ranks):
        return None   # a name after its suffix, a unit inside the name: noise
    by_role: dict[str, list[str]] = {}
    units: list[str] = []
    for word, role in words:
        if role in ("unit_type", "unit"):
            units.append(word)
        else:
            by_role.setdefault(role, []).append(word)
    if len(units) > 1 and units[0] in vocabulary.directionals and "postdirectional" not in by_role \
            and units[1] in vocabulary.units:
        by_role["postdirectional"] = [units.pop(0)]   # RD NORTH LOT 4: the direction closes the street
    street = by_role.get("street", [])
    at = 0
    while (end := unit_group(street, at, vocabulary)) is not None and end < len(street):
        at = end   # LOT 4 PINE LN: units written before the name
    units[:0], by_role["street"] = street[:at], street[at:]
    unit_words = [word for word in units if word != "#"] if any(
        word in vocabulary.units for word in units) else units
    if not route_number(by_role.get("street", [])):
        by_role["street"] = by_role.pop("pretype", []) + by_role.get("street", [])
    tokens = [token for role in _STREET_ORDER for token in _street_role_tokens(
        role, by_role.get(role, ()), vocabulary)]
    named = any(token.role == "street" for token in tokens)
    if "form" in by_role:
        # A box beside a street (12 ELM ST PO BOX 5) keeps both, the street first.
        form = read_form(by_role["form"], vocabulary, military_context)
        if form is None or (tokens and not named):
            return None
        return DeliveryLine(form.kind if not tokens else "street",
                            tokens + form.tokens + _designated(unit_tokens(unit_words, vocabulary)),
                            has_number=form.has_number or "number" in by_role)
    if not named and (tokens or not any(word in vocabulary.units for word in unit_words)):
        return None
    return DeliveryLine("street", tokens + _designated(unit_tokens(unit_words, vocabulary)),
                        has_number="number" in by_role)


def _designated(units: list[Token]) -> list[Token]:
    """A unit number typed without a designator is written after '#' (Pub 28
    section 213: 88 W TAMARACK # 12C)."""
    if units and units[0].role == "unit":
        return [Token("", "unit_type", "#"), *units]
    return units


def _street_role_tokens(role: str, words: Iterable[str], vocabulary: AddressVocabulary
                        ) -> list[Token]:
    tokens = []
    for word in words:
        if role == "number":
            tokens.append(house_number(word, vocabulary) or Token(word, "number", word))
        elif role in ("predirectional", "postdirectional") and word in vocabulary.directionals:
            tokens.append(Token(word, role, vocabulary.directionals[word]))
        elif role == "suffix" and word in vocabulary.suffixes:
            tokens.append(Token(word, role, vocabulary.suffixes[word]))
        elif role == "pretype":
            tokens.append(Token(word, "pretype", vocabulary.route_types.get(word, word)))
        else:
            tokens.append(Token(word, "street", word))
    return tokens
