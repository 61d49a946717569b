"""The cleaned address assembled from its parts' trails: line2 for the units,
the components, the flags and the match keys."""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from cleaner.addresses.delivery import UNIT_ROLES, DeliveryLine, Token, components
from cleaner.addresses.vocabulary import AddressVocabulary
from cleaner.fieldkind import Outcome
from cleaner.trail import Trail

_NOT_IN_KEY = re.compile(r"[^\w/]|_")

@dataclass(slots=True)
class Assembly:
    """The parts' trails and what was read of them, from either input form."""
    trails: dict[str, Trail] = field(default_factory=dict)
    line: DeliveryLine | None = None
    line2_units: list[Token] = field(default_factory=list)   # a unit sent in line2
    emptied: dict[str, Trail] = field(default_factory=dict)  # parts sent blank
    as_sent: dict[str, Trail] = field(default_factory=dict)  # placeholders and unreadable parts
    state: str | None = None
    zip_code: str | None = None
    kind: str | None = None
    flags: list[str] = field(default_factory=list)
    alternatives: list[dict[str, str]] = field(default_factory=list)


def empty_address() -> dict[str, Any]:
    return {"line1": None, "line2": None, "city": None, "state": None, "postal_code": None,
            "country": None, "other_text": None, "urbanization": None, "kind": None, "components": {}, "alternatives": [],
            "placeholder": False, "valid": True}


def move_units(assembly: Assembly) -> None:
    """The secondary unit goes to line2 unless a line2 was sent."""
    if "line2" in assembly.trails:
        return
    units: list[str] = []
    others: list[str] = []
    for token in assembly.line.tokens:
        (units if token.role in UNIT_ROLES else others).append(token.standard)
    if not units or not others:
        return   # a line of units alone (STE 1400) stays line1
    line1 = assembly.trails["line1"]
    moved = assembly.emptied.pop("line2", None) or line1.fork("address.line2")
    moved.apply(" ".join(filter(None, units)), "addresses.unit_moved")
    line1.apply(" ".join(filter(None, others)), "addresses.unit_moved")
    assembly.trails["line2"] = moved


def _street_key(line: DeliveryLine, found: Mapping[str, str]) -> str | None:
    """Number and street name (12ELM, 1231/2MAIN), or the box line (POBOX12,
    RR2BOX152); none for general delivery, which many people share."""
    if line.kind == "general_delivery":
        return None
    if line.kind == "street":
        words = [found.get("number", ""), found.get("street", "")]
    else:
        words = [token.standard for token in line.tokens if token.role not in UNIT_ROLES]
    return _NOT_IN_KEY.sub("", "".join(words)) or None


def assemble(assembly: Assembly, whole: Trail, country: str | None,
             vocabulary: AddressVocabulary) -> Outcome:
    address = empty_address()
    for part, trail in [*assembly.trails.items(), *assembly.as_sent.items()]:
        address[part] = trail.value
    address["country"] = address["country"] or country
    line = assembly.line
    placeholder = "addresses.placeholder" in assembly.flags
    if line is not None:
        address["kind"] = line.kind
        address["components"] = components(line.tokens + assembly.line2_units, vocabulary)
        if not line.has_number:
            assembly.flags.append("addresses.no_house_number")
        placeholder = placeholder or address["line1"] in vocabulary.placeholder_street_lines
    address["kind"] = assembly.kind or address["kind"]
    if placeholder and "addresses.placeholder" not in assembly.flags:
        assembly.flags.append("addresses.placeholder")
    for code in assembly.flags:
        whole.flag(code)
    address.update(placeholder=placeholder, valid=address["kind"] != "unparsed",
                   alternatives=assembly.alternatives)
    keys: dict[str, Any] = {}
    if not placeholder and address["kind"] not in ("unparsed", "non_us"):
        if assembly.zip_code:
            keys["zip5"] = assembly.zip_code[:5]
        street_key = _street_key(line, address["components"]) if line else None
        if street_key:
            keys["street_key"] = street_key
    return Outcome(address, [*assembly.emptied.values(), *assembly.trails.values(),
                             *assembly.as_sent.values(), whole], keys)

