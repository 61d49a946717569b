"""Names checked against sources outside the project: the National Archives'
Soundex examples, the `nicknames` dataset, HL7 FHIR HumanName, and jellyfish's
phonetic codes. Each check names its source; tables are in tests/reference."""

from __future__ import annotations

import functools
import re

import jellyfish
import pytest
from unidecode import unidecode

import cleaner
from cleaner.rules import LoadContext, default_directory
from conftest import REFERENCE_DATE
from reference import table
from test_names_table import CASES

PARTS = ("prefix", "given", "middle", "family", "suffix")
CASE_IDS = [case["id"] for case in CASES]
RULE_PAIRS = LoadContext(default_directory(), "names", frozenset()).read_csv("nicknames.csv")


def cleaned(clean, record):
    """(record.name, keys) of one cleaned record."""
    body = clean(record)
    return body["record"]["name"], body["keys"]


@functools.cache
def case_outputs(case_id):
    """(record.name, keys) of a case of tests/cases/names.toml, cleaned once."""
    case = next(case for case in CASES if case["id"] == case_id)
    record = {"name": case["name"]} if "name" in case else dict(case["parts"])
    options = {"name_order": case["order"]} if "order" in case else {}
    body = cleaner.clean(record, {"reference_date": REFERENCE_DATE, **options})
    return body["record"]["name"], body["keys"]


# --- 1. Soundex -------------------------------------------------------------------

# Source: US National Archives, "The Soundex Indexing System", and the older NARA guide
# (General Information Leaflet 55), as reproduced in secondary copies (tests/reference).
@pytest.mark.parametrize("row", table("nara_soundex.csv"), ids=lambda row: row["name"])
def test_nara_soundex_examples(clean, row):
    assert cleaned(clean, {"family": row["name"]})[1]["family_soundex"] == row["code"]
    name, keys = cleaned(clean, {"name": f"Rowan {row['name'].upper()}"})
    assert (name["family"], keys["family_soundex"]) == (row["name"], row["code"])


# Source: NARA, "The Soundex Indexing System": a surname with a prefix (Van, Con, De, Di, La,
# Le) is coded both with and without it; Van Hoesen is the older guide's example (secondary
# copy). The codes are hand-computed with NARA's coding rules.
@pytest.mark.parametrize("value, with_prefix, without_prefix", [
    ("Pieter Van Hoesen", "V525", "H250"),
    ("Pieter Van Dusen", "V532", "D250"),
    ("Maria de la Cruz", "D426", "C620"),
    ("Lucia Di Napoli", "D514", "N140"),
    ("Ana La Fontaine", "L153", "F535"),
    ("Marie Le Blanc", "L145", "B452"),
])
def test_nara_prefix_rule_codes_with_and_without_the_particle(clean, value, with_prefix,
                                                              without_prefix):
    name, keys = cleaned(clean, {"name": value})
    assert name["particles"] is not None
    assert keys["family_soundex"] == with_prefix == jellyfish.soundex(keys["family_folded"])
    assert jellyfish.soundex(keys["family_core"]) == without_prefix


# --- 2. Nicknames --------------------------------------------------------------------

# Source: the nicknames dataset (PyPI nicknames 1.0.1, Apache-2.0, by Carlton Northern and
# Nick Crews), the source named by rules/nicknames.csv.
def test_rules_hold_exactly_the_nickname_datasets_pairs():
    nicknames = pytest.importorskip("nicknames")
    triplets = list(nicknames.name_triplets())
    assert {triplet.relationship for triplet in triplets} == {"has_nickname"}
    assert sorted((row["name"], row["nickname"]) for row in RULE_PAIRS) \
        == sorted((triplet.name1, triplet.name2) for triplet in triplets)


# Service bugs the dataset shows (names.py is not changed here; see the reasons).
FORMAL_NAMES = sorted({row["name"] for row in RULE_PAIRS})
# Casey (k.c.) and Leroy (l.r.) have nicknames written with periods; Junior is also a suffix word.
NICKNAME_SAMPLE = sorted(set(FORMAL_NAMES[::25]) | {"casey", "junior", "leroy"})


def variants_of(clean, given):
    name, _ = cleaned(clean, {"name": f"{given.capitalize()} Quillfeather"})
    assert name["given"].casefold() == given.casefold()
    return {variant.casefold() for variant in name["given_variants"]}


# Source: the nicknames dataset (NickNamer), for every 25th formal name and two more.
@pytest.mark.parametrize("formal", NICKNAME_SAMPLE)
def test_given_variants_hold_the_datasets_nicknames_and_canonicals(clean, formal):
    namer = pytest.importorskip("nicknames").NickNamer()
    expected = namer.nicknames_of(formal) | namer.canonicals_of(formal)
    assert expected
    assert expected - variants_of(clean, formal) == set()


# From memory: well-known English nickname pairs, read both ways.
@pytest.mark.parametrize("formal, nickname", [
    ("William", "Bill"), ("Margaret", "Peggy"), ("Robert", "Bob"), ("Elizabeth", "Betsy"),
    ("Richard", "Dick"), ("John", "Jack"), ("Sarah", "Sally"),
])
def test_well_known_nickname_pairs(clean, formal, nickname):
    assert nickname.casefold() in variants_of(clean, formal)
    assert formal.casefold() in variants_of(clean, nickname)


# --- 3. FHIR HumanName ---------------------------------------------------------------

# Source: HL7 FHIR R4 (v4.0.1) HumanName and NameUse (tests/reference).
HUMAN_NAME = {row["element"]: row for row in table("fhir_humanname.csv")}
NAME_USE = {row["code"] for row in table("fhir_name_use.csv")}


def _present(items):
    return [item for item in items if item is not None]


def to_human_names(name):
    """record.name as FHIR HumanName dicts: the name, and its nickname as a second one."""
    if name is None:
        return []
    usual = {"use": name["use"] or "usual", "text": name.get("value"), "family": name["family"],
             "given": _present([name["given"], *(name["middle"] or "").split()]),
             "prefix": (name["prefix"] or "").split(),
             "suffix": _present([name["suffix"], *name["credentials"]])}
    names = [usual]
    if name["nickname"] is not None:
        names.append({"use": "nickname", "given": [name["nickname"]], "family": name["family"]})
    return [{key: value for key, value in human.items() if value not in (None, [])}
            for human in names]


def assert_human_name(human):
    assert set(human) <= set(HUMAN_NAME)
    assert human["use"] in NAME_USE
    for element, value in human.items():
        if HUMAN_NAME[element]["cardinality"].endswith("..1"):
            assert isinstance(value, str) and value
        else:
            assert isinstance(value, list) and all(isinstance(item, str) and item for item in value)


# Source: HL7 FHIR R4 HumanName (elements, cardinality) and NameUse (tests/reference).
@pytest.mark.parametrize("case_id", CASE_IDS)
def test_every_case_maps_onto_fhir_humanname(case_id):
    name, _ = case_outputs(case_id)
    humans = to_human_names(name)
    for human in humans:
        assert_human_name(human)
    assert [human["use"] for human in humans][1:] \
        == (["nickname"] if name and name["nickname"] else [])
    if name and any(name[part] for part in PARTS):
        assert {"family", "given", "prefix", "suffix"} & set(humans[0])


def _tidy(value):
    return value is None or (isinstance(value, str) and value == value.strip() != ""
                             and "  " not in value)


# Common practice (no source): parts are written tidily.
@pytest.mark.parametrize("case_id", CASE_IDS)
def test_output_parts_are_tidy_strings_or_null(case_id):
    name, _ = case_outputs(case_id)
    alternatives = [alt[part] for alt in name["alternatives"] for part in alt]
    values = [name[part] for part in (*PARTS, "nickname", "particles")] + name["credentials"]
    untidy = [value for value in values + alternatives + name["given_variants"] if not _tidy(value)]
    assert untidy == []


# --- 4. Phonetic keys against jellyfish -----------------------------------------------

_NOT_LETTER = re.compile(r"[^A-Z]")


# Cross-check with jellyfish (a general-purpose library, PyPI), not an authority.
@pytest.mark.parametrize("case_id", CASE_IDS)
@pytest.mark.parametrize("part", ["family", "given"])
def test_phonetic_keys_agree_with_jellyfish(case_id, part):
    name, keys = case_outputs(case_id)
    written = name[part] if name else None
    if written is None:
        assert not any(key.startswith(f"{part}_") for key in keys)
    if written is not None and not name["placeholder"]:
        assert keys[f"{part}_folded"] == _NOT_LETTER.sub("", unidecode(written).upper())
    if f"{part}_folded" in keys:
        folded = keys[f"{part}_folded"]
        assert [keys[f"{part}_soundex"], keys[f"{part}_nysiis"], keys[f"{part}_metaphone"]] \
            == [jellyfish.soundex(folded), jellyfish.nysiis(folded), jellyfish.metaphone(folded)]
