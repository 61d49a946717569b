"""The naive endpoint the service is measured against: the five bare library
calls on one record, under the same server settings, no rules, no trail."""

from __future__ import annotations

import phonenumbers
import usaddress
from dateutil import parser as dateparser
from flask import Flask, jsonify, request
from nameparser import HumanName
from unidecode import unidecode

app = Flask("naive")


def bare_calls(record: dict) -> dict:
    name = HumanName(record.get("name") or "")
    try:
        address = usaddress.tag(record.get("address") or "")[0]
    except usaddress.RepeatedLabelError:
        address = {}
    try:
        birth = dateparser.parse(record.get("birth_date") or "").date().isoformat()
    except (ValueError, OverflowError):
        birth = None
    try:
        number = phonenumbers.parse(record.get("phone") or "", "US")
        phone = phonenumbers.format_number(number, phonenumbers.PhoneNumberFormat.E164) \
            if phonenumbers.is_valid_number(number) else None
    except phonenumbers.NumberParseException:
        phone = None
    return {"given": name.first, "family": name.last, "address": dict(address),
            "birth_date": birth, "phone": phone, "folded": unidecode(name.full_name)}


@app.post("/v1/clean")
def clean():
    return jsonify(bare_calls(request.get_json()["record"]))
