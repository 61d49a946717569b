"""The text step every field runs first: JSON numbers read as text, control
and invisible characters removed, Unicode composed (NFC), white space folded."""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass
from typing import Any

from marshmallow import Schema, fields, validate
from unidecode import unidecode

from cleaner.rules import LoadContext
from cleaner.trail import Trail

_WHITESPACE = re.compile(r"\s+")
# Cc (controls) and Cf (format: zero-width space, BOM, direction marks) never
# carry meaning in a demographic value; tab, CR and LF are folded as spaces.
_INVISIBLE = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\u00ad\u200b-\u200f\u2028-\u202f"
                        r"\u2060-\u206f\ufeff\ufff9-\ufffb]")


@dataclass(frozen=True)
class TextRules:
    digit_lookalikes: dict[str, str]

    def lookalike_digits(self, text: str) -> bool:
        """True when `text` is all digits but for letters that look like digits."""
        return any(ch in self.digit_lookalikes for ch in text) and all(
            ch.isdigit() or ch in self.digit_lookalikes for ch in text)


class _TextRulesSchema(Schema):
    digit_lookalikes = fields.Dict(
        keys=fields.String(validate=validate.Length(equal=1)),
        values=fields.String(validate=validate.Regexp(r"^[0-9]$")), required=True)


def compile_rules(data: dict[str, Any], context: LoadContext) -> TextRules:
    return TextRules(**context.validated(_TextRulesSchema(), data))


def fold(word: str) -> str:
    """A word as vocabulary tables list it: accents folded to ASCII, case folded."""
    return unidecode(word).casefold().strip()


def as_text(trail: Trail) -> str:
    """The field's value as text; a JSON number becomes its decimal digits."""
    value = trail.value
    if isinstance(value, str):
        return value
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    return trail.apply(str(value), "text.number_as_text")


def tidy(trail: Trail) -> str | None:
    """Run the text step on the trail's value; None when nothing is left."""
    text = as_text(trail)
    if text.isascii() and text.isprintable() and "  " not in text and text == text.strip():
        return text or trail.apply(None, "text.blank_cleared")
    text = trail.apply(_INVISIBLE.sub("", text), "text.invisible_removed")
    if not text.isascii():
        text = trail.apply(unicodedata.normalize("NFC", text), "text.unicode_composed")
    text = trail.apply(_WHITESPACE.sub(" ", text).strip(), "text.whitespace_folded")
    return text or trail.apply(None, "text.blank_cleared")


def repair_digit_lookalikes(trail: Trail, text: str, rules: TextRules) -> str:
    """Replace letters typed for digits (O for 0, l or I for 1); a person should check."""
    repaired = trail.apply("".join(rules.digit_lookalikes.get(ch, ch) for ch in text),
                           "text.digit_lookalikes_repaired")
    trail.flag("text.digit_lookalikes")
    return repaired
