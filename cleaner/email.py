"""Email addresses: trimmed, domain lower-cased (the local part is the
owner's and kept as typed), syntax checked as an RFC 5322 addr-spec."""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

from marshmallow import Schema

from cleaner import text
from cleaner.fieldkind import FieldKind, Outcome
from cleaner.options import Options
from cleaner.rules import LoadContext, RuleBook, string_lists
from cleaner.trail import Trail

# RFC 5322 section 3.2.3 atext, widened to UTF-8 by RFC 6532 section 3.2.
_ATEXT = r"[A-Za-z0-9!#$%&'*+/=?^_`{|}~\-\u0080-\U0010ffff]"
_DOT_ATOM = rf"{_ATEXT}+(?:\.{_ATEXT}+)*"
# RFC 5322 section 3.2.4 quoted-string without folding white space.
_QUOTED = r'"(?:[\x20\x21\x23-\x5b\x5d-\x7e\u0080-\U0010ffff]|\\[\x20-\x7e])*"'
_LOCAL = re.compile(rf"(?:{_DOT_ATOM}|{_QUOTED})")
# A host name (RFC 1035 section 2.3.1 labels, RFC 5890 U-labels) with at least
# two labels, or an address literal (RFC 5321 section 4.1.3).
_LABEL = r"[A-Za-z0-9\u0080-\U0010ffff](?:[A-Za-z0-9\-\u0080-\U0010ffff]{0,61}[A-Za-z0-9\u0080-\U0010ffff])?"
_DOMAIN = re.compile(rf"{_LABEL}(?:\.{_LABEL})+|\[(?:IPv6:[0-9A-Fa-f:.]+|\d{{1,3}}(?:\.\d{{1,3}}){{3}})\]")
_SPACED_AT = re.compile(r"\s*@\s*")
MAX_LOCAL, MAX_ADDRESS = 64, 254  # RFC 5321 section 4.5.3.1.1; RFC 3696 errata 1690


@dataclass(frozen=True)
class EmailRules:
    strip_prefixes: tuple[str, ...]
    no_email_texts: frozenset[str]
    placeholder_local_parts: frozenset[str]
    placeholder_domains: frozenset[str]
    reserved_domains: frozenset[str]
    reserved_suffixes: tuple[str, ...]


_EmailRulesSchema = Schema.from_dict(string_lists(
    "strip_prefixes", "no_email_texts", "placeholder_local_parts", "placeholder_domains",
    "reserved_domains", "reserved_suffixes"))


def compile_rules(data: dict[str, Any], context: LoadContext) -> EmailRules:
    loaded = context.validated(_EmailRulesSchema(), data)
    folded = {key: [item.casefold() for item in items] for key, items in loaded.items()}
    return EmailRules(
        strip_prefixes=tuple(folded["strip_prefixes"]),
        no_email_texts=frozenset(folded["no_email_texts"]),
        placeholder_local_parts=frozenset(folded["placeholder_local_parts"]),
        placeholder_domains=frozenset(folded["placeholder_domains"]),
        reserved_domains=frozenset(folded["reserved_domains"]),
        reserved_suffixes=tuple(folded["reserved_suffixes"])
        + tuple("." + domain for domain in folded["reserved_domains"]))


def is_addr_spec(address: str) -> bool:
    """A simplified but honest RFC 5322 addr-spec check: no comments or
    folding white space, which have no place in a stored address."""
    local, at, domain = address.rpartition("@")
    return bool(at) and len(local) <= MAX_LOCAL and len(address) <= MAX_ADDRESS \
        and _LOCAL.fullmatch(local) is not None and _DOMAIN.fullmatch(domain) is not None


def _unwrap(trail: Trail, value: str, rules: EmailRules) -> str:
    folded = value.casefold()
    for prefix in rules.strip_prefixes:
        if folded.startswith(prefix):
            value = value[len(prefix):].strip()
            break
    if value.startswith("<") and value.endswith(">"):
        value = value[1:-1].strip()
    return trail.apply(value, "email.prefix_removed")


def clean_email(raw: Any, options: Options, rules: RuleBook) -> Outcome:
    trail = Trail("email", raw, rules.reasons)
    email_rules: EmailRules = rules["email"]
    value = text.tidy(trail)
    if value is None:
        return Outcome(None, [trail])
    if value.casefold() in email_rules.no_email_texts:
        trail.flag("email.placeholder")
        return Outcome({"value": trail.revert(), "valid": False}, [trail])
    value = _unwrap(trail, value, email_rules)
    if value.count("@") == 1:
        value = trail.apply(_SPACED_AT.sub("@", value), "email.spaces_removed")
    local, _, domain = value.rpartition("@")
    if not is_addr_spec(value):
        trail.flag("email.invalid_syntax")
        return Outcome({"value": trail.revert(), "valid": False}, [trail])
    domain = domain.lower()
    value = trail.apply(f"{local}@{domain}", "email.domain_lowercased")

    placeholder = (local.casefold() in email_rules.placeholder_local_parts
                   or domain in email_rules.placeholder_domains)
    if placeholder:
        trail.flag("email.placeholder")
    if domain in email_rules.reserved_domains or domain.endswith(email_rules.reserved_suffixes):
        trail.flag("email.reserved_domain")
    keys = {} if placeholder else {"email": value.casefold()}
    return Outcome({"value": value, "valid": True}, [trail], keys)


KIND = FieldKind(name="email", input_keys=("email",), output_key="email", clean=clean_email,
                 compile_rules=compile_rules)
