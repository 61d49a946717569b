"""Per-request options, and the error raised when a request is not the contract's shape."""

from __future__ import annotations

import datetime as dt
import functools
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import phonenumbers
from marshmallow import RAISE, Schema, ValidationError, fields, pre_load, validate

DATE_ORDERS = ("MDY", "DMY", "YMD")
NAME_ORDERS = ("given_first", "family_first")


class InvalidInput(ValueError):
    """The request is not the contract's shape.

    `problems` holds (JSON pointer, message) pairs. Messages describe what was
    expected, never the value that was sent.
    """

    def __init__(self, problems: list[tuple[str, str]]):
        super().__init__("; ".join(f"{pointer}: {message}" for pointer, message in problems))
        self.problems = problems


@dataclass(frozen=True, slots=True)
class Options:
    country: str = "US"
    date_order: str = "MDY"
    reference_date: dt.date = field(default_factory=dt.date.today)
    name_order: str = "given_first"


COUNTRY_ERROR = "must be an ISO 3166-1 alpha-2 code such as US or MX"


class _KnownRegion(validate.Validator):
    """A region phonenumbers has metadata for: every ISO 3166-1 country that has telephones."""

    def __call__(self, value: str) -> str:
        if value not in phonenumbers.SUPPORTED_REGIONS:
            raise ValidationError(COUNTRY_ERROR)
        return value


class OptionsSchema(Schema):
    class Meta:
        unknown = RAISE

    country = fields.String(validate=_KnownRegion())
    date_order = fields.String(validate=validate.OneOf(
        DATE_ORDERS, error="must be one of MDY, DMY or YMD"))
    reference_date = fields.Date(format="iso", error_messages={
        "invalid": "must be an ISO 8601 date such as 2026-12-02"})
    name_order = fields.String(validate=validate.OneOf(
        NAME_ORDERS, error="must be given_first or family_first"))

    @pre_load
    def normalise_case(self, data, **_):
        if isinstance(data, Mapping):
            data = dict(data)
            for key in ("country", "date_order"):
                if isinstance(data.get(key), str):
                    data[key] = data[key].strip().upper()
            if isinstance(data.get("name_order"), str):
                data["name_order"] = data["name_order"].strip().lower()
        return data


# Building a marshmallow schema costs more than loading with it; one serves all requests.
_OPTIONS_SCHEMA = OptionsSchema()
OPTION_NAMES = tuple(_OPTIONS_SCHEMA.fields)


def pointer_messages(messages: Any, prefix: str) -> list[tuple[str, str]]:
    """Flatten marshmallow's nested error dict into JSON pointers."""
    if isinstance(messages, Mapping):
        found: list[tuple[str, str]] = []
        for key, inner in messages.items():
            escaped = str(key).replace("~", "~0").replace("/", "~1")
            found += pointer_messages(inner, f"{prefix}/{escaped}")
        return found
    if isinstance(messages, list):
        return [(prefix, str(message)) for message in messages]
    return [(prefix, str(messages))]


_UNKNOWN_FIELD = "Unknown field."
# Member names come from the caller and are not echoed back (they could be anything).
UNKNOWN_OPTION = f"holds a member that is not an option ({', '.join(OPTION_NAMES)})"


def read_options(given: Any, defaults: Options | None = None) -> Options:
    """Options from a request's `options` member, over the service's defaults."""
    base = defaults or Options()
    if given is None:
        return base
    if isinstance(given, Options):
        return given
    if not isinstance(given, Mapping):
        raise InvalidInput([("/options", "must be an object")])
    if not given:
        return base
    members = tuple(given.items())
    try:
        hash(members)
    except TypeError:   # a list or an object where a string belongs: read, and refused
        return _over_base(members, base)
    return _remembered_over_base(members, base)


def _over_base(given: tuple[tuple[Any, Any], ...], base: Options) -> Options:
    try:
        loaded = _OPTIONS_SCHEMA.load(dict(given))
    except ValidationError as exc:
        problems = [(pointer, message) for pointer, message in
                    pointer_messages(exc.messages, "/options") if message != _UNKNOWN_FIELD]
        if any(_UNKNOWN_FIELD in messages for messages in exc.messages.values()):
            problems.append(("/options", UNKNOWN_OPTION))
        raise InvalidInput(problems) from None
    return replace(base, **loaded)


# Callers send the same few options again and again; reading them through the
# schema costs tens of microseconds, finding them again well under one.
_remembered_over_base = functools.lru_cache(maxsize=256)(_over_base)
