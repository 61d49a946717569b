"""A seeded corpus of invented, messy intake values, the same on every run."""

from __future__ import annotations

import random

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
