"""Email addresses."""

from __future__ import annotations

import pytest

from cleaner.email import is_addr_spec
from conftest import field_codes


def test_trimmed_and_domain_lowercased_local_part_kept(clean):
    body = clean({"email": " R.Quill@Mail.Example.ORG "})
    assert body["record"]["email"] == {"value": "R.Quill@mail.example.org", "valid": True}
    assert body["keys"] == {"email": "r.quill@mail.example.org"}


# Source: RFC 5322 Appendix A (A.1.1, A.1.2, A.1.3, A.2, A.4) addr-specs, and
# RFC 3696 section 3 examples of unusual but valid local parts.
@pytest.mark.parametrize("address", [
    "jdoe@machine.example", "mary@example.net", "john.q.public@example.com",
    "boss@nil.test", "sysservices@example.net", "pete@silly.example",
    "c@public.example", "joe@where.test", "jdoe@one.test",
    "customer/department=shipping@example.com", "$A12345@example.com",
    "!def!xyz%abc@example.com", "_somename@example.com", '"Abc@def"@example.com',
    '"Fred Bloggs"@example.com', '"Joe\\\\Blow"@example.com',
])
def test_published_addr_specs_are_accepted(address):
    assert is_addr_spec(address)


# Derived from the RFC 5322 section 3.4.1 grammar (dot-atom has no empty
# atoms; one unquoted @) and RFC 5321 section 4.5.3.1.1 (local part <= 64 octets).
@pytest.mark.parametrize("address", [
    "Abc.example.com", "A@b@c@example.com", "john..doe@example.com", ".john@example.com",
    "john.@example.com", 'just"not"right@example.com', "a b@example.com",
    "user@", "@example.org", "user@-example.org", "user@example", "x" * 65 + "@example.org",
])
def test_malformed_addresses_are_refused(address):
    assert not is_addr_spec(address)


def test_invalid_syntax_is_returned_as_sent(clean):
    body = clean({"email": " Ruth..Q@Example.org"})
    assert body["record"]["email"] == {"value": " Ruth..Q@Example.org", "valid": False}
    assert body["changes"] == [] and field_codes(body, "email")[1] == ["email.invalid_syntax"]


@pytest.mark.parametrize("value", ["mailto:ruth.q@Example.org", "<ruth.q@Example.org>",
                                   "MAILTO: <ruth.q@example.org>", "ruth.q @ example.org"])
def test_wrappers_and_stray_spaces_are_removed(clean, value):
    assert clean({"email": value})["record"]["email"]["value"] == "ruth.q@example.org"


@pytest.mark.parametrize("value", ["none", "NO EMAIL", "N/A", "declined", "ninguno"])
def test_no_email_texts_are_flagged_and_kept(clean, value):
    body = clean({"email": value})
    assert body["record"]["email"] == {"value": value, "valid": False}
    assert field_codes(body, "email")[1] == ["email.placeholder"] and body["keys"] == {}


@pytest.mark.parametrize("value", ["none@none.com", "noemail@gmail.com", "na@na.com",
                                   "test@test.com", "Declined@hospital-mail.org"])
def test_placeholder_addresses_are_flagged(clean, value):
    """Common practice (no source): addresses typed to fill a required field."""
    body = clean({"email": value})
    assert body["record"]["email"]["valid"] is True
    assert "email.placeholder" in field_codes(body, "email")[1] and body["keys"] == {}


# Source: RFC 2606 (example.com/net/org, .test, .example, .invalid, .localhost).
@pytest.mark.parametrize("value", ["a@example.com", "a@mail.example.net", "a@clinic.test",
                                   "a@host.invalid"])
def test_documentation_domains_are_noted(clean, value):
    assert field_codes(clean({"email": value}), "email")[1] == ["email.reserved_domain"]


def test_internationalised_address_is_kept(clean):
    """RFC 6531/6532: UTF-8 in local part and domain."""
    body = clean({"email": "josé@Correo.Ejemplo.MX"})
    assert body["record"]["email"] == {"value": "josé@correo.ejemplo.mx", "valid": True}
