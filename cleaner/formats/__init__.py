"""What the integration formats (HL7 FHIR, HL7 v2) share: each piece of a
message (a name, an address, a phone) is cleaned by the engine as a record of
its own, and its changes and flags are moved to the format's own place of the
element ("Patient.name[1].family", "PID[1]-5[2].1.1"), so one list explains the
whole message."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from cleaner.engine import KINDS, clean_record
from cleaner.options import InvalidInput, Options
from cleaner.rules import RuleBook
from cleaner.trail import Trail

# Maps an engine field ("name.family", "phones[0]", "birth_date") to the
# format's place of the element it came from.
Placer = Callable[[str], str]

_KIND_OF_KEY = {key: kind for kind in KINDS for key in kind.input_keys}


def _field_of(pointer: str) -> str:
    """The engine field a record key's pointer names ("/record/given" is
    "name.given", "/record/phone/0" is "phones[0]"), so that a refused value
    is reported at the format's own place."""
    key, _, index = pointer.removeprefix("/record/").partition("/")
    kind = _KIND_OF_KEY.get(key)
    if kind is None:
        return key
    if kind.accepts_list:
        return f"{kind.output_key}[{index or 0}]"
    return kind.output_key if key == kind.output_key or len(kind.input_keys) == 1 \
        else f"{kind.output_key}.{key}"


class Findings:
    """The changes, flags and match keys of every piece of one message."""

    def __init__(self, options: Options, rules: RuleBook):
        self.options = options
        self.rules = rules
        self.changes: list[dict[str, Any]] = []
        self.flags: list[dict[str, Any]] = []
        self.keys: list[dict[str, Any]] = []

    def clean(self, record: Mapping[str, Any], place: Placer) -> dict[str, Any]:
        """The engine's cleaned record (the `record` member of its result);
        its trail is kept here with every field moved by `place`.

        Raises InvalidInput as the engine does, each problem at the place of its field."""
        try:
            result = clean_record(record, self.options, self.rules)
        except InvalidInput as exc:
            raise InvalidInput([(place(_field_of(pointer)), message)
                                for pointer, message in exc.problems]) from None
        self.changes += ({**change, "field": place(change["field"])}
                         for change in result["changes"])
        self.flags += ({**flag, "field": place(flag["field"])} for flag in result["flags"])
        if result["keys"]:
            self.keys.append(result["keys"])
        return result["record"]

    def write(self, place: str, sent: Any, cleaned: Any, written: Any, reason: str) -> Any:
        """The format's own form of a cleaned value (AdministrativeGender
        'female' written as v2 table 0001 'F'), recorded as one more change so
        the trail still ends at what is returned. Where that is what was sent,
        the element is unchanged and its changes are dropped: 'F' read as
        'female' and written back as 'F' changed nothing."""
        if written == sent:
            return self.settle(place, sent, written)
        trail = Trail(place, cleaned, self.rules.reasons)
        written = trail.apply(written, reason)
        self.changes += trail.changes
        return written

    def keep_as_sent(self, place: str, code: str | None = None) -> None:
        """The element at `place`, and every element inside it, goes back
        exactly as sent: the changes cleaning made there are dropped, and
        `code`, when given, is flagged to say why. Flags on the value stay:
        they are still true of what was sent."""
        inside = (place + ".", place + "[")
        self.changes = [change for change in self.changes
                        if change["field"] != place and not change["field"].startswith(inside)]
        if code:
            self.flag_at(place, code)

    def settle(self, place: str, sent: Any, written: Any) -> Any:
        """What is written at `place`; where that is what was sent, the
        element is unchanged and its changes are dropped."""
        if written == sent:
            self.changes = [change for change in self.changes if change["field"] != place]
        return written

    def changed(self, place: str) -> bool:
        return any(change["field"] == place for change in self.changes)

    def flag_at(self, place: str, code: str) -> None:
        """A flag of the format itself (an element it leaves as sent)."""
        trail = Trail(place, None, self.rules.reasons)
        trail.flag(code)
        self.flags += trail.flags

    def as_json(self) -> dict[str, Any]:
        return {"changes": self.changes, "flags": self.flags, "keys": self.keys,
                "rules_version": self.rules.version}
