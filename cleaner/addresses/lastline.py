"""The last line of a one-line address split off by rule from the right: the
country, the ZIP, the state, then the city after the last comma, or, without
commas, where the street ends."""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field

import usaddress

from cleaner.addresses import crf
from cleaner.addresses.delivery import read_delivery_line, unit_group, units_from
from cleaner.addresses.vocabulary import AddressVocabulary

_ZIP5, _ZIP4 = re.compile(r"^\d{5}$"), re.compile(r"^\d{4}$")
_ZIP_PLUS4 = re.compile(r"^(\d{5})-?(\d{4})$")
_ZIP_LIKE = re.compile(r"^\d{3,10}(?:-\d{1,5})?$")

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
    trusted_boundary: bool = False  # without commas, the street closed with a boundary suffix


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


def _united_states_before(words: list[str], end: int, vocabulary: AddressVocabulary) -> int | None:
    """Where a name of the United States written in the state's place (USA,
    UNITED STATES) starts, when it ends at `end` and is no state's name."""
    start = _phrase_before(words, end, vocabulary.countries, vocabulary.country_lengths)
    if start is None or vocabulary.countries[tuple(words[start:end])] != "US" \
            or _phrase_before(words, end, vocabulary.states, vocabulary.state_lengths) is not None:
        return None
    return start


def foreign_country(words: list[str], vocabulary: AddressVocabulary) -> str | None:
    """The country whose postal code, after one of its regions, ends the line
    (ON M5V 2T6 is Canada's), when no US state and ZIP do."""
    for country, pattern, regions in vocabulary.foreign_postal_codes:
        for size in (2, 1):
            code = " ".join(words[-size:])
            if len(words) <= size or not pattern.match(code):
                continue
            before = words[:-size]
            if not regions or any(tuple(before[-length:]) in regions for length in (1, 2, 3, 4)
                                  if length <= len(before)):
                return country
    return None


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
    line_end = end   # the line without a country that closes it
    zip_start = _zip_start(words, end)
    state_end = zip_start if zip_start is not None else end
    united_states = _united_states_before(words, state_end, vocabulary)
    if zip_start is not None and united_states:
        split.country, state_end = words[united_states:state_end], united_states   # USA 62704
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
        split.postal_code, end = words[zip_start:end], state_end
    if end == line_end and not split.state:
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
        _split_without_commas(split, words[:line_end], end, vocabulary)
    return split


def _without_last_line(split: Split, segments: list[list[str]], words: list[str],
                       vocabulary: AddressVocabulary) -> Split:
    """No state or ZIP: a last comma segment that is no unit is the city."""
    last = segments[-1] if len(segments) > 1 else []
    if last and units_from(last, 0, vocabulary) is None and len(words) > len(last):
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
    split.trusted_boundary = start is not None
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
    while (unit_end := unit_group(words, end, vocabulary)) is not None and unit_end < len(words):
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
        if line is None or line.tokens[-1].role not in CLOSING_ROLES:
            continue
        if trusted_only and (words[end][0].isdigit() or (
                line.tokens[-1].role == "suffix"
                and line.tokens[-1].standard not in vocabulary.boundary_suffixes)):
            continue
        while end < len(words) - 1:
            unit_end = unit_group(words, end, vocabulary)
            if unit_end is not None and unit_end < len(words):
                end = unit_end
            elif (words[end] in vocabulary.directionals and len(words[end]) <= 2) or (
                    words[end] in vocabulary.suffixes and words[end + 1] not in vocabulary.suffixes):
                end += 1
            else:
                break
        return end
    return None


CLOSING_ROLES = ("suffix", "box", "form")


def _labels(words: list[str]) -> list[str] | None:
    """usaddress's label of each word, or None when it cannot tag them one to one."""
    tokens = usaddress.tokenize(" ".join(words))
    return crf.labels(tokens) if tokens == words else None

