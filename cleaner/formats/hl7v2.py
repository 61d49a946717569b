"""HL7 v2 messages: the demographics of every PID segment cleaned, every
other byte of the message as it was sent.

The stages, each a small function:

1. `read_message`: the bytes become text and segments. The character set is
   MSH-18 (its first repetition, HL7 Table 0211, the sets listed in
   rules/hl7v2.toml); without one, UTF-8, else ISO 8859-1, flagged. The text
   must encode back to exactly the bytes sent, so an untouched segment is
   returned byte for byte. Segments end in CR as the standard says, or in LF
   or CR LF: each break is kept as sent. The delimiters are MSH-1 and MSH-2
   (four, or five with v2.7's truncation character); a body that begins with
   a PID segment instead of MSH uses the standard's `|^~\\&`.
2. `clean_pid`, once per PID segment: the fields this service cleans are
   split into repetitions, components and subcomponents (split and joined
   again with the same delimiters, so nothing else moves); each piece is read
   (escapes resolved), cleaned by the engine as a record of its own through
   `Findings`, and written back in v2's form (escapes restored):
   - PID-5 XPN, every repetition: family (XPN.1, the surname subcomponent of
     FN), given (.2), middle (.3), suffix (.4), prefix (.5). The name type
     (.7) and every other component are kept. A nickname or credentials the
     engine finds have no XPN component here, so such a name is kept as sent
     and flagged (hl7v2.part_unplaced).
   - PID-7 TS: its DTM date written YYYYMMDD, YYYYMM or YYYY by the cleaned
     precision; a time part (anything after eight digits) is not sent to the
     engine and is kept, as is TS.2.
   - PID-8: a Table 0001 code in any case is written as that code (A and N
     keep their meaning); any other word or code is read by the engine as
     AdministrativeGender and written as the code rules/hl7v2.toml maps it to.
   - PID-11 XAD, every repetition: street (XAD.1, the first subcomponent of
     SAD), other designation (.2: a unit the engine moves off the street line
     goes here), city, state, ZIP. The country (.6) is read, so that a foreign
     address is not taken for a US one, but kept as sent: v2 writes it as
     ISO 3166 alpha-3 (Table 0399), the engine as alpha-2.
   - PID-13 and PID-14 XTN, every repetition: when XTN.3 is an email
     equipment type (Internet, X.400), the address in XTN.4 (or XTN.1 when
     XTN.4 is empty) is cleaned as an email; otherwise XTN.4, when present,
     is. A phone is read from XTN.1 when it is sent, and written there as
     E.164 followed by `X` and the extension (v2's own extension mark); else
     from XTN.5-8, written back as country code, area code, local number and
     extension, digits only. XTN.1 and XTN.5-8 sent together are not
     reconciled: XTN.1 is cleaned, XTN.5-8 kept.
   - PID-19: the SSN.
   PID-7, 8 and 19 do not repeat; only a first repetition is cleaned.
3. `clean_message` joins the segments and encodes the text back.

An element that is empty or the HL7 null `""` is left alone. An element that
holds an escape other than those of the delimiters (\\H\\ \\N\\ \\Xhh\\ \\.br\\
...) or ends in the truncation character, or whose cleaned value the character
set cannot carry, is left as sent with a flag; so is every value the engine
cannot clean.

Places in changes and flags: `PID[n]-f[r].c.s`: the n-th PID segment of the
message (from 1), field f, repetition r (given for the repeating fields 5,
11, 13, 14 only), component c and subcomponent s where the element is one
(`PID[1]-5[2].1.1` is the surname of the second name, `PID[1]-13[1]` the
first home phone as a whole, `PID[1]-7.1` the birth date, `PID[1]-8` the
sex). `from` and `to` are values as read, escapes resolved. A value longer
than rules/record.toml max_field_chars raises InvalidInput whose pointers are
such places.
"""

from __future__ import annotations

import codecs
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import phonenumbers
from marshmallow import Schema, fields, validate

from cleaner.formats import Findings
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook, RulesError
from cleaner.sex import GENDER_CODES

NULL = '""'
_BREAK = re.compile(r"(\r\n|\r|\n)")
# MSH-18 is MSH's 18th field; MSH-1 is the field separator itself, so it is
# the 17th item after the segment id when the segment is split on it.
_MSH_CHARSET = 17
# The MSH segment is read as ASCII before its character set is known.
_ASCII_PROBE = "MSH|^~\\&"


class NotHl7v2(ValueError):
    """The body is not an HL7 v2 message or PID segment. The message says what
    is wrong with its shape and never quotes it."""


@dataclass(frozen=True)
class Delimiters:
    field: str
    component: str
    repetition: str
    escape: str
    subcomponent: str
    truncation: str = ""

    @classmethod
    def parse(cls, field: str, encoding: str) -> Delimiters:
        chars = field + encoding
        if not (4 <= len(encoding) <= 5 and len(set(chars)) == len(chars)
                and all(char.isprintable() and not char.isalnum() and not char.isspace()
                        for char in chars)):
            raise NotHl7v2("MSH-1 and MSH-2 must be five or six distinct delimiter characters "
                           "(field, component, repetition, escape, subcomponent, truncation).")
        return cls(field, *encoding)

    def unescaped(self, raw: str) -> str | None:
        """The value `raw` stands for, or None when it holds an escape sequence
        other than those of the delimiters, or an unterminated one."""
        if self.escape not in raw:
            return raw
        pieces = raw.split(self.escape)
        if len(pieces) % 2 == 0:
            return None
        named = self._named()
        for index in range(1, len(pieces), 2):
            if pieces[index] not in named:
                return None
            pieces[index] = named[pieces[index]]
        return "".join(pieces)

    def escaped(self, value: str) -> str:
        return value.translate({ord(char): f"{self.escape}{name}{self.escape}"
                                for name, char in self._named().items()})

    def _named(self) -> dict[str, str]:
        named = {"F": self.field, "S": self.component, "T": self.subcomponent,
                 "R": self.repetition, "E": self.escape}
        if self.truncation:
            named["P"] = self.truncation
        return named


# --- rules ----------------------------------------------------------------------


@dataclass(frozen=True)
class Hl7v2Rules:
    default_delimiters: Delimiters
    fallback_charset: str
    charsets: Mapping[str, str]          # MSH-18 value, upper case -> encoding
    table_0001: frozenset[str]
    sex_written_as: Mapping[str, str]    # AdministrativeGender code -> Table 0001 code
    email_equipment_types: frozenset[str]  # case-folded


_Hl7v2Schema = Schema.from_dict({
    "default_delimiters": fields.String(required=True, validate=validate.Length(min=5, max=6)),
    "fallback_charset": fields.String(required=True),
    "charsets": fields.Dict(keys=fields.String(validate=validate.Length(min=1)),
                            values=fields.String(), required=True),
    "sex": fields.Nested(Schema.from_dict({
        "table_0001": fields.List(fields.String(validate=validate.Length(min=1)), required=True),
        "written_as": fields.Dict(keys=fields.String(validate=validate.OneOf(GENDER_CODES)),
                                  values=fields.String(), required=True),
    }), required=True),
    "telecom": fields.Nested(Schema.from_dict({
        "email_equipment_types": fields.List(fields.String(), required=True),
    }), required=True),
})


def _ascii_compatible(name: str) -> bool:
    try:
        codecs.lookup(name)
        return _ASCII_PROBE.encode(name) == _ASCII_PROBE.encode("ascii")
    except LookupError:
        return False


def compile_rules(data: dict[str, Any], context: LoadContext) -> Hl7v2Rules:
    loaded = context.validated(_Hl7v2Schema(), data)
    unreadable = sorted(name for name in [*loaded["charsets"].values(), loaded["fallback_charset"]]
                        if not _ascii_compatible(name))
    if unreadable:
        raise RulesError(f"hl7v2: {unreadable} are not encodings that read MSH as ASCII")
    try:
        bytes(range(256)).decode(loaded["fallback_charset"])
    except UnicodeDecodeError:
        raise RulesError("hl7v2: fallback_charset must give every byte a character") from None
    sex = loaded["sex"]
    table = frozenset(sex["table_0001"])
    if set(sex["written_as"]) != set(GENDER_CODES) or not set(sex["written_as"].values()) <= table:
        raise RulesError("hl7v2: sex.written_as must map each AdministrativeGender code "
                         f"{list(GENDER_CODES)} to a code of table_0001")
    text = loaded["default_delimiters"]
    try:
        delimiters = Delimiters.parse(text[0], text[1:])
    except NotHl7v2 as exc:
        raise RulesError(f"hl7v2: default_delimiters: {exc}") from None
    return Hl7v2Rules(
        default_delimiters=delimiters, fallback_charset=loaded["fallback_charset"],
        charsets={name.strip().upper(): encoding for name, encoding in loaded["charsets"].items()},
        table_0001=table, sex_written_as=sex["written_as"],
        email_equipment_types=frozenset(
            kind.casefold() for kind in loaded["telecom"]["email_equipment_types"]))


# --- stage 1: bytes to segments -------------------------------------------------------


@dataclass(frozen=True)
class Message:
    pieces: list[str]        # segments at even indexes, the breaks as sent between them
    delimiters: Delimiters
    charset: str
    charset_assumed: bool    # no MSH-18, not UTF-8: read as the fallback set


def _first_line(body: bytes) -> str:
    # Every listed set reads MSH as ASCII, and ISO 8859-1 decodes any byte.
    return _BREAK.split(body.decode("iso-8859-1"), maxsplit=1)[0]


def _declared_charset(msh: list[str], delimiters: Delimiters) -> str:
    if len(msh) <= _MSH_CHARSET:
        return ""
    first = msh[_MSH_CHARSET].split(delimiters.repetition)[0].split(delimiters.component)[0]
    return first.strip().upper()


def _decoded(body: bytes, declared: str, rules: Hl7v2Rules) -> tuple[str, str, bool]:
    if not declared:
        try:
            return body.decode("utf-8"), "utf-8", False
        except UnicodeDecodeError:
            return body.decode(rules.fallback_charset), rules.fallback_charset, True
    charset = rules.charsets.get(declared)
    if charset is None:
        raise NotHl7v2("MSH-18 names a character set this service does not read; "
                       "GET /openapi.yaml lists those it does.")
    try:
        text = body.decode(charset)
    except UnicodeDecodeError:
        text = None
    if text is None or text.encode(charset) != body:
        raise NotHl7v2("The body is not text in the character set MSH-18 names.")
    return text, charset, False


def read_message(body: bytes, rules: Hl7v2Rules) -> Message:
    first = _first_line(body)
    if first.startswith("MSH") and len(first) > 3:
        msh = first.split(first[3])
        delimiters = Delimiters.parse(first[3], msh[1] if len(msh) > 1 else "")
        declared = _declared_charset(msh, delimiters)
    elif first.startswith("PID" + rules.default_delimiters.field):
        delimiters, declared = rules.default_delimiters, ""
    else:
        raise NotHl7v2("The body must be an HL7 v2 message (beginning with its MSH segment) "
                       "or a PID segment.")
    text, charset, assumed = _decoded(body, declared, rules)
    message = Message(_BREAK.split(text), delimiters, charset, assumed)
    if not any(_is_pid(segment, delimiters) for segment in message.pieces[::2]):
        raise NotHl7v2("The message holds no PID segment.")
    return message


def _is_pid(segment: str, delimiters: Delimiters) -> bool:
    return segment == "PID" or segment.startswith("PID" + delimiters.field)


# --- stage 2: one PID segment ----------------------------------------------------------


class _Repetition:
    """One repetition of a field: its components, each split into subcomponents."""

    def __init__(self, text: str, delimiters: Delimiters):
        self.components = [component.split(delimiters.subcomponent)
                           for component in text.split(delimiters.component)]

    def get(self, component: int) -> str:
        """The raw text of a component's first subcomponent."""
        return self.components[component - 1][0] if component <= len(self.components) else ""

    def set(self, component: int, raw: str) -> None:
        if self.get(component) == raw:
            return   # a component not sent stays absent, not an added delimiter
        self.components += [[""] for _ in range(component - len(self.components))]
        self.components[component - 1][0] = raw

    def text(self, delimiters: Delimiters) -> str:
        return delimiters.component.join(delimiters.subcomponent.join(subcomponents)
                                         for subcomponents in self.components)


@dataclass(frozen=True)
class _Element:
    """One engine record key read from one component of a repetition."""
    key: str        # engine record key
    field: str      # engine field its changes and flags name
    component: int
    label: str      # its place after the repetition's: ".1.1" for a first subcomponent


@dataclass
class _Piece:
    """One repetition being cleaned: what was read, and what is to be written."""
    place: str
    repetition: _Repetition
    sent: dict[int, str]          # component -> value read (escapes resolved)
    writes: dict[int, str]        # component -> value to write

    def put(self, component: int, value: str | None) -> None:
        self.writes[component] = value or ""


class _Segment:
    """What every stage of one PID segment needs."""

    def __init__(self, ordinal: int, message: Message, findings: Findings):
        self.ordinal = ordinal
        self.delimiters = message.delimiters
        self.charset = message.charset
        self.rules: Hl7v2Rules = findings.rules["hl7v2"]
        self.findings = findings

    def place(self, field: int, repetition: int | None) -> str:
        return f"PID[{self.ordinal}]-{field}" + (f"[{repetition}]" if repetition else "")

    def read(self, piece: _Piece, elements: tuple[_Element, ...]) -> dict[str, str] | None:
        """The record of a piece's non-empty elements; None (flagged) when one
        of them cannot be read, and the piece is left as sent."""
        record = {}
        for element in elements:
            raw = piece.repetition.get(element.component)
            if raw in ("", NULL):
                continue
            value = self.delimiters.unescaped(raw)
            code = ("hl7v2.escape_kept" if value is None else
                    "hl7v2.truncated" if self.delimiters.truncation
                    and raw.endswith(self.delimiters.truncation) else None)
            if code:
                self.findings.flag_at(piece.place + element.label, code)
                return None
            record[element.key] = piece.sent[element.component] = value
        return record

    def clean(self, piece: _Piece, record: dict[str, str],
              elements: tuple[_Element, ...]) -> dict[str, Any]:
        places = {element.field: piece.place + element.label for element in elements}
        return self.findings.clean(record, lambda field: places.get(field, piece.place))

    def write(self, piece: _Piece) -> None:
        """Puts a piece's new values in place, escaped; or leaves the whole piece
        as sent when a value lands on an HL7 null or the character set cannot
        carry it."""
        changed = {component: value for component, value in piece.writes.items()
                   if value != piece.sent.get(component, "")}
        if any(value and piece.repetition.get(component) == NULL
               for component, value in changed.items()):
            self.findings.keep_as_sent(piece.place, "hl7v2.part_unplaced")
            return
        try:
            for value in changed.values():
                value.encode(self.charset)
        except UnicodeEncodeError:
            self.findings.keep_as_sent(piece.place, "hl7v2.not_encodable")
            return
        for component, value in changed.items():
            piece.repetition.set(component, self.delimiters.escaped(value))


_XPN = (_Element("family", "name.family", 1, ".1.1"), _Element("given", "name.given", 2, ".2"),
        _Element("middle", "name.middle", 3, ".3"), _Element("suffix", "name.suffix", 4, ".4"),
        _Element("prefix", "name.prefix", 5, ".5"))
_XAD = (_Element("line1", "address.line1", 1, ".1.1"), _Element("line2", "address.line2", 2, ".2"),
        _Element("city", "address.city", 3, ".3"), _Element("state", "address.state", 4, ".4"),
        _Element("postal_code", "address.postal_code", 5, ".5"),
        _Element("country", "address.country", 6, ".6"))
_DTM = (_Element("birth_date", "birth_date", 1, ".1"),)
_SEX = (_Element("sex", "sex", 1, ""),)
_SSN = (_Element("ssn", "ssn", 1, ""),)
_XTN_PHONE = (_Element("phone", "phones[0]", 1, ""),)
# Country code, area/city code, local number, extension: read together as one
# number, so no one of them is an engine field of its own.
_XTN_GROUP = tuple(_Element(key, "", component, f".{component}") for component, key
                   in ((5, "country"), (6, "area"), (7, "local"), (8, "extension")))
_XTN_TYPE, _XTN_EMAIL = 3, 4


def _name(segment: _Segment, piece: _Piece) -> None:
    record = segment.read(piece, _XPN)
    if not record:
        return
    name = segment.clean(piece, record, _XPN)["name"]
    if name["nickname"] or name["credentials"]:
        segment.findings.keep_as_sent(piece.place, "hl7v2.part_unplaced")
        return
    for element in _XPN:
        piece.put(element.component, name[element.key])
    segment.write(piece)


def _address(segment: _Segment, piece: _Piece) -> None:
    record = segment.read(piece, _XAD)
    if not record:
        return
    address = segment.clean(piece, record, _XAD)["address"] or {}
    if address and not address["valid"]:
        segment.findings.keep_as_sent(piece.place)   # not read into parts (flagged): as sent
        return
    *parts, country = _XAD
    for element in parts:
        piece.put(element.component, address.get(element.key))
    sent = piece.sent.get(country.component)
    segment.findings.settle(piece.place + country.label, sent, sent)
    segment.write(piece)


_DTM_DATE_DIGITS = 8


def _birth_date(segment: _Segment, piece: _Piece) -> None:
    record = segment.read(piece, _DTM)
    if not record:
        return
    sent = record["birth_date"]
    has_time = len(sent) > _DTM_DATE_DIGITS and sent[:_DTM_DATE_DIGITS].isdigit()
    date, time = (sent[:_DTM_DATE_DIGITS], sent[_DTM_DATE_DIGITS:]) if has_time else (sent, "")
    cleaned = segment.clean(piece, {"birth_date": date}, _DTM)["birth_date"]
    if cleaned is None:   # blank
        piece.put(1, "")
    if not cleaned or cleaned["precision"] is None:
        segment.write(piece)   # blank, or not a date (flagged, as sent)
        return
    place = piece.place + _DTM[0].label
    written = segment.findings.write(place, date, cleaned["value"],
                                     cleaned["value"].replace("-", ""), "hl7v2.date_written")
    piece.put(1, written + time)
    segment.write(piece)


def _sex(segment: _Segment, piece: _Piece) -> None:
    record = segment.read(piece, _SEX)
    if not record:
        return
    cleaned = segment.clean(piece, record, _SEX)["sex"]
    if not cleaned or not cleaned["valid"]:
        piece.put(1, cleaned and cleaned["value"])
        segment.write(piece)   # blank, or not read (flagged, as sent)
        return
    code = record["sex"].strip().upper()
    if code not in segment.rules.table_0001:
        code = segment.rules.sex_written_as[cleaned["value"]]
    piece.put(1, segment.findings.write(piece.place, record["sex"], cleaned["value"], code,
                                        "hl7v2.sex_written"))
    segment.write(piece)


def _ssn(segment: _Segment, piece: _Piece) -> None:
    record = segment.read(piece, _SSN)
    if record:
        cleaned = segment.clean(piece, record, _SSN)["ssn"]
        piece.put(1, cleaned and cleaned["value"])
        segment.write(piece)


def _group_text(country: str, area: str, local: str, extension: str) -> str:
    """XTN.5-8 as one line the engine reads, and as the trail shows them."""
    return " ".join(part for part in ("+" + country if country else "", area, local,
                                      "x" + extension if extension else "") if part)


def _group_parts(e164: str, extension: str | None) -> tuple[str, str, str, str]:
    number = phonenumbers.parse(e164)
    national = phonenumbers.national_significant_number(number)
    area = phonenumbers.length_of_national_destination_code(number)
    return str(number.country_code), national[:area], national[area:], extension or ""


def _telecom(segment: _Segment, piece: _Piece) -> None:
    repetition = piece.repetition
    is_email = repetition.get(_XTN_TYPE).casefold() in segment.rules.email_equipment_types
    email_at = _XTN_EMAIL if repetition.get(_XTN_EMAIL) or not is_email else 1
    email = _Element("email", "email", email_at, f".{email_at}")
    from_group = repetition.get(1) in ("", NULL)
    elements = (email,) if is_email else (email, *(_XTN_GROUP if from_group else _XTN_PHONE))
    record = segment.read(piece, elements)
    if not record:
        return
    if from_group:
        group = tuple(record.pop(element.key, "") for element in _XTN_GROUP)
        if any(group):
            record["phone"] = _group_text(*group)
    cleaned = segment.clean(piece, record, elements)
    if "email" in record:
        piece.put(email_at, (cleaned["email"] or {}).get("value"))
    if "phone" in record:
        _write_phone(segment, piece, record["phone"], cleaned["phones"], from_group)
    segment.write(piece)


def _write_phone(segment: _Segment, piece: _Piece, sent: str, cleaned: list[dict[str, Any]],
                 from_group: bool) -> None:
    elements = _XTN_GROUP if from_group else _XTN_PHONE
    if not cleaned:   # blank: the engine cleared it
        for element in elements:
            piece.put(element.component, "")
        return
    phone = cleaned[0]
    if not phone["valid"]:
        segment.findings.keep_as_sent(piece.place)   # flagged, as sent
        return
    if from_group:
        parts = _group_parts(phone["e164"], phone["extension"])
        segment.findings.write(piece.place, sent, phone["e164"], _group_text(*parts),
                               "hl7v2.phone_written")
        for element, part in zip(elements, parts):
            piece.put(element.component, part)
    else:
        written = phone["e164"] + ("X" + phone["extension"] if phone["extension"] else "")
        piece.put(1, segment.findings.write(piece.place, sent, phone["e164"], written,
                                            "hl7v2.phone_written"))


# PID field -> (how one repetition of it is cleaned, whether it repeats)
_FIELDS: dict[int, tuple[Callable[[_Segment, _Piece], None], bool]] = {
    5: (_name, True), 7: (_birth_date, False), 8: (_sex, False), 11: (_address, True),
    13: (_telecom, True), 14: (_telecom, True), 19: (_ssn, False),
}


def clean_pid(text: str, segment: _Segment) -> str:
    delimiters = segment.delimiters
    values = text.split(delimiters.field)
    for number, (clean_one, repeats) in _FIELDS.items():
        if number >= len(values) or values[number] in ("", NULL):
            continue
        repetitions = values[number].split(delimiters.repetition)
        for index, raw in enumerate(repetitions if repeats else repetitions[:1]):
            if raw in ("", NULL):
                continue
            piece = _Piece(segment.place(number, index + 1 if repeats else None),
                           _Repetition(raw, delimiters), {}, {})
            clean_one(segment, piece)
            repetitions[index] = piece.repetition.text(delimiters)
        values[number] = delimiters.repetition.join(repetitions)
    return delimiters.field.join(values)


# --- stage 3: the whole message ------------------------------------------------------


@dataclass(frozen=True)
class CleanedMessage:
    body: bytes
    text: str
    charset: str
    pid_segments: int
    findings: Findings


def clean_message(body: bytes, options: Options, rules: RuleBook) -> CleanedMessage:
    """Raises NotHl7v2 for a body that is not a v2 message or PID segment, and
    InvalidInput (pointers are places) for a value longer than the engine takes."""
    message = read_message(body, rules["hl7v2"])
    findings = Findings(options, rules)
    if message.charset_assumed:
        findings.flag_at("MSH-18", "hl7v2.charset_assumed")
    pieces = message.pieces
    ordinal = 0
    for index in range(0, len(pieces), 2):
        if _is_pid(pieces[index], message.delimiters):
            ordinal += 1
            pieces[index] = clean_pid(pieces[index], _Segment(ordinal, message, findings))
    text = "".join(pieces)
    return CleanedMessage(text.encode(message.charset), text, message.charset, ordinal, findings)
