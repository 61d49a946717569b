"""A bounded memo of cleaned field values.

Intake feeds repeat values: the same town and ZIP code on many rows, the same
phone on every visit, a handful of ways to write the sex. A value cleaned once
under the same rules and options need not be cleaned again. The memo keeps an
outcome packed by `marshal` (compact, and unpacking it is a fresh copy, so a
caller that edits its result cannot alter what the next caller gets).
"""

from __future__ import annotations

import marshal
import threading
from collections.abc import Hashable, Mapping
from typing import Any

from cleaner.fieldkind import Outcome
from cleaner.trail import Reason, Trail

# About 1.5 KB per entry packed: at most some 15 MB per process.
DEFAULT_SIZE = 8192


class FieldMemo:
    """Recently used outcomes keyed on (field kind, raw value, options).

    Most values in a feed come once: packing each of them would cost more
    than the few that come back would save. So a value is remembered the
    second time it is met; until then only its key's hash is kept.
    """

    def __init__(self, size: int = DEFAULT_SIZE):
        self.size = size
        self._entries: dict[Hashable, bytes] = {}
        self._met_once: dict[int, None] = {}
        self._lock = threading.Lock()   # a threaded server shares one rule book

    def __reduce__(self):
        # A memo travels to worker processes empty: it is a cache, not state.
        return FieldMemo, (self.size,)

    def __len__(self) -> int:
        return len(self._entries)

    def recall(self, key: Hashable, reasons: Mapping[str, Reason]) -> Outcome | None:
        with self._lock:
            packed = self._entries.pop(key, None)
            if packed is None:
                return None
            self._entries[key] = packed   # re-inserted: now the most recently used
        value, trails, keys = marshal.loads(packed)
        return Outcome(value, [Trail.restored(field, current, changes, flags, reasons)
                               for field, current, changes, flags in trails], keys)

    def remember(self, key: Hashable, outcome: Outcome) -> None:
        if self.size <= 0:
            return
        digest = hash(key)
        with self._lock:
            if digest not in self._met_once:
                _put_bounded(self._met_once, digest, None, 4 * self.size)
                return
            del self._met_once[digest]
        try:
            packed = marshal.dumps((outcome.value, [
                (trail.field, trail.value, trail.changes, trail.flags)
                for trail in outcome.trails], outcome.keys))
        except ValueError:   # a value marshal cannot hold is simply not remembered
            return
        with self._lock:
            _put_bounded(self._entries, key, packed, self.size)


def _put_bounded(entries: dict, key: Hashable, value: Any, size: int) -> None:
    entries[key] = value
    if len(entries) > size:
        del entries[next(iter(entries))]   # the least recently used


class _NotRemembered(Exception):
    pass


def memo_key(kind: str, raw: Any, options: Hashable) -> Hashable | None:
    """A key that tells apart every raw value a field can be sent (1, 1.0 and
    "1" differ), or None for one that is not remembered."""
    try:
        return kind, _frozen(raw), options
    except _NotRemembered:
        return None


def _frozen(raw: Any) -> Hashable:
    if raw is None or type(raw) is str:
        return raw
    if type(raw) in (int, float):
        return type(raw).__name__, raw
    if type(raw) in (list, dict):
        pairs = raw.items() if type(raw) is dict else enumerate(raw)
        return type(raw).__name__, tuple((key, _frozen(value)) for key, value in pairs)
    raise _NotRemembered
