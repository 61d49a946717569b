"""A seeded corpus of invented, messy intake values, the same on every run."""

from __future__ import annotations

import random
from collections.abc import Iterator

GIVEN = ["Rowan", "Elspeth", "Maria", "José", "William", "Peggy", "Xiaoming", "Anh", "Chidi",
         "Lucía", "Harold", "Adelaide", "DeShawn", "LaToya", "Mackenzie", "Bill", "Ruth",
         "Imani", "Omar", "Fatima", "Jan", "Siobhan", "Kwame", "Ingrid", "Tomás", "Mei"]
MIDDLE = ["J", "Mae", "Louise", "R.", "Ann", "Lee", "Paul", "", "", "", ""]
FAMILY = ["Quillfeather", "Hartwell", "Machado", "McDonald", "O'Brien", "López García",
          "de la Cruz", "van der Berg", "Smith-Jones", "Nguyen", "Okafor", "MacKenzie",
          "Brackwater", "al-Nouri", "Penwarden", "D'Angelo", "St. Clair", "Wexley", "Ashdown"]
SUFFIX = ["", "", "", "", "Jr", "JR.", "III", "Sr", "MD", "RN"]
PLACEHOLDERS = ["BABY GIRL JONES", "UNKNOWN", "DOE, JOHN", "TRAUMA 123", "N/A", "TWIN A SMITH"]


def _case(value: str, rng: random.Random) -> str:
    roll = rng.random()
    return value.upper() if roll < 0.5 else value.lower() if roll < 0.6 else value


def name(rng: random.Random) -> str:
    if rng.random() < 0.04:
        return rng.choice(PLACEHOLDERS)
    given, middle, family, suffix = (rng.choice(GIVEN), rng.choice(MIDDLE), rng.choice(FAMILY),
                                     rng.choice(SUFFIX))
    if rng.random() < 0.05:
        given += ' "' + rng.choice(["Bill", "Peg", "Bo"]) + '"'
    if rng.random() < 0.4:
        text = f"{family}, {given} {middle} {suffix}"
    else:
        text = f"{given} {middle} {family} {suffix}"
    text = " ".join(text.split())
    if rng.random() < 0.05:
        text = "  " + text.replace(" ", "  ")
    return _case(text, rng)


def names(count: int, seed: int = 20261202) -> list[str]:
    rng = random.Random(seed)
    return [name(rng) for _ in range(count)]


NUMBERS = ["12", "45", "310", "1600", "123 1/2", "112-10", "Ten", "7"]
STREETS = ["north elm street", "OAK ST", "Harbor Rd", "Quillfeather Lane", "PARK AVENUE",
           "Old Mill Pkwy", "Kettleby Rd North", "S Brackwater Blvd", "Penwarden Ct"]
UNITS = ["", "", "", "apt 4b", "APT #7", "Suite 200", "BLDG 3 RM 29", "#12", "Lot 4"]
TOWNS = [("Springfield", "IL", "62704"), ("Cobblestone", "VA", "22401"),
         ("East Fenmoor", "IN", "46201"), ("Dunmorrow", "TX", "75201"),
         ("Ashland", "KY", "41101"), ("Brackwater", "Mass.", "2108"),
         ("West Kettleby", "OH", "43001"), ("Park Ridge", "IL", "60068"),
         ("Grand Junction", "CO", "81501"), ("North Penwarden", "NY", "12401")]
ADDRESS_PLACEHOLDERS = ["HOMELESS", "UNKNOWN", "SAME", "PO Box 12, Springfield IL 62701",
                        "RR 2 BOX 152, ASHLAND KY 41101", "PSC 1234 BOX 5678, APO AE 09012"]


def address(rng: random.Random) -> str:
    if rng.random() < 0.06:
        return rng.choice(ADDRESS_PLACEHOLDERS)
    town, state, zip_code = rng.choice(TOWNS)
    street = " ".join(filter(None, [rng.choice(NUMBERS), rng.choice(STREETS), rng.choice(UNITS)]))
    separator = ", " if rng.random() < 0.8 else " "
    return _case(f"{street}{separator}{town}{separator}{state} {zip_code}", rng)


def addresses(count: int, seed: int = 20261202) -> list[str]:
    rng = random.Random(seed)
    return [address(rng) for _ in range(count)]


def lines_without_commas(count: int, seed: int = 20261203) -> list[tuple[str, str]]:
    """(street, city, state and ZIP written on one line with no comma, the city)."""
    rng = random.Random(seed)
    lines = []
    for _ in range(count):
        town, state, zip_code = rng.choice(TOWNS)
        street = " ".join(filter(None, [rng.choice(NUMBERS), rng.choice(STREETS),
                                        rng.choice(UNITS)]))
        lines.append((_case(f"{street} {town} {state} {zip_code}", rng), town.upper()))
    return lines


def csv_rows(count: int, seed: int = 20261204) -> Iterator[str]:
    """An invented registration extract: header, then `count` messy rows."""
    rng = random.Random(seed)
    yield "MRN,Patient Name,DOB,Sex,Home Phone,Address\n"
    sexes = ["F", "M", "f", "male", "Female", "U", ""]
    dates = ["02/03/80", "1980-02-03", "3/4/55", "19711231", "July 4 1990", "", "13/02/1980"]
    phones = ["(217) 555-0142", "217.555.0199 x12", "555-0143", "", "000-000-0000"]
    for number in range(count):
        cells = [f"A-{number:07d}", name(rng), rng.choice(dates), rng.choice(sexes),
                 rng.choice(phones), address(rng)]
        yield ",".join(f'"{cell}"' if "," in cell or '"' in cell else cell
                       for cell in (cell.replace('"', '""') for cell in cells)) + "\n"


def intake_records(count: int, seed: int = 20261205) -> list[dict[str, str]]:
    """Invented messy intake records: name, birth date, sex, phone, one-line address."""
    rng = random.Random(seed)
    dates = ["02/03/80", "1980-02-03", "3/4/55", "19711231", "July 4 1990", "13/02/1980", "4-5-67"]
    phones = ["(217) 555-0142", "217.555.0199 x12", "555-0143", "2175550144", "+1 217 555 0145",
              "H: 217-555-0146"]
    return [{"name": name(rng), "birth_date": rng.choice(dates), "sex": rng.choice("FMfmU"),
             "phone": rng.choice(phones), "address": address(rng)} for _ in range(count)]
