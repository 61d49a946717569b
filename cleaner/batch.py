"""Many records: CSV, NDJSON and JSON arrays, each record through the same
core as `POST /v1/clean`, streamed in order, one result per row.

A CSV row is read as the exact text it was written as (a record may span
lines inside quotes), so the reply can repeat it byte for byte and add the
cleaned cells after it; rows in are rows out, blank and ragged ones too.
Bytes are read as UTF-8 (with or without a byte order mark) or UTF-16 with a
byte order mark; a byte sequence that is not UTF-8 is read as Windows-1252
and its row flagged. Column names are recognised from the spellings in
rules/batch.toml, and an explicit mapping overrides them.
"""

from __future__ import annotations

import codecs
import csv
import io
import json
import re
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

import orjson
from marshmallow import Schema, fields

from cleaner.engine import KINDS, clean_record
from cleaner.options import InvalidInput, Options
from cleaner.rules import LoadContext, RuleBook, RulesError, string_lists
from cleaner.trail import Trail

_HEADER_NOISE = re.compile(r"[_\-.\s]+")
_SIGNED_NUMBER = re.compile(r"^[+-]\d+$")
_AFTER_LONE_CR = re.compile(r"(?<=\r)(?!\n)")   # old Mac files end lines with CR alone


# --- rules ------------------------------------------------------------------------

@dataclass(frozen=True)
class BatchRules:
    columns: Mapping[str, str]           # header as compared -> record key
    formula_starts: tuple[str, ...]


def header_key(header: str) -> str:
    return _HEADER_NOISE.sub(" ", header.casefold()).strip()


def compile_rules(data: dict[str, Any], context: LoadContext) -> BatchRules:
    loaded = context.validated(Schema.from_dict({
        "columns": fields.Dict(keys=fields.String(), values=fields.List(fields.String()),
                               required=True),
        **string_lists("formula_starts")})(), data)
    known = {key for kind in KINDS for key in kind.input_keys}
    columns: dict[str, str] = {}
    for key, spellings in loaded["columns"].items():
        if key not in known:
            raise RulesError(f"batch: columns names {key!r}, which no field kind reads")
        for spelling in spellings:
            if columns.setdefault(header_key(spelling), key) != key:
                raise RulesError(f"batch: the header {spelling!r} is listed for two keys")
    return BatchRules(columns=columns, formula_starts=tuple(loaded["formula_starts"]))


# --- columns -------------------------------------------------------------------

def map_columns(header: list[str], explicit: Mapping[str, str], rules: BatchRules
                ) -> dict[int, str]:
    """Column index -> record key. An explicit mapping (record key -> header)
    wins over recognised spellings; unknown keys or headers are errors."""
    known = {key for kind in KINDS for key in kind.input_keys}
    # A key the service does not know comes from the caller and is not echoed.
    problems = [("/map", "holds a key that is not a record key this service cleans")
                ] if set(explicit) - known else []
    by_header = {header_key(name): index for index, name in enumerate(header)}
    mapping: dict[int, str] = {}
    for key, column in explicit.items():
        if key not in known:
            continue
        index = by_header.get(header_key(column))
        if index is None:
            problems.append((f"/map/{key}", "names a column the header does not have"))
        else:
            mapping[index] = key
    if problems:
        raise InvalidInput(problems)
    taken = set(mapping.values())
    for index, name in enumerate(header):
        key = rules.columns.get(header_key(name))
        if index not in mapping and key is not None and (key == "phone" or key not in taken):
            mapping[index] = key
            taken.add(key)
    return mapping


def record_of(cells: list[str], mapping: Mapping[int, str]) -> dict[str, Any]:
    """The record a row's cells make; several phone columns make a list."""
    record: dict[str, Any] = {}
    for index, key in mapping.items():
        if index >= len(cells):
            continue   # a short row: the cells it lacks were not sent
        cell = cells[index]
        if key == "phone":
            record.setdefault("phone", []).append(cell)
        else:
            record[key] = cell
    return record


# --- cleaned cells -----------------------------------------------------------------

def _joined(values: Iterable[Any]) -> str:
    return " ; ".join(str(value) for value in values if value not in (None, ""))


def _value(entry: Any) -> Any:
    return entry.get("value") if isinstance(entry, Mapping) else entry


# Output columns per record key of the response, each read from the cleaned record.
_CLEANED_COLUMNS: dict[str, list[tuple[str, Any]]] = {
    "name": [(f"name_{part}", lambda name, part=part: name[part])
             for part in ("prefix", "given", "middle", "family", "suffix")],
    "birth_date": [("birth_date", _value)],
    "sex": [("sex", _value)],
    "phones": [("phones", lambda phones: _joined(phone["e164"] or phone.get("value")
                                                  for phone in phones))],
    "email": [("email", _value)],
    "ssn": [("ssn", _value)],
    "address": [(f"address_{part}", lambda address, part=part: address[part])
                for part in ("line1", "line2", "city", "state", "postal_code", "country",
                             "urbanization", "other_text")],
}


def cleaned_columns(mapping: Mapping[int, str]) -> list[tuple[str, str, Any]]:
    """(output column, response key, reader) for the field kinds the mapping feeds."""
    fed = {kind.output_key for kind in KINDS if set(kind.input_keys) & set(mapping.values())}
    return [(f"clean_{column}", key, read) for key, columns in _CLEANED_COLUMNS.items()
            if key in fed for column, read in columns]


# --- the summary ---------------------------------------------------------------------

@dataclass(frozen=True, slots=True)
class Digest:
    """What the summary needs of one result: small enough to pass between processes."""
    changes: tuple[str, ...]
    flags: tuple[str, ...]
    filled: tuple[str, ...]


def digest(result: Mapping[str, Any]) -> Digest:
    return Digest(tuple(change["reason"] for change in result["changes"]),
                  tuple(flag["code"] for flag in result["flags"]),
                  tuple(key for key, value in result["record"].items()
                        if value not in (None, []) and key != "extra"))


@dataclass
class Summary:
    rows: int = 0
    rows_changed: int = 0
    rows_flagged: int = 0
    errors: int = 0
    changes: Counter = field(default_factory=Counter)
    flags: Counter = field(default_factory=Counter)
    filled: Counter = field(default_factory=Counter)

    def add(self, result: Mapping[str, Any] | None) -> None:
        self.add_digest(None if result is None else digest(result))

    def add_digest(self, row: Digest | None) -> None:
        self.rows += 1
        if row is None:
            self.errors += 1
            return
        self.rows_changed += bool(row.changes)
        self.rows_flagged += bool(row.flags)
        self.changes.update(row.changes)
        self.flags.update(row.flags)
        self.filled.update(row.filled)

    def totals(self) -> tuple[int, int, int]:
        """Records, changes and flags."""
        return self.rows, sum(self.changes.values()), sum(self.flags.values())

    def as_json(self) -> dict[str, Any]:
        return {"rows": self.rows, "rows_changed": self.rows_changed,
                "rows_flagged": self.rows_flagged, "errors": self.errors,
                "changes": dict(self.changes.most_common()),
                "flags": dict(self.flags.most_common()),
                "fill_rate": {key: round(count / self.rows, 4)
                              for key, count in sorted(self.filled.items())} if self.rows else {}}


# --- bytes to text --------------------------------------------------------------------

def text_lines(binary: io.BufferedIOBase) -> Iterator[tuple[str, bool]]:
    """Each line of the bytes as text, terminator kept, and whether it had to
    be read as Windows-1252: UTF-16 by its byte order mark, else UTF-8 (a
    UTF-8 byte order mark dropped), line by line, so that the fallback marks
    only the lines that need it."""
    binary = binary if hasattr(binary, "peek") else io.BufferedReader(binary)
    head = binary.peek(3)[:3]
    if head[:2] in (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE):
        for line in io.TextIOWrapper(binary, encoding="utf-16", errors="replace", newline=""):
            yield line, False
        return
    if head == codecs.BOM_UTF8:
        binary.read(3)
    for raw in binary:
        try:
            line, fell_back = raw.decode("utf-8"), False
        except UnicodeDecodeError:
            line, fell_back = raw.decode("cp1252", errors="replace"), True
        for piece in _AFTER_LONE_CR.split(line) if "\r" in line else (line,):
            if piece:
                yield piece, fell_back


# --- CSV ------------------------------------------------------------------------------

def still_quoted(text: str, quoted: bool = False) -> bool:
    """Whether a quoted cell is still open at the end of `text`, read as the
    csv module reads: a quote opens a cell only where the cell begins, and
    inside a quoted cell a doubled quote is a quote."""
    if '"' not in text:
        return quoted
    at_cell_start, index = not quoted, 0
    while index < len(text):
        ch = text[index]
        if quoted:
            if ch == '"':
                if text[index + 1:index + 2] == '"':
                    index += 1
                else:
                    quoted = False
        elif ch == '"' and at_cell_start:
            quoted = True
        at_cell_start = not quoted and ch in ",\r\n"
        index += 1
    return quoted


def raw_records(lines: Iterable[tuple[str, bool]]) -> Iterator[tuple[str, bool]]:
    """Each CSV record as written, line terminator included, and whether any
    of its lines was read as Windows-1252: a line that ends inside a quoted
    cell goes on on the next line (RFC 4180 section 2.6)."""
    pending, fell_back, quoted = "", False, False
    for line, line_fell_back in lines:
        pending += line
        fell_back = fell_back or line_fell_back
        quoted = still_quoted(line, quoted)
        if not quoted:
            yield pending, fell_back
            pending, fell_back = "", False
    if pending:
        yield pending, fell_back


def _without_terminator(record: str) -> tuple[str, str]:
    body = record.rstrip("\r\n")
    return body, record[len(body):]


@dataclass
class CsvReader:
    """Reads a CSV text stream record by record, keeping each row's own text."""
    lines: Iterable[tuple[str, bool]]
    header_text: str = ""
    header: list[str] = field(default_factory=list)
    terminator: str = "\n"

    def __post_init__(self) -> None:
        self._records = raw_records(self.lines)
        first, _ = next(self._records, ("", False))
        self.header_text, terminator = _without_terminator(first)
        self.terminator = terminator or "\n"
        self.header = _cells(self.header_text)
        if self.header is None:
            raise InvalidInput([("", "the first row is not a CSV header (RFC 4180)")])

    def records(self) -> Iterator[tuple[str, str, bool]]:
        """(row text, its terminator, read through Windows-1252): the rows
        before their cells are read, which row_cells does where the row is
        cleaned (in a worker process, for cleaner clean --jobs)."""
        for record, fell_back in self._records:
            yield *_without_terminator(record), fell_back

    def rows(self) -> Iterator[tuple[str, str, list[str] | None, bool]]:
        """(row text, its terminator, its cells, read through Windows-1252)."""
        for text, terminator, fell_back in self.records():
            yield text, terminator, row_cells(text), fell_back


def row_cells(text: str) -> list[str] | None:
    """A row's cells: none for a blank row, None for one that is not CSV."""
    return _cells(text) if text.strip() else []


def _cells(text: str) -> list[str] | None:
    """The cells of one record, or None when it is not CSV: a quoted cell that
    is never closed, or one that does not close where a cell ends."""
    if still_quoted(text):
        return None
    try:
        return next(csv.reader([text]), [])
    except csv.Error:
        return None


def row_flags(cells: list[str] | None, width: int, text: str, windows_1252: bool) -> list[str]:
    codes = []
    if cells is None:
        codes.append("batch.row_unreadable")
    elif not text.strip():
        codes.append("batch.blank_row")
    elif len(cells) > width:
        codes.append("batch.row_too_long")
    elif len(cells) < width:
        codes.append("batch.row_too_short")
    if windows_1252:
        codes.append("batch.decoded_as_windows_1252")
    return codes


def clean_row(cells: list[str] | None, text: str, windows_1252: bool, width: int,
              mapping: Mapping[int, str], options: Options, rules: RuleBook) -> dict[str, Any]:
    """The /v1/clean body of one CSV row, with the row's own flags; a row
    that is not CSV cleans as an empty record and comes back as it was."""
    result = clean_record(record_of(cells or [], mapping), options, rules)
    codes = row_flags(cells, width, text, windows_1252)
    if codes:
        trail = Trail("row", text, rules.reasons)
        for code in codes:
            trail.flag(code)
        result["flags"] = trail.flags + result["flags"]
    return result


def csv_cells(result: Mapping[str, Any], columns: list[tuple[str, str, Any]],
              rules: RuleBook) -> list[str]:
    """The cleaned cells of a row, neutralised against spreadsheet formulas."""
    formula_starts = rules["batch"].formula_starts
    cells, changes = [], [change["reason"] for change in result["changes"]]
    for name, key, read in columns:
        entry = result["record"].get(key)
        value = "" if entry is None else read(entry)
        cell = "" if value is None else str(value)
        # A signed number (+12175550142) is no formula a spreadsheet could run.
        if cell.startswith(formula_starts) and not _SIGNED_NUMBER.match(cell):
            trail = Trail(name, cell, rules.reasons)
            cell = trail.apply("'" + cell, "batch.formula_neutralised")
            changes.append("batch.formula_neutralised")
        cells.append(cell)
    flags = [flag["code"] for flag in result["flags"]]
    return cells + [" ".join(dict.fromkeys(changes)), " ".join(dict.fromkeys(flags))]


def csv_line(cells: list[str]) -> str:
    out = io.StringIO()
    csv.writer(out, lineterminator="").writerow(cells)
    return out.getvalue()


@dataclass
class CsvJob:
    """One CSV through the cleaner: the header's mapping, and each row's text
    followed by its cleaned cells."""
    reader: CsvReader
    mapping: dict[int, str]
    columns: list[tuple[str, str, Any]]

    @classmethod
    def start(cls, lines: Iterable[str], explicit: Mapping[str, str], rules: RuleBook) -> CsvJob:
        reader = CsvReader(lines)
        mapping = map_columns(reader.header, explicit, rules["batch"])
        return cls(reader, mapping, cleaned_columns(mapping))

    def header_line(self) -> str:
        names = [name for name, _, _ in self.columns] + ["clean_changes", "clean_flags"]
        separator = "," if self.reader.header_text else ""
        return self.reader.header_text + separator + csv_line(names) + self.reader.terminator

    def row_line(self, text: str, terminator: str, cells: list[str] | None,
                 result: Mapping[str, Any],
                 rules: RuleBook) -> str:
        return row_line(text, terminator or self.reader.terminator, cells,
                        len(self.reader.header), result, self.columns, rules)


def row_line(text: str, terminator: str, cells: list[str] | None, width: int,
             result: Mapping[str, Any], columns: list[tuple[str, str, Any]],
             rules: RuleBook) -> str:
    """A row's own text, padded with empty cells to the header's width so the
    cleaned cells line up under their names (not a row that is not CSV, whose
    width is unknown), then its cleaned cells."""
    padding = "" if cells is None else "," * (width - max(len(cells), 1))
    return text + padding + "," + csv_line(csv_cells(result, columns, rules)) + terminator


def csv_reply(job: CsvJob, options: Options, rules: RuleBook,
              summary: Summary | None = None) -> Iterator[str]:
    """The reply CSV, line by line: the header, then every row in order. The
    job is started (its header read and mapped) before, so that a bad mapping
    is an error before any reply is sent."""
    yield job.header_line()
    width = len(job.reader.header)
    for text, terminator, cells, windows_1252 in job.reader.rows():
        result = clean_row(cells, text, windows_1252, width, job.mapping, options, rules)
        if summary is not None:
            summary.add(result)
        yield job.row_line(text, terminator, cells, result, rules)


# --- NDJSON and JSON -----------------------------------------------------------------

class NotJson:
    """What parse_line makes of a line that is not JSON (it pickles to worker processes)."""


NOT_JSON = NotJson()


# orjson reads a record several times faster than the json module, but reads
# an integer beyond 64 bits as a float: a document with a run of 19 digits, and
# any document orjson refuses (a lone surrogate escape, 1e400, deep nesting),
# goes to the json module, whose reading is the contract's.
_LONG_DIGIT_RUN = re.compile(rb"\d{19}")


def parse_line(line: str | bytes) -> Any:
    """A JSON document (NaN and Infinity are not JSON), or NOT_JSON."""
    encoded = line.encode("utf-8", "surrogatepass") if isinstance(line, str) else line
    if not _LONG_DIGIT_RUN.search(encoded):
        try:
            return orjson.loads(encoded)
        except orjson.JSONDecodeError:
            pass
    try:
        return json.loads(line, parse_constant=_not_json)
    except (ValueError, RecursionError):
        return NOT_JSON


def clean_one(index: int, record: Any, options: Options, rules: RuleBook) -> dict[str, Any]:
    """One record's result with its index, or its error: a bad record never stops a batch."""
    if isinstance(record, NotJson):
        return {"index": index, "error": {
            "title": "Line is not a JSON document", "status": 400,
            "errors": [{"pointer": "", "detail": "must be one JSON object on one line"}]}}
    try:
        return {"index": index, **clean_record(record, options, rules)}
    except InvalidInput as exc:
        return {"index": index, "error": {
            "title": "Record is not the contract's shape", "status": 422,
            "errors": [{"pointer": pointer, "detail": message}
                       for pointer, message in exc.problems]}}


def clean_ndjson(lines: Iterable[str], options: Options, rules: RuleBook,
                 summary: Summary | None = None) -> Iterator[str]:
    """One result line per input line, in order; a blank line is an error line."""
    for result in clean_records(map(parse_line, lines), options, rules, summary):
        yield json.dumps(result, ensure_ascii=False) + "\n"


def _not_json(name: str) -> Any:
    raise ValueError("NaN and Infinity are not JSON")


def clean_records(records: Iterable[Any], options: Options, rules: RuleBook,
                  summary: Summary | None = None) -> Iterator[dict[str, Any]]:
    for index, record in enumerate(records):
        result = clean_one(index, record, options, rules)
        if summary is not None:
            summary.add(None if "error" in result else result)
        yield result
