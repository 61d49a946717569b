"""HL7 FHIR R4 Patient resources, cleaned in place.

A Patient, or each Patient entry of a Bundle, is cleaned piece by piece:
every HumanName, every ContactPoint, every Address on its own (an old, maiden
or temp name or a temp address is never merged with another), and birthDate
with gender. Only these elements are ever written: identifiers, extensions,
meta, contained resources, other entries and elements we do not know come
back as they were parsed. An element is written only when cleaning changed
it, and an element that was not sent only when something moved into it (a
suffix split off a family name), never a default (the request's country).

How the engine's record is made of an element, and written back:

- HumanName: `prefix` and `suffix` items are sent as one prefix and one
  suffix, `given[0]` as the given name and the other given items as middle
  names. A part made of several items is put back into as many items by
  their word counts; where the words no longer fit, those items go back as
  sent (fhir.items_not_aligned). Credentials join the suffixes (FHIR's suffix
  holds qualifications). A nickname written inside a name becomes a HumanName
  of its own with use `nickname`, appended to Patient.name. `use`, `text`
  and `period` are kept; a name sent only as `text` is not split.
- ContactPoint: a phone (system phone, fax, pager, sms; rules/fhir.toml)
  gets its E.164 number as `value`, and an extension as the core extension
  contactpoint-extension (valueString), so `value` stays a bare E.164
  number. A label beside the number sets `use` when none was sent. A value
  holding several numbers goes back as sent (one ContactPoint, one number).
  An email is cleaned as an email; other systems are left alone.
- Address: `line[0]` is the delivery line and the other lines the second
  line; city, state, postalCode and country as the engine's parts.
  `use`, `type`, `text`, `district` and `period` are kept.
- birthDate is written in the precision the engine found (YYYY, YYYY-MM or
  YYYY-MM-DD); gender as its AdministrativeGender code.
- A list sent with a `_given`/`_line`/... array beside it keeps its number of
  items, or goes back as sent (fhir.list_kept), so that each extension still
  belongs to its item. A name or address whose list holds a null (an item
  that is only an extension) goes back whole as sent, flagged the same way:
  its parts are cleaned together or not at all.
- A value that becomes blank is removed: FHIR allows no empty strings.

Every change and flag is told in an OperationOutcome: one issue each, its
severity and IssueType by rules/fhir.toml, `expression` the FHIRPath of the
element, `details.coding` the reason code under REASON_SYSTEM, `diagnostics`
the code's fixed description, never a value. The reply is a Parameters
resource: `resource` (the cleaned Patient or Bundle), `outcome` and
`rulesVersion`.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from itertools import islice
from types import MappingProxyType
from typing import Any

from marshmallow import Schema, fields, validate

from cleaner.formats import Findings
from cleaner.options import InvalidInput, Options
from cleaner.rules import SEVERITIES, LoadContext, RuleBook, string_lists

REASON_SYSTEM = "urn:demographic-cleaner:reason"
# HL7 FHIR R4 value sets IssueSeverity and IssueType.
ISSUE_SEVERITIES = ("fatal", "error", "warning", "information")
ISSUE_TYPES = ("invalid", "structure", "required", "value", "invariant", "security", "login",
               "unknown", "expired", "forbidden", "suppressed", "processing", "not-supported",
               "duplicate", "multiple-matches", "not-found", "deleted", "too-long",
               "code-invalid", "extension", "too-costly", "business-rule", "conflict",
               "transient", "lock-error", "no-store", "exception", "timeout", "incomplete",
               "throttled", "informational")
RESOURCE_TYPES = ("Patient", "Bundle")


@dataclass(frozen=True)
class FhirRules:
    phone_systems: frozenset[str]
    email_systems: frozenset[str]
    phone_extension_url: str
    issues: Mapping[str, tuple[str, str]]   # "change" or a flag severity -> (severity, IssueType)


_IssueSchema = Schema.from_dict({
    "severity": fields.String(required=True, validate=validate.OneOf(ISSUE_SEVERITIES)),
    "code": fields.String(required=True, validate=validate.OneOf(ISSUE_TYPES)),
})
_RulesSchema = Schema.from_dict({
    **string_lists("phone_systems", "email_systems"),
    "phone_extension_url": fields.Url(required=True),
    "issues": fields.Dict(keys=fields.String(validate=validate.OneOf(("change", *SEVERITIES))),
                          values=fields.Nested(_IssueSchema), required=True,
                          validate=validate.Length(equal=1 + len(SEVERITIES))),
})


def compile_rules(data: dict[str, Any], context: LoadContext) -> FhirRules:
    loaded = context.validated(_RulesSchema(), data)
    return FhirRules(
        phone_systems=frozenset(loaded["phone_systems"]),
        email_systems=frozenset(loaded["email_systems"]),
        phone_extension_url=loaded["phone_extension_url"],
        issues=MappingProxyType({kind: (issue["severity"], issue["code"])
                                 for kind, issue in loaded["issues"].items()}))


# --- the shape of the elements we touch ------------------------------------------

class _Strings:
    """A list of strings; null items stand beside a `_x` array's extensions."""


@dataclass(frozen=True)
class _Objects:
    """A list of objects, each checked against `shape` (None: any object)."""
    shape: Mapping[str, Any] | None = None


_HUMAN_NAME = {"family": str, "given": _Strings, "prefix": _Strings, "suffix": _Strings}
_CONTACT_POINT = {"system": str, "value": str, "use": str, "extension": _Objects()}
_ADDRESS = {"line": _Strings, "city": str, "state": str, "postalCode": str, "country": str}
_PATIENT = {"name": _Objects(_HUMAN_NAME), "telecom": _Objects(_CONTACT_POINT),
            "birthDate": str, "gender": str, "address": _Objects(_ADDRESS)}
_BUNDLE = {"entry": _Objects({"resource": dict})}


def _problems(element: Mapping[str, Any], shape: Mapping[str, Any],
              where: str) -> Iterator[tuple[str, str]]:
    for name, expected in shape.items():
        if name not in element:
            continue
        value, place = element[name], f"{where}.{name}"
        if expected is str and not isinstance(value, str):
            yield place, "must be a string"
        elif expected is dict and not isinstance(value, dict):
            yield place, "must be an object"
        elif expected is _Strings and not (isinstance(value, list) and all(
                item is None or isinstance(item, str) for item in value)):
            yield place, "must be a list of strings"
        elif isinstance(expected, _Objects):
            if not (isinstance(value, list) and all(isinstance(item, dict) for item in value)):
                yield place, "must be a list of objects"
            elif expected.shape:
                for index, item in enumerate(value):
                    yield from _problems(item, expected.shape, f"{place}[{index}]")


def patients(document: Any) -> list[tuple[dict[str, Any], str]]:
    """The Patients of a Patient or Bundle resource, each with the FHIRPath of
    its place. Raises InvalidInput, with FHIRPath expressions, where an
    element this module touches is not of its FHIR JSON type."""
    kind = document.get("resourceType") if isinstance(document, dict) else None
    if kind not in RESOURCE_TYPES:
        raise InvalidInput([("", "must be a FHIR Patient or Bundle resource")])
    if kind == "Patient":
        found = [(document, "Patient")]
    else:
        problems = list(_problems(document, _BUNDLE, "Bundle"))
        if problems:
            raise InvalidInput(problems)
        found = [(entry["resource"], f"Bundle.entry[{index}].resource")
                 for index, entry in enumerate(document.get("entry", []))
                 if isinstance(entry.get("resource"), dict)
                 and entry["resource"].get("resourceType") == "Patient"]
    problems = [problem for patient, where in found
                for problem in _problems(patient, _PATIENT, where)]
    if problems:
        raise InvalidInput(problems)
    return found


# --- lists of items ---------------------------------------------------------------

@dataclass(frozen=True)
class _Run:
    """The items of a FHIR list sent to the engine as one part."""
    part: str          # the engine's record key
    place: str         # FHIRPath of its one item, or of the list when several
    sent: list[str]


def _runs(element: Mapping[str, Any], name: str, where: str,
          parts: tuple[tuple[str, int | None], ...]) -> list[_Run]:
    """Cut the list `name` into runs: each (part, count) takes `count` items,
    None the rest."""
    items, runs, start = element.get(name, []), [], 0
    for part, count in parts:
        sent = items[start:] if count is None else items[start:start + count]
        place = f"{where}.{name}" if len(sent) > 1 else f"{where}.{name}[{start}]"
        runs.append(_Run(part, place, sent))
        start += len(sent)
    return runs


def _items(cleaned: str | None, sent: list[str]) -> list[str] | None:
    """A run's cleaned text as list items: as many as were sent, by their word
    counts; None where the words no longer fit them."""
    if len(sent) <= 1:
        return [cleaned] if cleaned else []
    words = cleaned.split() if cleaned else []
    counts = [len(item.split()) for item in sent]
    if len(words) != sum(counts) or 0 in counts:
        return None
    remaining = iter(words)
    return [" ".join(islice(remaining, count)) for count in counts]


def _write_list(findings: Findings, element: dict[str, Any], name: str, where: str,
                runs: list[_Run], cleaned: Mapping[str, Any]) -> bool:
    """Write the list `name` from the cleaned parts of its runs; False where
    it went back as sent."""
    written: list[str] = []
    for run in runs:
        items = _items(cleaned.get(run.part), run.sent)
        if items is None:
            findings.keep_as_sent(run.place, "fhir.items_not_aligned")
            items = run.sent
        written += findings.settle(run.place, run.sent, items)
    sent = element.get(name, [])
    if f"_{name}" in element and len(written) != len(sent):
        findings.keep_as_sent(f"{where}.{name}", "fhir.list_kept")
        return False
    _put(element, name, written or None, sent or None)
    return True


def _put(element: dict[str, Any], name: str, written: Any, sent: Any) -> None:
    """Set an element to its written value; a blank one is removed."""
    if written == sent:
        return
    if written is None:
        del element[name]
    else:
        element[name] = written


def _write_scalar(findings: Findings, element: dict[str, Any], name: str, place: str,
                  written: Any) -> None:
    """A single element: written where it was sent, or where a part moved
    into it; never a default the engine filled in."""
    sent = element.get(name)
    if name in element or findings.changed(place):
        _put(element, name, findings.settle(place, sent, written), sent)


def _has_null(element: Mapping[str, Any], names: tuple[str, ...]) -> str | None:
    return next((name for name in names if None in element.get(name, [])), None)


def _placer(places: Mapping[str, str], default: str):
    """Engine field to FHIRPath: by the field, by its name without an index
    ("phones[0]", "name.credentials[1]"), else the whole element."""
    return lambda field: places.get(field) or places.get(field.partition("[")[0]) or default


# --- the pieces of a Patient -------------------------------------------------------

_NAME_RUNS = {"prefix": (("prefix", None),), "given": (("given", 1), ("middle", None)),
              "suffix": (("suffix", None),)}
_ADDRESS_RUNS = {"line": (("line1", 1), ("line2", None))}
_ADDRESS_PARTS = {"city": "city", "state": "state", "postalCode": "postal_code",
                  "country": "country"}


def _record(element: Mapping[str, Any], runs: Mapping[str, list[_Run]],
            scalars: Mapping[str, str]) -> dict[str, str]:
    record = {run.part: " ".join(run.sent) for name_runs in runs.values()
              for run in name_runs if run.sent}
    record.update((part, element[name]) for name, part in scalars.items() if name in element)
    return record


def _clean_name(findings: Findings, name: dict[str, Any], where: str,
                nickname_at: str) -> str | None:
    """Clean one HumanName in place; returns a nickname it held, to be
    written as a HumanName of its own at `nickname_at`."""
    held = _has_null(name, tuple(_NAME_RUNS))
    if held:
        findings.keep_as_sent(f"{where}.{held}", "fhir.list_kept")
        return None
    runs = {element: _runs(name, element, where, parts) for element, parts in _NAME_RUNS.items()}
    record = _record(name, runs, {"family": "family"})
    if not record:
        return None
    places = {f"name.{run.part}": run.place for element_runs in runs.values()
              for run in element_runs}
    places.update({"name.family": f"{where}.family", "name.nickname": f"{nickname_at}.given[0]",
                   "name.credentials": places["name.suffix"]})
    cleaned = findings.clean(record, _placer(places, where))["name"]
    # FHIR's suffix holds qualifications too: credentials go back among the suffixes.
    cleaned = {**cleaned, "suffix": " ".join(filter(None, (cleaned["suffix"],
                                                            *cleaned["credentials"]))) or None}
    _write_scalar(findings, name, "family", f"{where}.family", cleaned["family"])
    written = [_write_list(findings, name, element, where, element_runs, cleaned)
               for element, element_runs in runs.items()]
    if not cleaned["nickname"]:
        return None
    if all(written):
        return cleaned["nickname"]
    findings.keep_as_sent(nickname_at)
    return None


def _clean_names(findings: Findings, patient: dict[str, Any], where: str) -> None:
    names = patient.get("name", [])
    nicknames: list[dict[str, Any]] = []
    for index, name in enumerate(list(names)):
        nickname_at = f"{where}.name[{len(names) + len(nicknames)}]"
        nickname = _clean_name(findings, name, f"{where}.name[{index}]", nickname_at)
        if nickname:
            use = findings.write(f"{nickname_at}.use", None, None, "nickname",
                                 "fhir.nickname_name_added")
            nicknames.append({"use": use, "given": [nickname]})
    if nicknames:
        names += nicknames


def _clean_phone(findings: Findings, point: dict[str, Any], where: str, rules: FhirRules) -> None:
    place = f"{where}.value"
    phones = findings.clean({"phone": point["value"]}, lambda field: place)["phones"]
    if len(phones) > 1:
        findings.keep_as_sent(place, "fhir.several_numbers_kept")
        return
    phone = phones[0] if phones else {}
    if phones and not phone["valid"]:
        # The number as sent still tells a person what was meant; an E.164
        # form of a number its region does not have would not (flagged).
        findings.keep_as_sent(place)
        return
    extension = phone.get("extension")
    extensions = point.get("extension", [])
    carried = next((item for item in extensions if item.get("url") == rules.phone_extension_url),
                   None)
    if extension and carried is not None and carried.get("valueString") != extension:
        findings.keep_as_sent(place, "fhir.extension_conflict")
        return
    _put(point, "value", findings.settle(place, point["value"], phone.get("e164")
                                          or phone.get("value")), point["value"])
    if extension and carried is None:
        point["extension"] = [*extensions, findings.write(
            f"{where}.extension[{len(extensions)}]", None, extension,
            {"url": rules.phone_extension_url, "valueString": extension},
            "fhir.phone_extension_written")]
    if phone.get("use") and "use" not in point:
        point["use"] = findings.write(f"{where}.use", None, None, phone["use"],
                                      "fhir.use_from_label")


def _clean_telecom(findings: Findings, patient: dict[str, Any], where: str,
                   rules: FhirRules) -> None:
    for index, point in enumerate(patient.get("telecom", [])):
        if "value" not in point:
            continue
        place = f"{where}.telecom[{index}]"
        if point.get("system") in rules.phone_systems:
            _clean_phone(findings, point, place, rules)
        elif point.get("system") in rules.email_systems:
            email = findings.clean({"email": point["value"]},
                                   lambda field: f"{place}.value")["email"]
            _write_scalar(findings, point, "value", f"{place}.value", email and email["value"])


def _clean_birth_and_gender(findings: Findings, patient: dict[str, Any], where: str) -> None:
    places = {"birth_date": f"{where}.birthDate", "sex": f"{where}.gender"}
    record = _record(patient, {}, {"birthDate": "birth_date", "gender": "sex"})
    if not record:
        return
    cleaned = findings.clean(record, _placer(places, where))
    for name, part in (("birthDate", "birth_date"), ("gender", "sex")):
        if name in patient:
            _write_scalar(findings, patient, name, places[part],
                          cleaned[part] and cleaned[part]["value"])


def _clean_address(findings: Findings, address: dict[str, Any], where: str) -> None:
    if _has_null(address, ("line",)):
        findings.keep_as_sent(f"{where}.line", "fhir.list_kept")
        return
    runs = {"line": _runs(address, "line", where, _ADDRESS_RUNS["line"])}
    record = _record(address, runs, _ADDRESS_PARTS)
    if not record:
        return
    places = {f"address.{run.part}": run.place for run in runs["line"]}
    places.update((f"address.{part}", f"{where}.{name}") for name, part in _ADDRESS_PARTS.items())
    cleaned = findings.clean(record, _placer(places, where))["address"] or {}
    if cleaned and not cleaned["valid"]:
        # Not read into parts (flagged): the parts stay as a person wrote them.
        findings.keep_as_sent(where)
        return
    _write_list(findings, address, "line", where, runs["line"], cleaned)
    for name, part in _ADDRESS_PARTS.items():
        _write_scalar(findings, address, name, places[f"address.{part}"], cleaned.get(part))


def clean_patient(findings: Findings, patient: dict[str, Any], where: str) -> None:
    """Clean one Patient in place; its changes and flags go to `findings`."""
    rules: FhirRules = findings.rules["fhir"]
    _clean_names(findings, patient, where)
    _clean_telecom(findings, patient, where, rules)
    _clean_birth_and_gender(findings, patient, where)
    for index, address in enumerate(patient.get("address", [])):
        _clean_address(findings, address, f"{where}.address[{index}]")


# --- the reply ---------------------------------------------------------------------

def issue(severity: str, code: str, diagnostics: str, expression: str = "",
          reason: str | None = None) -> dict[str, Any]:
    """One OperationOutcome issue; `diagnostics` is never a value that was sent."""
    body: dict[str, Any] = {"severity": severity, "code": code}
    if reason:
        body["details"] = {"coding": [{"system": REASON_SYSTEM, "code": reason}]}
    body["diagnostics"] = diagnostics
    if expression:
        body["expression"] = [expression]
    return body


def operation_outcome(issues: list[dict[str, Any]]) -> dict[str, Any]:
    return {"resourceType": "OperationOutcome", "issue": issues}


def outcome_of(findings: Findings) -> dict[str, Any]:
    """The changes and flags of `findings` as an OperationOutcome."""
    rules: RuleBook = findings.rules
    issues = rules["fhir"].issues
    told = [(change["field"], change["reason"], "change") for change in findings.changes]
    told += [(flag["field"], flag["code"], flag["severity"]) for flag in findings.flags]
    return operation_outcome([issue(*issues[kind], rules.reasons[code].description, field, code)
                              for field, code, kind in told])


def clean_resource(document: dict[str, Any], found: list[tuple[dict[str, Any], str]],
                   options: Options, rules: RuleBook) -> tuple[dict[str, Any], Findings]:
    """The reply to a Patient or Bundle whose Patients are `found` (see
    `patients`): a Parameters resource holding the document, cleaned in place,
    and the OperationOutcome; and the findings, for the request's counts.
    Raises InvalidInput where a value is longer than the rules allow."""
    findings = Findings(options, rules)
    for patient, where in found:
        clean_patient(findings, patient, where)
    if not (findings.changes or findings.flags):
        findings.flag_at(document["resourceType"], "fhir.no_findings")
    return {"resourceType": "Parameters", "parameter": [
        {"name": "resource", "resource": document},
        {"name": "outcome", "resource": outcome_of(findings)},
        {"name": "rulesVersion", "valueString": rules.version},
    ]}, findings
