"""What the engine knows about a field kind; each field module defines one."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from cleaner.options import Options
from cleaner.rules import Compiler, RuleBook
from cleaner.trail import Trail


@dataclass
class Outcome:
    """A field's cleaned value, the trails that explain it, and its match keys."""
    value: Any
    trails: list[Trail]
    keys: dict[str, Any] = field(default_factory=dict)


Cleaner = Callable[[Any, Options, RuleBook], Outcome]


@dataclass(frozen=True)
class FieldKind:
    name: str                      # its rules file and reason-code prefix
    input_keys: tuple[str, ...]    # record keys it reads
    output_key: str                # key of its result under `record`
    clean: Cleaner                 # gets the value of its one key (or a dict of its keys)
    compile_rules: Compiler
    accepts_list: bool = False     # the key may hold a list of values
