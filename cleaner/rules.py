"""Loads the rule tables in `rules/` once, validates them, and versions them.

Each field kind owns one `rules/<kind>.toml` (plus any CSV it names). The file
lists the kind's reason codes under `[[reasons]]` and whatever vocabulary the
kind needs; the kind supplies a compiler that checks its tables and turns them
into the fast structures its code reads. A broken table stops start-up with a
message naming the file and the entry, never a half-loaded service.
"""

from __future__ import annotations

import csv
import hashlib
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from marshmallow import Schema, ValidationError, fields, validate, validates_schema

from cleaner.trail import Reason

SEVERITIES = ("info", "review", "invalid")
# The first part is the kind: letters, then letters or digits ("hl7v2").
CODE_PATTERN = r"^[a-z][a-z0-9]*(\.[a-z0-9_]+)+$"


class RulesError(Exception):
    """The rule tables are missing, malformed or inconsistent."""


@dataclass(frozen=True)
class LoadContext:
    """What a kind's compiler may use: its folder and every listed code."""
    directory: Path
    kind: str
    codes: frozenset[str]

    def read_csv(self, name: str) -> list[dict[str, str]]:
        path = self.directory / name
        try:
            with path.open(newline="", encoding="utf-8") as handle:
                return list(csv.DictReader(row for row in handle if not row.startswith("#")))
        except OSError as exc:
            raise RulesError(f"{self.kind}: cannot read {name}: {exc.strerror}") from None

    def validated(self, schema: Schema, data: Any, where: str = "") -> Any:
        try:
            return schema.load(data)
        except ValidationError as exc:
            raise RulesError(f"{self.kind}.toml{where}: {exc.messages}") from None

    def require_codes(self, codes: list[str], where: str) -> None:
        missing = sorted(set(codes) - self.codes - {""})
        if missing:
            raise RulesError(f"{self.kind}: {where} names unlisted codes {missing}")


Compiler = Callable[[dict[str, Any], LoadContext], Any]


def string_lists(*names: str) -> dict[str, fields.Field]:
    """Schema fields for required tables that are plain lists of strings."""
    return {name: fields.List(fields.String(), required=True) for name in names}


class ReasonSchema(Schema):
    code = fields.String(required=True, validate=validate.Regexp(CODE_PATTERN))
    kind = fields.String(required=True, validate=validate.OneOf(("change", "flag")))
    description = fields.String(required=True, validate=validate.Length(min=10))
    source = fields.String(required=True, validate=validate.Length(min=3))
    severity = fields.String(load_default=None, validate=validate.OneOf(SEVERITIES))

    @validates_schema
    def severity_only_on_flags(self, data, **_):
        if (data["kind"] == "flag") != (data["severity"] is not None):
            raise ValidationError("flags need a severity; changes have none", "severity")


class ManifestSchema(Schema):
    version = fields.String(required=True, validate=validate.Regexp(r"^\d+\.\d+\.\d+$"))
    description = fields.String()


@dataclass(frozen=True)
class RuleBook:
    version: str
    reasons: Mapping[str, Reason]
    tables: Mapping[str, Any]

    def __getitem__(self, kind: str) -> Any:
        return self.tables[kind]


def default_directory() -> Path:
    """The packaged copy in an installed wheel, else the checkout's `rules/`."""
    packaged = Path(__file__).parent / "rules"
    return packaged if packaged.is_dir() else Path(__file__).parent.parent / "rules"


def _read_toml(path: Path) -> dict[str, Any]:
    try:
        with path.open("rb") as handle:
            return tomllib.load(handle)
    except OSError as exc:
        raise RulesError(f"cannot read {path.name}: {exc.strerror}") from None
    except tomllib.TOMLDecodeError as exc:
        raise RulesError(f"{path.name} is not valid TOML: {exc}") from None


def _digest(directory: Path) -> str:
    sha = hashlib.sha256()
    for path in sorted(p for p in directory.rglob("*") if p.is_file()):
        sha.update(path.relative_to(directory).as_posix().encode())
        sha.update(path.read_bytes())
    return sha.hexdigest()[:10]


def load(directory: Path, compilers: Mapping[str, Compiler]) -> RuleBook:
    directory = Path(directory)
    if not directory.is_dir():
        raise RulesError(f"rules folder {directory} does not exist")
    manifest_context = LoadContext(directory, "manifest", frozenset())
    manifest = manifest_context.validated(ManifestSchema(), _read_toml(directory / "manifest.toml"))

    unclaimed = {p.stem for p in directory.glob("*.toml")} - set(compilers) - {"manifest"}
    if unclaimed:
        raise RulesError(f"no field kind reads {sorted(unclaimed)}: remove or rename them")

    raw_tables: dict[str, dict[str, Any]] = {}
    reasons: dict[str, Reason] = {}
    for kind in compilers:
        data = _read_toml(directory / f"{kind}.toml")
        context = LoadContext(directory, kind, frozenset())
        for index, entry in enumerate(data.pop("reasons", [])):
            reason = Reason(**context.validated(ReasonSchema(), entry, f" reasons[{index}]"))
            if not reason.code.startswith(kind + "."):
                raise RulesError(f"{kind}.toml: code {reason.code} must start with '{kind}.'")
            if reason.code in reasons:
                raise RulesError(f"{kind}.toml: code {reason.code} is listed twice")
            reasons[reason.code] = reason
        raw_tables[kind] = data

    codes = frozenset(reasons)
    tables = {kind: compilers[kind](raw_tables[kind], LoadContext(directory, kind, codes))
              for kind in compilers}
    return RuleBook(version=f"{manifest['version']}+{_digest(directory)}",
                    reasons=reasons, tables=tables)


@dataclass(frozen=True)
class DigitRanges:
    """Digit strings and inclusive ranges from a table, e.g. ["000", "900-999"]."""
    spans: tuple[tuple[int, int, int], ...]  # (width, low, high)

    @classmethod
    def parse(cls, items: list[str], where: str) -> DigitRanges:
        spans = []
        for item in items:
            low, _, high = item.partition("-")
            high = high or low
            if not (low.isdigit() and high.isdigit() and len(low) == len(high) and low <= high):
                raise RulesError(f"{where}: {item!r} is not a digit string or range of equal width")
            spans.append((len(low), int(low), int(high)))
        return cls(tuple(spans))

    def __contains__(self, digits: str) -> bool:
        number = int(digits)
        return any(width == len(digits) and low <= number <= high
                   for width, low, high in self.spans)
