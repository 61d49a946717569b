"""A seeded corpus of invented, messy intake values, the same on every run."""

from __future__ import annotations

import random
from datetime import date, timedelta
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


# Birth dates spread over a century and written the ways intake forms write
# them, so that a cache of cleaned values meets them about as often as it
# would in a real feed: rarely the same day in the same form.
DATE_FORMS = ["{m:02}/{d:02}/{yy:02}", "{y}-{m:02}-{d:02}", "{m}/{d}/{yy:02}", "{y}{m:02}{d:02}",
              "{month} {d} {y}", "{d:02}/{m:02}/{y}", "{m}-{d}-{yy:02}", "{m:02}/{d:02}/{y}"]
MONTHS = ["January", "February", "March", "April", "May", "June", "July", "August",
          "September", "October", "November", "December"]
MISSING_DATES = ["", "unknown", "00/00/0000"]


def birth_date(rng: random.Random) -> str:
    if rng.random() < 0.02:
        return rng.choice(MISSING_DATES)
    day = date(1925, 1, 1) + timedelta(days=rng.randrange(36_500))
    return rng.choice(DATE_FORMS).format(y=day.year, yy=day.year % 100, m=day.month, d=day.day,
                                         month=MONTHS[day.month - 1])


# Real area codes, fictional lines: 555-0100 to 555-0199 are set aside for fiction.
AREA_CODES = ["217", "309", "312", "614", "937", "303", "720", "212", "718", "415", "510",
              "214", "469", "502", "859", "540", "703", "317", "812", "518", "607", "617"]
PHONE_FORMS = ["({area}) 555-01{line:02}", "{area}.555.01{line:02} x{ext}", "555-01{line:02}",
               "{area}55501{line:02}", "+1 {area} 555 01{line:02}", "H: {area}-555-01{line:02}",
               "1-{area}-555-01{line:02}"]
MISSING_PHONES = ["", "000-000-0000", "none"]


def phone(rng: random.Random) -> str:
    if rng.random() < 0.03:
        return rng.choice(MISSING_PHONES)
    return rng.choice(PHONE_FORMS).format(area=rng.choice(AREA_CODES), line=rng.randrange(100),
                                          ext=rng.randrange(10, 999))


def csv_rows(count: int, seed: int = 20261204) -> Iterator[str]:
    """An invented registration extract: header, then `count` messy rows."""
    rng = random.Random(seed)
    yield "MRN,Patient Name,DOB,Sex,Home Phone,Address\n"
    sexes = ["F", "M", "f", "male", "Female", "U", ""]
    for number in range(count):
        cells = [f"A-{number:07d}", name(rng), birth_date(rng), rng.choice(sexes),
                 phone(rng), address(rng)]
        yield ",".join(f'"{cell}"' if "," in cell or '"' in cell else cell
                       for cell in (cell.replace('"', '""') for cell in cells)) + "\n"


SEED = 20261205


def intake_records(count: int, seed: int = SEED) -> list[dict[str, str]]:
    """Invented messy intake records: name, birth date, sex, phone, one-line address."""
    rng = random.Random(seed)
    return [{"name": name(rng), "birth_date": birth_date(rng), "sex": rng.choice("FMfmU"),
             "phone": phone(rng), "address": address(rng)} for _ in range(count)]
