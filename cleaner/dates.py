"""Birth dates: whatever a registration system sends, as ISO 8601 with its
precision. A value is read in stages: a time of day is split off, the text is
tokenized and its words classified with the vocabulary of rules/dates.toml,
every reading its parts allow is built, the most credible reading is chosen
and flagged, and the result is assembled. A missing day or month is never
filled in, and a value that cannot be read comes back exactly as sent."""

from __future__ import annotations

import calendar
import datetime as dt
import functools
import re
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, NamedTuple

from dateutil.relativedelta import relativedelta
from marshmallow import Schema, fields, validate

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook, RulesError, string_lists
from cleaner.trail import Trail

# The 1900 date system of spreadsheets: serial 1 is 1900-01-01, and serial 60
# is 1900-02-29, a day the calendar lacks but Lotus 1-2-3 counted and Excel
# kept for compatibility, so every later serial is one day ahead of a plain count.
_SERIAL_DAY_ZERO = dt.date(1899, 12, 31)
_FICTITIOUS_LEAP_DAY = 60
_LAST_SERIAL = 2958465  # 9999-12-31, the last day spreadsheets represent
# Five digits span 1927-05-18 to 2173-10-14, the serials a living person's
# birth date can have; numbers of other lengths are other forms.
_SERIAL_DIGITS = 5

# The hot path: a date already in ISO 8601 extended form needs no tokenizing.
_ISO_DAY = re.compile(r"(\d{4})-(\d{2})-(\d{2})")

# Times of day are only ever dropped, so they are checked for shape and range
# but not read. HL7 v2 DTM and ISO 8601 basic put [T]HH[MM[SS[.S]]] and a zone
# straight after YYYYMMDD, a spreadsheet puts the time as a serial's fraction,
# and extended forms put a clock after a "T" or a space.
_ZONE = r"(?:Z|[+-](?:[01]\d|2[0-3])(?::?[0-5]\d)?)"
_COMPACT_WITH_TIME = re.compile(
    rf"(\d{{8}})(?:T?(?:[01]\d|2[0-3])(?:[0-5]\d(?:(?:[0-5]\d|60)(?:\.\d{{1,4}})?)?)?{_ZONE}?"
    rf"|{_ZONE})|(\d{{{_SERIAL_DIGITS}}})\.\d+")
_CLOCK = r"(?:[01]?\d|2[0-3]):[0-5]\d(?::(?:[0-5]\d|60)(?:[.,]\d{1,9})?)?"

_ISO_LENGTH = {"day": 10, "month": 7, "year": 4}  # length of the ISO 8601 text

# A word must be what the tokenizer yields, or it could never match.
_LETTERS = validate.Regexp(r"^[^\W\d_]+$", error="must be letters only")


def _words() -> fields.List:
    return fields.List(fields.String(validate=_LETTERS), required=True)


@dataclass(frozen=True)
class DateVocabulary:
    """What rules/dates.toml says, compiled once. Like dateutil's parserinfo,
    it is the one object to replace to read dates written in other words."""
    months: Mapping[str, int]          # folded month name or abbreviation -> 1..12
    ignored_words: frozenset[str]      # weekday names and filler words
    ordinal_suffixes: frozenset[str]   # only after a number, which they make a day: 3rd, 1º
    tokens: re.Pattern[str]            # numbers, words and any other sign; separators skipped
    clock_time: re.Pattern[str]
    placeholders: frozenset[str]       # ISO 8601 dates
    max_length: int
    max_age: int


_DateRulesSchema = Schema.from_dict({
    "max_length": fields.Integer(required=True, strict=True, validate=validate.Range(min=10)),
    "max_age": fields.Integer(required=True, strict=True, validate=validate.Range(min=1, max=150)),
    "separators": fields.String(required=True, validate=validate.Regexp(
        r"^\W+$", error="must be punctuation or space, no letters or digits")),
    "month_names": fields.List(fields.List(fields.String(validate=_LETTERS),
                                           validate=validate.Length(min=1)),
                               required=True, validate=validate.Length(equal=12)),
    **{name: _words() for name in ("weekday_names", "filler_words", "ordinal_suffixes")},
    **string_lists("time_markers"),
    "placeholders": fields.List(fields.Date(format="iso"), required=True),
})


def compile_rules(data: dict[str, Any], context: LoadContext) -> DateVocabulary:
    loaded = context.validated(_DateRulesSchema(), data)
    seen: set[str] = set()

    def folded(words: list[str], where: str) -> list[str]:
        """Words as the reader compares them; each may stand only once in the file."""
        result = [text.fold(word) for word in words]
        for word in result:
            if word in seen:
                raise RulesError(f"dates: {where} repeats the word {word!r} (after folding)")
            seen.add(word)
        return result

    months = {word: number for number, names in enumerate(loaded["month_names"], start=1)
              for word in folded(names, "month_names")}
    ignored = folded(loaded["weekday_names"], "weekday_names") + folded(
        loaded["filler_words"], "filler_words")
    markers = "|".join(re.escape(marker) for marker in
                       sorted(loaded["time_markers"], key=len, reverse=True))
    # A clock follows a "T" straight after a digit, or separators; the look-behind
    # lets only the first of a run of separators start a match.
    clock_time = re.compile(rf"(?:(?<=\d)T|(?<![ ,])[ ,]+){_CLOCK}(?: ?(?i:{markers}))?"
                            rf"(?: ?{_ZONE})?$")
    tokens = re.compile(rf"\d+|[^\W\d_]+|[^{re.escape(loaded['separators'])}]")
    return DateVocabulary(
        months=MappingProxyType(months), ignored_words=frozenset(ignored),
        ordinal_suffixes=frozenset(folded(loaded["ordinal_suffixes"], "ordinal_suffixes")),
        tokens=tokens, clock_time=clock_time,
        placeholders=frozenset(day.isoformat() for day in loaded["placeholders"]),
        max_length=loaded["max_length"], max_age=loaded["max_age"])


def spreadsheet_serial_to_date(serial: int) -> dt.date:
    """The day a spreadsheet serial number stands for, in the 1900 date system."""
    if not 1 <= serial <= _LAST_SERIAL or serial == _FICTITIOUS_LEAP_DAY:
        raise ValueError("the serial stands for no calendar day")
    return _SERIAL_DAY_ZERO + dt.timedelta(days=serial - (serial > _FICTITIOUS_LEAP_DAY))


# ---- split off the time, tokenize and classify ------------------------------

def _without_time(value: str, vocabulary: DateVocabulary) -> str | None:
    """`value` without the time of day written after the date; None when it has none."""
    compact = _COMPACT_WITH_TIME.fullmatch(value)
    if compact:
        return compact[1] or compact[2]
    clock = vocabulary.clock_time.search(value) if ":" in value else None
    return value[:clock.start()] if clock else None


class Parts(NamedTuple):
    numbers: list[str]        # digit strings, in the order written
    months: list[int]         # month names, as 1..12
    ordinals: set[int]        # positions in `numbers` written with a suffix ("3rd"): days


def _parts(value: str, vocabulary: DateVocabulary) -> Parts | None:
    """The numbers and month names of `value`; None when a word or a sign is none of a date's."""
    numbers: list[str] = []
    months: list[int] = []
    ordinals: set[int] = set()
    after_number = False
    for token in vocabulary.tokens.findall(value):
        if token.isdecimal():
            numbers.append(token)
            after_number = True
            continue
        word = text.fold(token)
        if after_number and word in vocabulary.ordinal_suffixes:
            ordinals.add(len(numbers) - 1)
        elif word in vocabulary.months:
            months.append(vocabulary.months[word])
        elif word not in vocabulary.ignored_words:
            return None
        after_number = False
    return Parts(numbers, months, ordinals)


# ---- build the candidate readings -------------------------------------------

_REFORMATTED = "dates.reformatted"


@dataclass(slots=True)
class Reading:
    """A real calendar date or period the value can be read as."""
    first: dt.date     # the first and last day it allows: the same day for a full date
    last: dt.date
    precision: str     # day, month or year
    reason: str        # the change code that explains it
    notes: tuple[str, ...]  # flags it brings with it

    def iso(self) -> str:
        return self.first.isoformat()[:_ISO_LENGTH[self.precision]]


def _reading(year: int, month: int | None = None, day: int | None = None,
             reason: str = _REFORMATTED, notes: tuple[str, ...] = ()) -> Reading | None:
    """The reading of these parts, or None when they name no real calendar date."""
    if month is not None and not 1 <= month <= 12:
        return None  # how most readings in the wrong order fail: cheaper than date() raising
    try:
        if day is not None:
            first = last = dt.date(year, month, day)
            return Reading(first, last, "day", reason, notes)
        if month is not None:
            first = dt.date(year, month, 1)
            last = first.replace(day=calendar.monthrange(year, month)[1])
            return Reading(first, last, "month", reason, notes)
        return Reading(dt.date(year, 1, 1), dt.date(year, 12, 31), "year", reason, notes)
    except ValueError:
        return None


# Readings come in tiers: a later tier is only looked at when no reading of an
# earlier one is a real calendar date. None stands for a reading that is not.
Tiers = tuple[tuple[Reading | None, ...], ...]


def _short(digits: str) -> bool:
    return len(digits) <= 2


def _recent_year(two_digits: int, month: int, day: int, reference: dt.date) -> int:
    """The year ending in `two_digits` that puts the date nearest before `reference`, or on it."""
    year = reference.year - reference.year % 100 + two_digits
    return year - 100 if (year, month, day) > (reference.year, reference.month, reference.day) \
        else year


def _dated(year: str, month: int, day: int, stated: bool,
           reference: dt.date) -> tuple[Reading | None, ...]:
    """A full date; `stated` when it is read in the requested order. A two-digit
    year gives the most recent century, then the one before it."""
    reason, notes = (_REFORMATTED, ()) if stated else (
        "dates.order_swapped", ("dates.order_contradicted",))
    if len(year) == 4:
        return (_reading(int(year), month, day, reason, notes),)
    recent = _recent_year(int(year), month, day, reference)
    notes += ("dates.century_inferred",)
    return (_reading(recent, month, day, reason, notes),
            _reading(recent - 100, month, day, reason, notes))


def _year_last(first: str, second: str, year: str, options: Options) -> tuple[Reading | None, ...]:
    """Month and day in the order's sequence first (YMD, like MDY, puts the month
    before the day), then the other sequence. With a two-digit year at the end,
    no reading agrees with YMD."""
    a, b = int(first), int(second)
    (month, day), (other_month, other_day) = ((a, b), (b, a)) if options.date_order != "DMY" \
        else ((b, a), (a, b))
    stated = len(year) == 4 or options.date_order != "YMD"
    return (_dated(year, month, day, stated, options.reference_date)
            + _dated(year, other_month, other_day, False, options.reference_date))


def _year_first(year: str, month: str, day: str, stated: bool,
                options: Options) -> tuple[Reading | None, ...]:
    return _dated(year, int(month), int(day), stated, options.reference_date)


def _numeric_tiers(first: str, second: str, third: str, options: Options) -> Tiers:
    if len(first) == 4 and _short(second) and _short(third):
        return (_year_first(first, second, third, True, options),)
    if len(third) == 4 and _short(first) and _short(second):
        return (_year_last(first, second, third, options),)
    if not (_short(first) and _short(second) and _short(third)):
        return ()
    # All short: the two-digit year is at the end the order puts it, else at the other end.
    year_last = (_year_last(first, second, third, options),) if len(third) == 2 else ()
    year_first = (_year_first(first, second, third, options.date_order == "YMD", options),) \
        if len(first) == 2 else ()
    return year_first + year_last if options.date_order == "YMD" else year_last + year_first


def _month_year_tiers(first: str, second: str) -> Tiers:
    year, month = (first, second) if len(first) == 4 else (second, first)
    if len(year) != 4 or not _short(month):
        return ()
    return ((_reading(int(year), int(month)),),)


def _named_month_tiers(month: int, parts: Parts, options: Options) -> Tiers:
    numbers = parts.numbers
    if len(numbers) == 1:
        year = numbers[0]
        return ((_reading(int(year), month),),) if len(year) == 4 else ()
    if len(numbers) != 2:
        return ()
    # Positions of (day, year): the year last, unless the order puts it first.
    # A number written with an ordinal suffix is a day; a year has two or four digits.
    arrangements = [(0, 1), (1, 0)] if options.date_order != "YMD" else [(1, 0), (0, 1)]
    fitting = [(numbers[day], numbers[year]) for day, year in arrangements
               if _short(numbers[day]) and year not in parts.ordinals
               and len(numbers[year]) in (2, 4)]
    return tuple(_dated(year, month, int(day), rank == 0, options.reference_date)
                 for rank, (day, year) in enumerate(fitting))


def _compact_tiers(digits: str, options: Options) -> Tiers:
    if len(digits) == 4:
        return ((_reading(int(digits)),),)
    # A spreadsheet writes a serial without leading zeros.
    if len(digits) == _SERIAL_DIGITS and digits[0] != "0":
        day = spreadsheet_serial_to_date(int(digits))
        return ((_reading(day.year, day.month, day.day, "dates.serial_converted",
                          ("dates.spreadsheet_serial",)),),)
    if len(digits) == 6:
        # MMDDYY, DDMMYY or YYMMDD per the order; else HL7 v2 DT YYYYMM.
        return (_numeric_tiers(digits[:2], digits[2:4], digits[4:], options)
                + _month_year_tiers(digits[:4], digits[4:]))
    if len(digits) == 8:
        # HL7 v2 DT and ISO 8601 basic YYYYMMDD; else MMDDYYYY or DDMMYYYY per the order.
        return (_year_first(digits[:4], digits[4:6], digits[6:], True, options),
                _year_last(digits[:2], digits[2:4], digits[4:], options))
    return ()


def _readings(value: str, vocabulary: DateVocabulary, options: Options) -> Tiers:
    """Every reading of `value`, in tiers; none when it is not shaped like a date."""
    iso = _ISO_DAY.fullmatch(value)
    if iso:
        return ((_reading(int(iso[1]), int(iso[2]), int(iso[3])),),)
    parts = _parts(value, vocabulary)
    if parts is None:
        return ()
    numbers, months = parts.numbers, parts.months
    if months:
        return _named_month_tiers(months[0], parts, options) if len(months) == 1 else ()
    if len(numbers) == 1:
        return _compact_tiers(numbers[0], options)
    if len(numbers) == 2:
        return _month_year_tiers(*numbers)
    if len(numbers) == 3:
        return _numeric_tiers(*numbers, options)
    return ()


# ---- choose the reading -----------------------------------------------------

@functools.lru_cache(maxsize=64)
def _earliest_birth(reference: dt.date, max_age: int) -> dt.date:
    """The earliest birth date of someone no older than `max_age` on `reference`."""
    if reference.year - max_age - 1 < dt.MINYEAR:
        return dt.date.min
    # relativedelta moves a reference date of 29 February to the 28th in a common year.
    return reference - relativedelta(years=max_age + 1) + dt.timedelta(days=1)


class Choice(NamedTuple):
    reading: Reading
    value: str           # the reading in ISO 8601
    problem: str | None  # why it cannot be a living person's birth date
    alternatives: list[str]


def _choose(tiers: Tiers, reference: dt.date, max_age: int) -> Choice | None:
    """The first plausible reading (not after the reference date, not older
    than the maximum age), else the first real one; None when no reading is a
    real date. The alternatives are the other readings exactly as credible, so
    that only the preferred order decided between them."""
    for tier in tiers:
        real = [reading for reading in tier if reading is not None]
        if real:
            break
    else:
        return None
    earliest = _earliest_birth(reference, max_age)
    plausible = [reading for reading in real
                 if reading.first <= reference and reading.last >= earliest]
    pool = plausible or real
    chosen = pool[0]
    problem = None if plausible else (
        "dates.future" if chosen.first > reference else "dates.over_max_age")
    value = chosen.iso()
    alternatives: list[str] = []
    for reading in pool[1:]:
        other = reading.iso()
        if other != value and other not in alternatives:
            alternatives.append(other)
    return Choice(chosen, value, problem, alternatives)


# ---- assemble ---------------------------------------------------------------

def _unreadable(trail: Trail, code: str) -> Outcome:
    trail.flag(code)
    return Outcome({"value": trail.revert(), "precision": None, "ambiguous": False,
                    "alternatives": [], "valid": False}, [trail])


def _assemble(trail: Trail, choice: Choice, vocabulary: DateVocabulary) -> Outcome:
    reading = choice.reading
    value = trail.apply(choice.value, reading.reason)
    for code in reading.notes:
        trail.flag(code)
    if choice.alternatives:
        trail.flag("dates.ambiguous")
    if reading.precision != "day":
        trail.flag("dates.partial")
    if choice.problem:
        trail.flag(choice.problem)
    placeholder = value in vocabulary.placeholders
    if placeholder:
        trail.flag("dates.placeholder")
    keys: dict[str, Any] = {}
    if not (choice.problem or placeholder):
        if reading.precision == "day":
            keys["birth_date"] = value.replace("-", "")  # YYYYMMDD, as linkage keys are compared
        keys["birth_year"] = reading.first.year
    # The rules' severities decide validity, so a table can make a flag fatal.
    valid = all(flag["severity"] != "invalid" for flag in trail.flags)
    return Outcome({"value": value, "precision": reading.precision,
                    "ambiguous": bool(choice.alternatives), "alternatives": choice.alternatives,
                    "valid": valid}, [trail], keys)


def clean_birth_date(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    trail = Trail("birth_date", raw, rules.reasons)
    vocabulary: DateVocabulary = rules["dates"]
    value = text.tidy(trail)
    if value is None:
        return Outcome(None, [trail])
    if len(value) > vocabulary.max_length:
        return _unreadable(trail, "dates.unparseable")
    date_part = _without_time(value, vocabulary)
    if date_part is not None:
        value = trail.apply(date_part, "dates.time_dropped")
    tiers = _readings(value, vocabulary, options)
    if not tiers:
        return _unreadable(trail, "dates.unparseable")
    choice = _choose(tiers, options.reference_date, vocabulary.max_age)
    if choice is None:
        return _unreadable(trail, "dates.impossible")
    return _assemble(trail, choice, vocabulary)


KIND = FieldKind(name="dates", input_keys=("birth_date",), output_key="birth_date",
                 clean=clean_birth_date, compile_rules=compile_rules)
