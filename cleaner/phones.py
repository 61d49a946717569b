"""Phone numbers: every number in a cell read with phonenumbers, the request's
country as the default region, and returned in ITU-T E.164 form with its
extension, type and use.

One cell goes through named stages, each recorded on the trail of the number
it produces: split (several numbers in one cell), extension, words (labels,
unknown text, keypad letters, look-alike letters), reading (phonenumbers, with
the international-prefix alternative), checks (placeholders, fictional range,
validity) and assembly. What people write around numbers is data in
rules/phones.toml; the code never asks which country it is looking at.
"""

from __future__ import annotations

import functools
import itertools
import re
import unicodedata
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, NamedTuple

import phonenumbers
from marshmallow import Schema, ValidationError, fields, validate, validates_schema
from phonenumbers import PhoneNumberFormat, PhoneNumberType, ValidationResult

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook
from cleaner.trail import Trail

FHIR_CONTACT_USES = ("home", "work", "temp", "old", "mobile")  # HL7 FHIR ContactPoint.use
TYPE_NAMES = MappingProxyType({value: name.lower() for name, value in vars(PhoneNumberType).items()
                               if name.isupper()})
# phonenumbers' own region code for numbers of no country (+800, +808, +870...);
# the contract's region is an ISO 3166-1 code, so such numbers have none.
NON_GEOGRAPHIC = phonenumbers.REGION_CODE_FOR_NON_GEO_ENTITY

_DIGIT = re.compile(r"\d")
_NOT_DIGIT = re.compile(r"\D+")
_NOT_ALNUM = re.compile(r"[\W_]+")
_LAST_DIGIT = re.compile(r"\d\D*$")
_LETTERS = re.compile(r"[^\W\d_]+")


# --- rules ------------------------------------------------------------------

@dataclass(frozen=True)
class NationalPatterns:
    """Table rows matched against the national significant number; a row
    without a country code applies to every country. The rows that apply to a
    country code are joined into one regex, so a check is one search."""
    everywhere: re.Pattern[str] | None
    by_country_code: Mapping[int, re.Pattern[str]]

    @classmethod
    def compile(cls, rows: list[dict[str, Any]]) -> NationalPatterns:
        grouped: dict[int | None, list[str]] = {}
        for row in rows:
            grouped.setdefault(row["country_code"], []).append(row["national_pattern"])
        everywhere = grouped.pop(None, [])

        def joined(patterns: list[str]) -> re.Pattern[str] | None:
            return re.compile("|".join(f"(?:{pattern})" for pattern in patterns)) \
                if patterns else None
        return cls(joined(everywhere), MappingProxyType(
            {code: joined(everywhere + patterns) for code, patterns in grouped.items()}))

    def match(self, country_code: int | None, national_number: str) -> bool:
        pattern = self.by_country_code.get(country_code, self.everywhere)
        return pattern is not None and pattern.search(national_number) is not None


@dataclass(frozen=True)
class PhoneRules:
    max_cell_length: int
    min_number_digits: int
    no_phone_texts: frozenset[str]
    separators: re.Pattern[str]
    extension: re.Pattern[str]          # groups: digits, tail (what follows the extension)
    international_prefixes: tuple[str, ...]
    glue_before_label: frozenset[str]
    glue_after_label: frozenset[str]
    label_uses: Mapping[str, str | None]  # casefolded word -> FHIR use, None for "a phone"
    keypad: Mapping[int, str]           # str.translate table, letter -> key digit
    placeholders: NationalPatterns
    repeated_digit_is_placeholder: bool
    fictional: NationalPatterns

    def is_placeholder(self, country_code: int | None, national_number: str) -> bool:
        return (self.repeated_digit_is_placeholder and len(set(national_number)) == 1
                < len(national_number)) or self.placeholders.match(country_code, national_number)


def _is_regex_without_groups(pattern: str) -> None:
    try:
        compiled = re.compile(pattern)
    except re.error as exc:
        raise ValidationError(f"is not a regular expression: {exc}") from None
    # Rows are joined into one regex, where a row's group numbers would shift.
    if compiled.groups:
        raise ValidationError("must not capture: write (?:...) for a group")


def _not_blank(item: str) -> None:
    if not item.strip():
        raise ValidationError("must hold something besides white space")


class _LabelSchema(Schema):
    use = fields.String(load_default=None, validate=validate.OneOf(FHIR_CONTACT_USES))
    words = fields.List(fields.String(validate=validate.Regexp(r"^[^\W\d_]+$")),
                        required=True, validate=validate.Length(min=1))


class _NationalPatternSchema(Schema):
    country_code = fields.Integer(load_default=None, validate=validate.Range(min=1, max=999))
    national_pattern = fields.String(required=True, validate=_is_regex_without_groups)


class _PhoneRulesSchema(Schema):
    max_cell_length = fields.Integer(required=True, validate=validate.Range(min=1))
    min_number_digits = fields.Integer(required=True, validate=validate.Range(min=1))
    # Without digits, so that only a cell without digits need be looked up.
    no_phone_texts = fields.List(fields.String(validate=validate.Regexp(r"^\D+$")),
                                 required=True)
    separators = fields.List(fields.String(validate=_not_blank), required=True)
    extension_markers = fields.List(fields.String(validate=validate.Regexp(r"^\D+$")),
                                    required=True, validate=validate.Length(min=1))
    max_extension_digits = fields.Integer(required=True, validate=validate.Range(min=1))
    international_prefixes = fields.List(fields.String(validate=validate.Regexp(r"^\d+$")),
                                         required=True)
    label_punctuation = fields.String(required=True)
    labels = fields.List(fields.Nested(_LabelSchema), required=True)
    keypad = fields.Dict(keys=fields.String(validate=validate.Regexp(r"^[0-9]$")),
                         values=fields.String(validate=validate.Regexp(r"^[A-Z]+$")),
                         required=True)
    placeholders = fields.List(fields.Nested(_NationalPatternSchema), required=True)
    repeated_digit_is_placeholder = fields.Boolean(required=True)
    fictional = fields.List(fields.Nested(_NationalPatternSchema), required=True)

    @validates_schema
    def each_word_and_letter_once(self, data, **_):
        words = [_folded(word) for label in data.get("labels", []) for word in label["words"]]
        if len(words) != len(set(words)):
            raise ValidationError("a word is listed under more than one label", "labels")
        letters = "".join(data.get("keypad", {}).values())
        if len(letters) != len(set(letters)):
            raise ValidationError("a letter is on more than one key", "keypad")


def _folded(word: str) -> str:
    return (word if word.isascii() else unicodedata.normalize("NFC", word)).casefold()


def _alternation(items: list[str]) -> str:
    """A regex alternative of literal items, longest first so 'ext' beats 'x'."""
    return "|".join(re.escape(item) for item in sorted(items, key=len, reverse=True))


def compile_rules(data: dict[str, Any], context: LoadContext) -> PhoneRules:
    loaded = context.validated(_PhoneRulesSchema(), data)
    # The marker must not end a word ("FEDEX 12" is no extension); the extension
    # is the last digit group, though a label may follow it ("x12 (w)").
    extension = re.compile(
        rf"(?<![^\W\d_])(?:{_alternation(loaded['extension_markers'])})[\s.:=]*"
        rf"(?P<digits>\d{{1,{loaded['max_extension_digits']}}})(?P<tail>\D*)$", re.IGNORECASE)
    keypad = {ord(letter): digit for digit, letters in loaded["keypad"].items()
              for letter in letters + letters.lower()}
    punctuation = frozenset(loaded["label_punctuation"])
    return PhoneRules(
        max_cell_length=loaded["max_cell_length"],
        min_number_digits=loaded["min_number_digits"],
        no_phone_texts=frozenset(_folded(item) for item in loaded["no_phone_texts"]),
        separators=re.compile(_alternation(loaded["separators"]), re.IGNORECASE),
        extension=extension,
        international_prefixes=tuple(sorted(loaded["international_prefixes"], key=len,
                                            reverse=True)),
        glue_before_label=punctuation | {"("},
        glue_after_label=punctuation | {")"},
        label_uses=MappingProxyType({_folded(word): label["use"] for label in loaded["labels"]
                                     for word in label["words"]}),
        keypad=MappingProxyType(keypad),
        placeholders=NationalPatterns.compile(loaded["placeholders"]),
        repeated_digit_is_placeholder=loaded["repeated_digit_is_placeholder"],
        fictional=NationalPatterns.compile(loaded["fictional"]))


# --- reading with phonenumbers ----------------------------------------------

@dataclass(frozen=True, slots=True)
class Reading:
    """What phonenumbers makes of one string of digits in one default region."""
    country_code: int
    national_number: str
    possibility: int                    # phonenumbers.ValidationResult
    e164: str | None                    # only for valid numbers and numbers of a possible length
    national: str | None
    region: str | None
    type: str
    valid: bool

    @property
    def rank(self) -> tuple[bool, bool, bool]:
        """Valid beats merely possible, which beats dialled-locally-only."""
        return (self.valid, self.possibility == ValidationResult.IS_POSSIBLE,
                self.possibility == ValidationResult.IS_POSSIBLE_LOCAL_ONLY)


# Parsing dominates the cost of a phone, and registration data repeats numbers
# (clinics, switchboards, a family's home phone), so each distinct digit string
# is read once per process. The key holds no formatting, so "(217) 555-0142"
# and "217.555.0142" share an entry.
@functools.lru_cache(maxsize=16384)
def read_digits(dialable: str, region: str) -> Reading | None:
    """phonenumbers' reading of `dialable` (digits, perhaps after '+'), or None."""
    try:
        number = phonenumbers.parse(dialable, region)
    except phonenumbers.NumberParseException:
        return None
    possibility = phonenumbers.is_possible_number_with_reason(number)
    national_number = phonenumbers.national_significant_number(number)
    # phonenumbers.is_valid_number is exactly "number_type is not UNKNOWN" (both
    # look the type up in the metadata of region_code_for_number), so the
    # metadata is matched once instead of twice.
    number_type = phonenumbers.number_type(number)
    valid = number_type != PhoneNumberType.UNKNOWN
    # Validity, not length alone, decides whether a number is formed: a number
    # that is only dialled locally can be valid as it stands (Canada's 310-xxxx).
    if not valid and possibility != ValidationResult.IS_POSSIBLE:
        return Reading(number.country_code, national_number, possibility, None, None, None,
                       TYPE_NAMES[number_type], False)
    region_code = phonenumbers.region_code_for_number(number)
    return Reading(number.country_code, national_number, possibility,
                   phonenumbers.format_number(number, PhoneNumberFormat.E164),
                   phonenumbers.format_number(number, PhoneNumberFormat.NATIONAL),
                   None if region_code == NON_GEOGRAPHIC else region_code,
                   TYPE_NAMES[number_type], valid)


def _best_reading(dialable: str, region: str,
                  rules: PhoneRules) -> tuple[Reading | None, str | None]:
    """The default region's reading, unless reading a written international
    prefix as '+' gives a better one: phonenumbers only knows the default
    region's own prefix, so 0044... in the US would become +1 0044..."""
    default = read_digits(dialable, region)
    if (default and default.valid) or dialable.startswith("+"):
        return default, None
    best, best_prefix = default, None
    for prefix in rules.international_prefixes:
        if dialable.startswith(prefix):
            reading = read_digits("+" + dialable[len(prefix):], region)
            if reading and (best is None or reading.rank > best.rank):
                best, best_prefix = reading, prefix
    return best, best_prefix


def _prefix_as_plus(value: str, prefix: str) -> str:
    after_prefix = next(itertools.islice(_DIGIT.finditer(value), len(prefix) - 1, None)).end()
    return "+" + value[after_prefix:].lstrip(" .-")


# --- split ------------------------------------------------------------------

def _dialable_count(piece: str) -> int:
    """Digits, and letters after the first digit (a vanity number's letters)."""
    first_digit = _DIGIT.search(piece)
    return len(_NOT_ALNUM.sub("", piece[first_digit.start():])) if first_digit else 0


def split_cell(cell: str, rules: PhoneRules) -> list[str]:
    """The numbers in a cell. A separator only splits where the text on each
    side holds enough for a number, so 217/555-0142 stays one number: pieces
    are joined until they do, and a short tail joins the number before it."""
    cuts = [match.span() for match in rules.separators.finditer(cell)]
    if not cuts:
        return [cell]
    starts = [0] + [end for _, end in cuts]
    ends = [start for start, _ in cuts] + [len(cell)]
    parts: list[list[int]] = []
    open_start, count = None, 0
    for start, end in zip(starts, ends):
        if open_start is None:
            open_start, count = start, 0
        count += _dialable_count(cell[start:end])
        if count >= rules.min_number_digits:
            parts.append([open_start, end])
            open_start = None
    if open_start is not None:
        if parts:
            parts[-1][1] = len(cell)
        else:
            parts.append([0, len(cell)])
    return [cell[start:end].strip() for start, end in parts]


# --- words ------------------------------------------------------------------

LABEL, TEXT, KEYPAD = "label", "text", "keypad"


class Words(NamedTuple):
    """The letters of one number, sorted out."""
    pieces: tuple[tuple[str, str | None], ...]   # (text, LABEL | TEXT | KEYPAD | None to keep)
    kinds: frozenset[str]
    use: str | None
    has_lookalikes: bool

    def without(self, *kinds: str, keypad: Mapping[int, str] | None = None) -> str:
        kept = (piece.translate(keypad) if keypad and kind == KEYPAD else piece
                for piece, kind in self.pieces if kind not in kinds)
        return " ".join("".join(kept).split())


def sort_words(value: str, rules: PhoneRules, text_rules: text.TextRules) -> Words:
    """Decide what each run of letters is.

    A run of only O, o, I, l sitting among digits is look-alike digits. Other
    letters are keypad letters when the number needs them to have enough
    digits (1-800-FLOWERS, (888) 555-HELP); otherwise, or before the first
    digit, they are words beside the number: a label when the rules list
    them (with the punctuation around them), else unknown text.
    """
    first_digit = _DIGIT.search(value).start()
    runs = list(_LETTERS.finditer(value))
    lookalikes = [run for run in runs if _is_lookalike(run, value, first_digit, text_rules)]
    digit_like = len(_NOT_DIGIT.sub("", value)) + sum(len(run.group()) for run in lookalikes)

    spans: list[tuple[int, int, str]] = []
    use: str | None = None
    keypad_letters = 0
    for run in runs:
        if lookalikes and run in lookalikes:
            continue
        word = run.group()
        start, end = run.span()
        if (start > first_digit and word.translate(rules.keypad).isdigit()
                and digit_like + keypad_letters < rules.min_number_digits):
            keypad_letters += len(word)
            spans.append((start, end, KEYPAD))
            continue
        folded = _folded(word)
        kind = LABEL if folded in rules.label_uses else TEXT
        if kind == LABEL and use is None:
            use = rules.label_uses[folded]
        while start and value[start - 1] in rules.glue_before_label:
            start -= 1
        while end < len(value) and value[end] in rules.glue_after_label:
            end += 1
        spans.append((max(start, spans[-1][1]) if spans else start, end, kind))

    pieces: list[tuple[str, str | None]] = []
    position = 0
    for start, end, kind in spans:
        pieces += [(value[position:start], None), (value[start:end], kind)]
        position = end
    pieces.append((value[position:], None))
    return Words(tuple(pieces), frozenset(kind for _, _, kind in spans), use, bool(lookalikes))


def _is_lookalike(run: re.Match[str], value: str, first_digit: int,
                  text_rules: text.TextRules) -> bool:
    start, end = run.span()
    among_digits = (start and value[start - 1].isdecimal()) or (
        end < len(value) and value[end].isdecimal()) or (
        first_digit < start and _LAST_DIGIT.search(value).start() >= end)
    return bool(among_digits) and text_rules.lookalike_digits(run.group())


def _read_words(trail: Trail, value: str, rules: RuleBook) -> tuple[str, str | None]:
    phone_rules: PhoneRules = rules["phones"]
    words = sort_words(value, phone_rules, rules["text"])
    if LABEL in words.kinds:
        value = trail.apply(words.without(LABEL), "phones.label_removed")
    if TEXT in words.kinds:
        value = trail.apply(words.without(LABEL, TEXT), "phones.text_removed")
        trail.flag("phones.unrecognised_text")
    if KEYPAD in words.kinds:
        value = trail.apply(words.without(LABEL, TEXT, keypad=phone_rules.keypad),
                            "phones.keypad_letters_converted")
        trail.flag("phones.vanity")
    if words.has_lookalikes:
        # Only look-alike runs are left as letters now, so the shared repair,
        # which replaces every look-alike letter, touches nothing else.
        value = text.repair_digit_lookalikes(trail, value, rules["text"])
    return value, words.use


# --- one number -------------------------------------------------------------

class Cleaned(NamedTuple):
    entry: dict[str, Any]
    key: str | None                     # the E.164 match key, when the number may be matched
    digits: str | None = None           # its national significant number, matched without a country code


def _uncleanable(trail: Trail, code: str, split_part: str | None) -> Cleaned:
    """Give the number back as it was written: the value as sent, or for one
    of several numbers in a cell, its part of the cell."""
    trail.flag(code)
    value = trail.revert()
    if split_part is not None:
        value = trail.apply(split_part, "phones.split_multiple")
    return Cleaned({"e164": None, "extension": None, "region": None, "type": None,
                    "valid": False, "use": None, "national": None, "value": value}, None)


def clean_number(trail: Trail, value: str, region: str, rules: RuleBook,
                 split_part: str | None = None) -> Cleaned:
    """One number, already split from its cell; `split_part` is set when the
    cell held several."""
    phone_rules: PhoneRules = rules["phones"]
    extension = None
    found = phone_rules.extension.search(value)
    if found:
        extension = found["digits"]
        number_text = (value[:found.start()].rstrip(" ,;") + found["tail"]).strip()
        value = trail.apply(number_text, "phones.extension_split")
    if not _DIGIT.search(value):
        return _uncleanable(trail, "phones.unparseable", split_part)
    use = None
    if _LETTERS.search(value):
        value, use = _read_words(trail, value, rules)

    digits = _NOT_DIGIT.sub("", value)
    dialable = "+" + digits if "+" in value[:_DIGIT.search(value).start()] else digits
    reading, prefix = _best_reading(dialable, region, phone_rules)
    placeholder = (phone_rules.is_placeholder(reading.country_code, reading.national_number)
                   if reading else phone_rules.is_placeholder(None, digits))
    if reading is None or reading.e164 is None:
        local_only = reading is not None and \
            reading.possibility == ValidationResult.IS_POSSIBLE_LOCAL_ONLY
        cleaned = _uncleanable(trail, "phones.missing_area_code" if local_only
                               else "phones.unparseable", split_part)
        if placeholder:
            trail.flag("phones.placeholder")
        return cleaned

    if prefix:
        trail.apply(_prefix_as_plus(value, prefix), "phones.international_prefix")
    trail.apply(reading.e164, "phones.formatted_e164")
    if not reading.valid:
        trail.flag("phones.invalid")
    if placeholder:
        trail.flag("phones.placeholder")
    if phone_rules.fictional.match(reading.country_code, reading.national_number):
        trail.flag("phones.fictional_range")
    entry = {"e164": reading.e164, "extension": extension, "region": reading.region,
             "type": reading.type, "valid": reading.valid, "use": use,
             "national": reading.national}
    matchable = reading.valid and not placeholder
    return Cleaned(entry, reading.e164 if matchable else None,
                   reading.national_number if matchable else None)


# --- one cell, and the field ------------------------------------------------

def clean_cell(trail: Trail, cell: str, first_position: int, region: str,
               rules: RuleBook) -> list[tuple[Trail, Cleaned]]:
    """The numbers in one tidied cell; the n-th gets field phones[first_position + n]."""
    phone_rules: PhoneRules = rules["phones"]
    if len(cell) > phone_rules.max_cell_length:
        return [(trail, _uncleanable(trail, "phones.unparseable", None))]
    if not _DIGIT.search(cell):
        no_phone = _folded(cell) in phone_rules.no_phone_texts
        return [(trail, _uncleanable(trail, "phones.placeholder" if no_phone
                                     else "phones.unparseable", None))]
    parts = split_cell(cell, phone_rules)
    if len(parts) == 1:
        return [(trail, clean_number(trail, cell, region, rules))]
    cleaned = []
    for offset, part in enumerate(parts):
        part_trail = trail.split_off(f"phones[{first_position + offset}]", part,
                                     "phones.split_multiple")
        cleaned.append((part_trail, clean_number(part_trail, part, region, rules, part)))
    return cleaned


def clean_phones(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    """A cell or a list of cells; every number found becomes one entry."""
    entries: list[dict[str, Any]] = []
    trails: list[Trail] = []
    keys: list[str] = []
    digits: list[str] = []
    for item in raw if isinstance(raw, list) else [raw]:
        if item is None:
            continue
        trail = Trail(f"phones[{len(entries)}]", item, rules.reasons)
        cell = text.tidy(trail)
        if cell is None:
            # No entry comes of a blank cell; its trail says why, on the field itself.
            trails.append(trail.fork("phones"))
            continue
        for number_trail, cleaned in clean_cell(trail, cell, len(entries), options.country, rules):
            entries.append(cleaned.entry)
            trails.append(number_trail)
            if cleaned.key:
                keys.append(cleaned.key)
                digits.append(cleaned.digits)
    return Outcome(entries, trails, {"phones": list(dict.fromkeys(keys)),
                                     "phone_digits": list(dict.fromkeys(digits))} if keys else {})


KIND = FieldKind(name="phones", input_keys=("phone",), output_key="phones",
                 clean=clean_phones, compile_rules=compile_rules, accepts_list=True)
