"""What the scorers of hand-labelled real text share (tests/labelled.py for
addresses, tests/labelled_names.py for names): a tally of the parts right and
wrong, and of the wrong ones that carried no `review` or `invalid` flag, and
the table that sets the engine beside the bare library."""

from __future__ import annotations

from collections.abc import Callable, Container, Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any, Protocol

_FLAGGED = frozenset(("review", "invalid"))


class Item(Protocol):
    text: str


def flagged(body: Mapping[str, Any], kind: str) -> bool:
    """Whether a response carries a review or invalid flag of the kind (addresses, names)."""
    return any(flag["code"].startswith(f"{kind}.") and flag.get("severity") in _FLAGGED
               for flag in body["flags"])


@dataclass
class Score:
    parts: tuple[str, ...]
    right: dict[str, int] = field(init=False)
    scored: dict[str, int] = field(init=False)
    silent: dict[str, int] = field(init=False)
    misses: list[tuple[str, str, str, str, bool]] = field(default_factory=list)  # text, part, want, got, flagged

    def __post_init__(self) -> None:
        self.right, self.scored, self.silent = (dict.fromkeys(self.parts, 0) for _ in range(3))

    def add(self, text: str, want: Mapping[str, str], got: Mapping[str, str], flagged: bool,
            reviewed: Container[tuple[str, str]] = ()) -> None:
        """A part is scored where the labels or the reading hold it, unless its
        label was reviewed and judged wrong."""
        for part in self.parts:
            if (not want[part] and not got[part]) or (text, part) in reviewed:
                continue
            self.scored[part] += 1
            if want[part] == got[part]:
                self.right[part] += 1
            else:
                self.silent[part] += not flagged
                self.misses.append((text, part, want[part], got[part], flagged))

    def _share(self, counts: Mapping[str, int], part: str | None) -> float:
        parts = self.parts if part is None else (part,)
        return sum(counts[p] for p in parts) / max(1, sum(self.scored[p] for p in parts))

    def share(self, part: str | None = None) -> float:
        return self._share(self.right, part)

    def silent_share(self, part: str | None = None) -> float:
        return self._share(self.silent, part)

    def figures(self, bare: Score, bare_name: str) -> dict[str, dict[str, float]]:
        """Each part's shares and the whole's, as make bench writes them."""
        return {part or "all": {"cleaner": self.share(part), bare_name: bare.share(part),
                                "cleaner_silent": self.silent_share(part)}
                for part in (*self.parts, None)}


def score(items: Iterable[Item], parts: tuple[str, ...], want: Callable[[Item], Mapping[str, str]],
          read: Callable[[str], tuple[Mapping[str, str], bool]],
          reviewed: Container[tuple[str, str]] = ()) -> Score:
    """`want` gives an item's labelled parts, `read` a text's parts as read and
    whether it was flagged; a (text, part) in `reviewed` is a label judged wrong."""
    result = Score(parts)
    for item in items:
        got, was_flagged = read(item.text)
        result.add(item.text, want(item), got, was_flagged, reviewed)
    return result


def table(ours: Score, bare: Score, part_heading: str, bare_heading: str) -> str:
    width = max(len(part_heading) + 3, *(len(part) + 2 for part in ours.parts))
    bare_width = len(bare_heading) + 1
    lines = [f"{part_heading:{width}} {'cleaner':>8} {bare_heading:>{bare_width}} "
             f"{'cleaner silent':>15}"]
    for part in (*ours.parts, None):
        lines.append(f"{part or 'all':{width}} {ours.share(part):8.1%} "
                     f"{bare.share(part):{bare_width}.1%} {ours.silent_share(part):15.1%}")
    return "\n".join(lines)
