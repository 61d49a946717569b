"""The one mechanism by which every field records what it changed and why.

A `Trail` follows one output field from its raw input to its final value.
Each `apply` that alters the value appends a change whose `from` is the value
before and whose `to` is the value after, so the list can be replayed: the
first `from` is what the caller sent and the last `to` is what we return.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any


class UnknownReason(LookupError):
    """A code was emitted that the rules do not list: a programming error."""


@dataclass(frozen=True, slots=True)
class Reason:
    code: str
    kind: str  # "change" or "flag"
    description: str
    source: str
    severity: str | None = None  # flags only: info, review or invalid

    def as_json(self) -> dict[str, Any]:
        body = {"code": self.code, "kind": self.kind, "description": self.description,
                "source": self.source}
        if self.severity:
            body["severity"] = self.severity
        return body


class Trail:
    __slots__ = ("field", "value", "changes", "flags", "_reasons")

    def __init__(self, field: str, raw: Any, reasons: Mapping[str, Reason]):
        self.field = field
        self.value = raw
        self.changes: list[dict[str, Any]] = []
        self.flags: list[dict[str, Any]] = []
        self._reasons = reasons

    def _reason(self, code: str, kind: str) -> Reason:
        reason = self._reasons.get(code)
        if reason is None or reason.kind != kind:
            raise UnknownReason(f"{kind} code {code!r} is not listed in the rules")
        return reason

    def apply(self, new_value: Any, reason: str) -> Any:
        """Move the field to `new_value`, recording `reason` if it differs.
        The code is checked when it is recorded; tests/test_reasons.py checks
        statically that every code the package names is listed."""
        if new_value != self.value:
            # Looked up here rather than through _reason: apply runs for every
            # stage of every field, and the call is a fair share of its cost.
            known = self._reasons.get(reason)
            if known is None or known.kind != "change":
                self._reason(reason, "change")   # raises UnknownReason
            self.changes.append({"field": self.field, "from": self.value, "to": new_value,
                                 "reason": reason})
            self.value = new_value
        return new_value

    def flag(self, code: str) -> None:
        """Note something a person may need to look at. The message is the
        code's fixed description, so a flag never quotes the value."""
        reason = self._reason(code, "flag")
        self.flags.append({"field": self.field, "code": code, "severity": reason.severity,
                           "message": reason.description})

    def revert(self, since: str | None = None) -> Any:
        """Give the value back exactly as sent: for a value that cannot be
        cleaned. With `since`, as it stood right after the last change of that
        reason: a part split from a larger value goes back to its own text."""
        kept = next((index + 1 for index in range(len(self.changes) - 1, -1, -1)
                     if self.changes[index]["reason"] == since), 0) if since else 0
        if len(self.changes) > kept:
            self.value = self.changes[kept]["from"]
            del self.changes[kept:]
        return self.value

    def fork(self, field: str) -> Trail:
        """A trail for one of several outputs made from this one input (a list
        item, or one of several numbers in one cell): it keeps the history so
        far, relabelled, so its own chain still starts at the raw input."""
        child = Trail(field, self.value, self._reasons)
        # Most values reach a fork with no flags and few changes: a list is
        # copied only when it holds something.
        if self.changes:
            child.changes = [{**change, "field": field} for change in self.changes]
        if self.flags:
            child.flags = [{**flag, "field": field} for flag in self.flags]
        return child

    def split_off(self, field: str, part: str, reason: str) -> Trail:
        """The trail of one part of this value (a name part, an address line,
        one of several numbers): a fork whose first own change is the split."""
        child = self.fork(field)
        child.apply(part, reason)
        return child
