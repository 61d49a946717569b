"""Birth dates: read in every common form, written as ISO 8601 with their
precision, never filled in, and flagged when ambiguous or implausible.
The reference date is 2026-12-02 unless a test says otherwise."""

from __future__ import annotations

import datetime as dt

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import cleaner
from cleaner import engine
from cleaner.dates import spreadsheet_serial_to_date
from cleaner.rules import RulesError
from conftest import REFERENCE_DATE, edit_rules, field_codes, today
from reference import table


class Read:
    """What the service answered about one birth date."""

    def __init__(self, body):
        self.body = body
        self.record = body["record"]["birth_date"]
        self.changes, self.flags = field_codes(body, "birth_date")
        self.keys = body["keys"]

    @property
    def value(self):
        return self.record["value"]

    def severity(self, code):
        return next(f["severity"] for f in self.body["flags"] if f["code"] == code)


@pytest.fixture
def read(clean):
    def run(value, **options):
        return Read(clean({"birth_date": value}, **options))
    return run


def assert_unreadable(result, raw, code):
    """Nothing is lost: the value comes back exactly as sent, with no changes."""
    assert result.record == {"value": raw, "precision": None, "ambiguous": False,
                             "alternatives": [], "valid": False}
    assert result.changes == [] and result.flags == [code] and result.keys == {}
    assert result.severity(code) == "invalid"


# ---- the contract and ISO 8601 ------------------------------------------------

def test_the_contract_example(read):
    result = read("02/03/80", date_order="MDY")
    assert result.record == {"value": "1980-02-03", "precision": "day", "ambiguous": True,
                             "alternatives": ["1980-03-02"], "valid": True}
    assert result.body["changes"] == [{"field": "birth_date", "from": "02/03/80",
                                       "to": "1980-02-03", "reason": "dates.reformatted"}]
    assert result.flags == ["dates.century_inferred", "dates.ambiguous"]
    assert result.severity("dates.ambiguous") == "review"
    assert result.severity("dates.century_inferred") == "info"
    assert result.keys == {"birth_date": "19800203", "birth_year": 1980}


def test_an_iso_date_is_kept_as_it_is(read):
    result = read("1980-02-03")
    assert result.record == {"value": "1980-02-03", "precision": "day", "ambiguous": False,
                             "alternatives": [], "valid": True}
    assert result.changes == [] and result.flags == []
    assert result.keys == {"birth_date": "19800203", "birth_year": 1980}


# Source: ISO 8601:2004 section 4.1.2.2 (complete representations, basic and
# extended) and 4.1.2.3 (reduced accuracy: a specific month, a specific year).
@pytest.mark.parametrize("value, expected, precision", [
    ("19850412", "1985-04-12", "day"),
    ("1985-04-12", "1985-04-12", "day"),
    ("1985-04", "1985-04", "month"),
    ("1985", "1985", "year"),
])
def test_iso_8601_calendar_date_examples(read, value, expected, precision):
    result = read(value)
    assert (result.value, result.record["precision"], result.record["valid"]) == (
        expected, precision, True)


# Source: ISO 8601:2004 section 4.3.2 examples of a complete date and time of
# day, basic and extended, local, UTC and with an offset (from memory).
@pytest.mark.parametrize("value", [
    "19850412T101530", "1985-04-12T10:15:30", "19850412T101530Z", "1985-04-12T10:15:30Z",
    "19850412T101530+0400", "1985-04-12T10:15:30+04:00", "1985-04-12T10:15:30+04",
])
def test_iso_8601_date_time_examples_keep_the_date(read, value):
    result = read(value)
    assert result.value == "1985-04-12" and result.record["precision"] == "day"
    assert result.changes[0] == "dates.time_dropped"


# Source: HL7 v2.5 Chapter 2A, DTM/TS/DT examples (tests/reference, from memory).
@pytest.mark.parametrize("row", table("hl7_v2_dtm_examples.csv"), ids=lambda row: row["value"])
def test_hl7_v2_dtm_examples(read, row):
    result = read(row["value"])
    assert (result.value, result.record["precision"]) == (row["date"], row["precision"])
    assert result.record["valid"] and not result.record["ambiguous"]


@pytest.mark.parametrize("value", [
    "198002031030", "19800203103000", "19800203103000.1234", "19800203103000-0500",
    "1980020310", "19800203-0500", "1980-02-03T10:30:00.250Z", "1980-02-03 10:30",
    "1980-02-03T23:59:60Z",
])
def test_a_time_of_day_is_dropped_with_its_own_reason(read, value):
    result = read(value)
    assert result.value == "1980-02-03"
    assert result.changes[0] == "dates.time_dropped" and result.flags == []


def test_the_date_is_kept_as_written_not_moved_to_utc(read):
    """A birth date is the local date; the zone only said when the clock time was."""
    assert read("1980-02-03T23:30:00-05:00").value == "1980-02-03"
    assert read("19800203233000-0500").value == "1980-02-03"


@pytest.mark.parametrize("value, changes", [
    ("2/3/1980 10:30 AM", ["dates.time_dropped", "dates.reformatted"]),
    ("02/03/1980 12:00:00 a. m.", ["dates.time_dropped", "dates.reformatted"]),
    ("Feb 3, 1980, 14:05", ["dates.time_dropped", "dates.reformatted"]),
    ("2/3/1980 0:00", ["dates.time_dropped", "dates.reformatted"]),
])
def test_a_clock_time_after_any_date_is_dropped(read, value, changes):
    result = read(value)
    assert result.value == "1980-02-03" and result.changes == changes


@pytest.mark.parametrize("value", ["1980-02-03T25:00", "1980-02-03T10:61", "198002032500",
                                   "19800203T1", "10:30", "1980-02-03 10:30 tomorrow"])
def test_a_time_that_is_not_a_time_leaves_the_value_unread(read, value):
    assert_unreadable(read(value), value, "dates.unparseable")


# ---- numeric dates and the date order -----------------------------------------

@pytest.mark.parametrize("value", ["12/25/1980", "12-25-1980", "12.25.1980", "12 25 1980",
                                   "12/25/80", "12-25-80", " 12 / 25 / 1980 "])
def test_us_numeric_dates_with_any_separator(read, value):
    result = read(value, date_order="MDY")
    assert result.value == "1980-12-25" and not result.record["ambiguous"]
    assert "dates.order_contradicted" not in result.flags


@pytest.mark.parametrize("value", ["25/12/1980", "25-12-1980", "25.12.1980", "25 12 1980",
                                   "25.12.80"])
def test_day_first_numeric_dates_with_any_separator(read, value):
    result = read(value, date_order="DMY")
    assert result.value == "1980-12-25" and "dates.order_contradicted" not in result.flags


@pytest.mark.parametrize("order", ["MDY", "DMY", "YMD"])
@pytest.mark.parametrize("value", ["1980/02/03", "1980.02.03", "1980-2-3", "1980 02 03"])
def test_a_four_digit_year_first_is_year_month_day_whatever_the_order(read, value, order):
    result = read(value, date_order=order)
    assert result.value == "1980-02-03" and result.flags == []
    assert result.changes == ["dates.reformatted"]


@pytest.mark.parametrize("value, order, expected, alternatives", [
    ("02/03/1980", "MDY", "1980-02-03", ["1980-03-02"]),
    ("02/03/1980", "DMY", "1980-03-02", ["1980-02-03"]),
    ("02/03/1980", "YMD", "1980-02-03", ["1980-03-02"]),  # YMD, like MDY, puts the month first
    ("80/02/03", "YMD", "1980-02-03", []),
    ("11/10/1975", "MDY", "1975-11-10", ["1975-10-11"]),
    ("11/10/1975", "DMY", "1975-10-11", ["1975-11-10"]),
    ("02031980", "DMY", "1980-03-02", ["1980-02-03"]),
    ("020380", "MDY", "1980-02-03", ["1980-03-02"]),
    ("03/03/1980", "MDY", "1980-03-03", []),  # the same date either way
])
def test_ambiguity_in_each_order(read, value, order, expected, alternatives):
    result = read(value, date_order=order)
    assert result.value == expected and result.record["alternatives"] == alternatives
    assert result.record["ambiguous"] is bool(alternatives)
    assert ("dates.ambiguous" in result.flags) is bool(alternatives)
    assert result.record["valid"] and result.keys["birth_date"] == expected.replace("-", "")


@pytest.mark.parametrize("value, order, expected", [
    ("13/02/1980", "MDY", "1980-02-13"),
    ("02/13/1980", "DMY", "1980-02-13"),
    ("13/02/1980", "YMD", "1980-02-13"),
    ("31121980", "MDY", "1980-12-31"),
    ("12311980", "DMY", "1980-12-31"),
    ("12/03/2026", "MDY", "2026-03-12"),  # as MDY it would be after the reference date
])
def test_a_date_only_real_in_the_other_order_is_read_so_for_review(read, value, order, expected):
    result = read(value, date_order=order)
    assert result.value == expected and result.changes == ["dates.order_swapped"]
    assert result.flags == ["dates.order_contradicted"]
    assert result.severity("dates.order_contradicted") == "review"
    assert result.record["valid"] and not result.record["ambiguous"]


@pytest.mark.parametrize("value, order", [("80/02/03", "MDY"), ("80/02/03", "DMY"),
                                          ("02/03/80", "YMD"), ("800203", "MDY")])
def test_a_two_digit_year_at_the_other_end_contradicts_the_order(read, value, order):
    result = read(value, date_order=order)
    assert result.value in ("1980-02-03", "1980-03-02")
    assert "dates.order_contradicted" in result.flags and "dates.century_inferred" in result.flags


@pytest.mark.parametrize("value, order", [("020380", "MDY"), ("030280", "DMY"),
                                          ("800203", "YMD")])
def test_six_digits_are_read_in_the_order(read, value, order):
    result = read(value, date_order=order)
    assert result.value == "1980-02-03" and "dates.order_contradicted" not in result.flags


@pytest.mark.parametrize("value, order, expected", [
    ("19800203", "MDY", "1980-02-03"), ("19800203", "DMY", "1980-02-03"),
    ("12311980", "MDY", "1980-12-31"), ("31121980", "DMY", "1980-12-31"),
    (19800203, "MDY", "1980-02-03"),
])
def test_eight_digits_are_yyyymmdd_else_read_in_the_order(read, value, order, expected):
    assert read(value, date_order=order).value == expected


# ---- two-digit years -----------------------------------------------------------

@pytest.mark.parametrize("value, expected, alternatives", [
    ("02/03/25", "2025-02-03", ["1925-02-03", "2025-03-02", "1925-03-02"]),
    ("12/31/26", "1926-12-31", []),           # 2026-12-31 is after the reference date
    ("12/02/26", "2026-12-02", ["1926-12-02", "2026-02-12", "1926-02-12"]),  # on the reference date
    ("12/03/26", "1926-12-03", ["2026-03-12", "1926-03-12"]),
    ("12/25/80", "1980-12-25", []),           # 1880 would be over the maximum age
    ("02/29/00", "2000-02-29", []),           # 1900 was no leap year
])
def test_two_digit_years_take_the_most_recent_century_not_after_the_reference(
        read, value, expected, alternatives):
    result = read(value, date_order="MDY")
    assert result.value == expected and result.record["alternatives"] == alternatives
    assert "dates.century_inferred" in result.flags


def test_the_century_follows_the_reference_date(read):
    assert read("02/03/05", reference_date="2000-01-01").value == "1905-02-03"
    assert read("02/03/05", reference_date="2026-12-02").value == "2005-02-03"
    assert read("12/31/99", reference_date="2100-01-01").value == "2099-12-31"


# ---- month names, weekdays, fillers and ordinals ---------------------------------

@pytest.mark.parametrize("value", [
    "February 3, 1980", "Feb 3, 1980", "Feb. 3rd, 1980", "3 Feb 1980", "03-FEB-1980",
    "3FEB1980", "Sunday, 3rd of February 1980", "the 3rd of February, 1980", "1980 Feb 3",
    "february 3 1980", "FEB 03 1980", "Sun Feb 3 1980",
    "3 de febrero de 1980", "domingo 3 de feb. de 1980", "3 febrero 1980", "Febrero 3, 1980",
    "3 de febrero del 1980", "3ro de febrero de 1980", "3º de febrero de 1980",
])
def test_month_names_in_english_and_spanish(read, value):
    """Common practice (no source): how dates are written out on forms."""
    result = read(value)
    assert result.value == "1980-02-03" and result.changes == ["dates.reformatted"]
    assert result.flags == []


@pytest.mark.parametrize("abbreviation, month", [
    ("ene", 1), ("feb", 2), ("mar", 3), ("abr", 4), ("may", 5), ("jun", 6), ("jul", 7),
    ("ago", 8), ("sep", 9), ("sept", 9), ("set", 9), ("oct", 10), ("nov", 11), ("dic", 12),
])
def test_spanish_month_abbreviations(read, abbreviation, month):
    """Common practice (no source): the abbreviations Spanish-language forms use."""
    assert read(f"15 {abbreviation} 1980").value == f"1980-{month:02d}-15"


@pytest.mark.parametrize("value, expected", [
    ("1º de enero de 1980", "1980-01-01"), ("1st January 1980", "1980-01-01"),
    ("22nd of March, 1980", "1980-03-22"), ("miércoles 2 de abril de 1980", "1980-04-02"),
    ("sábado, 12 de julio de 1980", "1980-07-12"), ("Thurs. Oct 9th 1980", "1980-10-09"),
    ("2do de diciembre de 1980", "1980-12-02"), ("SETIEMBRE 1 1980", "1980-09-01"),
])
def test_ordinals_weekdays_and_accents(read, value, expected):
    assert read(value).value == expected


def test_a_month_name_with_a_two_digit_year(read):
    result = read("3 Feb 80")
    assert result.value == "1980-02-03" and result.flags == ["dates.century_inferred"]
    assert read("3rd Feb 80", date_order="YMD").value == "1980-02-03"  # an ordinal is a day


def test_a_month_name_with_the_year_first_in_ymd(read):
    assert read("80 Feb 03", date_order="YMD").value == "1980-02-03"
    result = read("30 Feb 03")  # no 30 February: the year must be first
    assert result.value == "1930-02-03" and "dates.order_contradicted" in result.flags


# ---- spreadsheet serial numbers ----------------------------------------------------

# Source: Microsoft Learn "Excel incorrectly assumes that the year 1900 is a leap
# year" and Microsoft Support "Date systems in Excel" (tests/reference).
@pytest.mark.parametrize("row", table("spreadsheet_1900_serials.csv"), ids=lambda row: row["serial"])
def test_spreadsheet_serial_anchors(row):
    serial = int(row["serial"])
    if row["date"]:
        assert spreadsheet_serial_to_date(serial) == dt.date.fromisoformat(row["date"])
    else:
        with pytest.raises(ValueError):
            spreadsheet_serial_to_date(serial)


@pytest.mark.parametrize("serial", [0, -1, 2958466])
def test_serials_outside_the_1900_date_system_name_no_day(serial):
    with pytest.raises(ValueError):
        spreadsheet_serial_to_date(serial)


@pytest.mark.parametrize("value, changes", [
    ("29254", ["dates.serial_converted"]),
    (29254, ["text.number_as_text", "dates.serial_converted"]),
    (29254.0, ["text.number_as_text", "dates.serial_converted"]),
    ("29254.4375", ["dates.time_dropped", "dates.serial_converted"]),
    (29254.75, ["text.number_as_text", "dates.time_dropped", "dates.serial_converted"]),
])
def test_a_five_digit_number_is_read_as_a_serial_for_review(read, value, changes):
    result = read(value)
    assert result.value == "1980-02-03" and result.changes == changes
    assert result.flags == ["dates.spreadsheet_serial"]
    assert result.severity("dates.spreadsheet_serial") == "review"
    assert result.record["valid"] and result.keys["birth_date"] == "19800203"


def test_a_serial_is_never_written_with_a_leading_zero(read):
    assert_unreadable(read("01234"), "01234", "dates.unparseable")


# ---- partial dates -----------------------------------------------------------------

@pytest.mark.parametrize("value, expected, precision", [
    ("1980", "1980", "year"), (1980, "1980", "year"),
    ("03/1980", "1980-03", "month"), ("3/1980", "1980-03", "month"),
    ("1980-03", "1980-03", "month"), ("1980/3", "1980-03", "month"),
    ("March 1980", "1980-03", "month"), ("marzo de 1980", "1980-03", "month"),
    ("1980 Mar", "1980-03", "month"), ("199503", "1995-03", "month"),
])
def test_partial_dates_are_never_filled_in(read, value, expected, precision):
    """Not from today as dateutil.parser.parse would: the missing parts stay missing."""
    result = read(value)
    assert result.record == {"value": expected, "precision": precision, "ambiguous": False,
                             "alternatives": [], "valid": True}
    assert result.flags == ["dates.partial"] and result.severity("dates.partial") == "info"
    assert result.keys == {"birth_year": int(expected[:4])}


@pytest.mark.parametrize("value, plausible", [
    ("12/2026", True),   # its first day is before the reference date
    ("2026", True), ("2027", False), ("01/2027", False),
    ("1905", True),      # someone born late in 1905 is 120
    ("1904", False), ("11/1905", False), ("12/1905", True),
])
def test_a_partial_date_is_plausible_when_any_of_its_days_is(read, value, plausible):
    result = read(value)
    problems = {"dates.future", "dates.over_max_age"} & set(result.flags)
    assert (not problems) is plausible
    assert ("birth_year" in result.keys) is plausible


@pytest.mark.parametrize("value", ["13/1980", "1980-00", "00/1980"])
def test_a_partial_date_with_no_such_month_is_impossible(read, value):
    assert_unreadable(read(value), value, "dates.impossible")


# ---- impossible, future, too old, placeholders, unreadable --------------------------------

@pytest.mark.parametrize("value", ["02/30/1980", "30/02/1980", "13/13/1980", "1980-02-30",
                                   "Feb 29, 1981", "19800230", "00/00/0000", "0000",
                                   "1900-02-29", "31 abr 1980", "1980/13/02", 19801302])
def test_impossible_dates_are_returned_as_sent(read, value):
    assert_unreadable(read(value), value, "dates.impossible")


# Source: the Gregorian calendar's leap-year rule (ISO 8601:2004 section 3.2.1):
# 1980 and 2000 are leap years, 1900 and 1981 are not (see the impossible dates above).
@pytest.mark.parametrize("value", ["1980-02-29", "02/29/1980", "2000-02-29", "29 Feb 2000"])
def test_leap_days_of_gregorian_leap_years_are_real(read, value):
    assert read(value).record["valid"] is True


@pytest.mark.parametrize("value", ["2027-01-15", "2026-12-03", "01/15/2031", "15 Jan 2027",
                                   "2099-06-30"])
def test_future_dates_are_invalid_and_out_of_the_keys(read, value):
    result = read(value)
    assert "dates.future" in result.flags and result.severity("dates.future") == "invalid"
    assert result.record["valid"] is False and result.keys == {}
    assert result.record["precision"] == "day"  # still read: it is a real date


def test_when_no_reading_is_plausible_the_stated_order_wins(read):
    result = read("02/03/2030")
    assert result.value == "2030-02-03" and result.record["alternatives"] == ["2030-03-02"]
    assert result.flags == ["dates.ambiguous", "dates.future"]


@pytest.mark.parametrize("value, too_old", [
    ("1880-05-17", True), ("1905-12-02", True),   # 121 on the reference date
    ("1905-12-03", False),                        # 120 on the reference date
])
def test_ages_over_the_maximum_are_flagged_for_review(read, value, too_old):
    result = read(value)
    assert ("dates.over_max_age" in result.flags) is too_old
    assert result.record["valid"] is True
    assert (result.keys == {}) is too_old


def test_the_maximum_age_counts_from_a_leap_day_reference(read):
    assert "dates.over_max_age" in read("1907-02-28", reference_date="2028-02-29").flags
    assert read("1907-03-01", reference_date="2028-02-29").flags == []


def test_a_reference_date_in_antiquity_still_answers(read):
    assert read("0050-01-01", reference_date="0100-01-01").record["valid"] is True


# Common practice (no source): system minimum and maximum dates, epochs and
# spreadsheet zero days typed or defaulted when the real date is unknown.
@pytest.mark.parametrize("value", ["1900-01-01", "1901-01-01", "1800-01-01", "0001-01-01",
                                   "1970-01-01", "1899-12-30", "1899-12-31", "9999-12-31",
                                   "2099-12-31", "01/01/1970", "19700101"])
def test_placeholder_dates_need_review_and_stay_out_of_the_keys(read, value):
    result = read(value)
    assert "dates.placeholder" in result.flags and result.severity("dates.placeholder") == "review"
    assert result.keys == {} and result.record["precision"] == "day"


def test_a_placeholder_that_is_otherwise_plausible_stays_valid(read):
    result = read("1970-01-01")
    assert result.flags == ["dates.placeholder"] and result.record["valid"] is True


@pytest.mark.parametrize("value", ["not a date", "unknown", "N/A", "Feb 3", "3rd", "February",
                                   "2/3/5", "1/2/3/4", "3 Feb 1980 5", "Feb March 1980",
                                   "1980 1980", "123", "1234567", "123456789", "03/80",
                                   "1985-102", "x" * 100, "02/03/1980?", "Feb '80", 7,
                                   " not a date "])
def test_unreadable_values_are_returned_as_sent(read, value):
    assert_unreadable(read(value), value, "dates.unparseable")


def test_blank_and_null(clean):
    body = clean({"birth_date": "   "})
    assert body["record"]["birth_date"] is None and body["keys"] == {}
    assert field_codes(body, "birth_date") == (["text.whitespace_folded", "text.blank_cleared"], [])
    assert clean({"birth_date": None})["record"]["birth_date"] is None


def test_flags_carry_only_the_static_description(read, rules):
    for value in ["02/03/25", "13/02/1980", "1900-01-01", "29254", "2031-01-01", "x"]:
        for flag in read(value).body["flags"]:
            assert set(flag) == {"field", "code", "severity", "message"}
            assert flag["message"] == rules.reasons[flag["code"]].description


# ---- the trail replays --------------------------------------------------------------

MESSY = ["02/03/80", " 2/3/25 ", "1980-02-03T10:30:00Z", "\u200b3 de febrero de 1980",
         "29254.5", 29254, 19800203, 29254.75, "13/02/1980", "02/30/1980", "March\t1980",
         "not a date", "1900-01-01", "2031-01-01", "19800203103000-0500", "x" * 90]


def assert_replays(raw, body):
    record = body["record"]["birth_date"]
    final = None if record is None else record["value"]
    chain = [c for c in body["changes"] if c["field"] == "birth_date"]
    if not chain:
        assert final == raw
        return
    assert chain[0]["from"] == raw and chain[-1]["to"] == final
    for before, after in zip(chain, chain[1:]):
        assert before["to"] == after["from"]


@pytest.mark.parametrize("raw", MESSY)
def test_the_trail_replays_from_raw_to_final(clean, raw):
    assert_replays(raw, clean({"birth_date": raw}))


anything = (st.text(max_size=30) | st.integers() | st.floats(allow_nan=False, allow_infinity=False)
            | st.sampled_from(MESSY)
            | st.text(alphabet="0123456789/-. :TZ+", max_size=22))


@settings(max_examples=400, deadline=None)
@given(raw=anything, order=st.sampled_from(["MDY", "DMY", "YMD"]))
def test_any_value_replays_and_unread_values_come_back_as_sent(raw, order):
    options = {"date_order": order, "reference_date": REFERENCE_DATE}
    body = cleaner.clean({"birth_date": raw}, options)
    assert_replays(raw, body)
    record = body["record"]["birth_date"]
    if record is not None and record["precision"] is None:
        assert record["value"] == raw and record["valid"] is False
    assert cleaner.clean({"birth_date": raw}, options) == body


# ---- Python's strftime as the reference ----------------------------------------------

PLAUSIBLE = st.dates(min_value=dt.date(1906, 12, 3), max_value=today())
# (pattern, date order, whether day and month are both numbers before the year)
PATTERNS = [("%m/%d/%Y", "MDY", True), ("%d.%m.%Y", "DMY", True), ("%d-%m-%Y", "DMY", True),
            ("%Y-%m-%d", "MDY", False), ("%Y-%m-%d", "DMY", False), ("%Y/%m/%d", "DMY", False),
            ("%Y%m%d", "MDY", False), ("%Y%m%d", "DMY", False), ("%B %d, %Y", "DMY", False),
            ("%d %b %Y", "MDY", False), ("%A, %d %B %Y", "MDY", False)]


# Source: Python stdlib strftime (C locale) writes the dates; each must come back.
@settings(max_examples=300, deadline=None)
@given(day=PLAUSIBLE, pattern=st.sampled_from(PATTERNS))
def test_dates_written_by_strftime_come_back(day, pattern):
    form, order, numeric = pattern
    body = cleaner.clean({"birth_date": day.strftime(form)},
                         {"date_order": order, "reference_date": REFERENCE_DATE})
    record = body["record"]["birth_date"]
    assert record["value"] == day.isoformat() and record["valid"] is True
    swapped = dt.date(day.year, day.day, day.month) if numeric and day.day <= 12 else day
    assert record["alternatives"] == ([swapped.isoformat()] if swapped != day
                                      and swapped <= today() else [])


# Source: Python stdlib strftime; %y loses the century, which comes back for
# dates within a hundred years before the reference date.
@settings(max_examples=200, deadline=None)
@given(day=st.dates(min_value=dt.date(1926, 12, 3), max_value=today()),
       pattern=st.sampled_from([("%m/%d/%y", "MDY"), ("%d/%m/%y", "DMY"), ("%y%m%d", "YMD")]))
def test_two_digit_years_written_by_strftime_come_back(day, pattern):
    form, order = pattern
    body = cleaner.clean({"birth_date": day.strftime(form)},
                         {"date_order": order, "reference_date": REFERENCE_DATE})
    assert body["record"]["birth_date"]["value"] == day.isoformat()


@settings(max_examples=200, deadline=None)
@given(day=st.dates(min_value=dt.date(1, 1, 1), max_value=dt.date(9999, 12, 31)))
def test_the_iso_fast_path_agrees_with_the_general_reader(day):
    options = {"reference_date": REFERENCE_DATE}
    fast = cleaner.clean({"birth_date": day.isoformat()}, options)["record"]["birth_date"]
    general = cleaner.clean({"birth_date": f"{day.year:04d}/{day.month}/{day.day}"},
                            options)["record"]["birth_date"]
    assert fast == general


# ---- the rules are data --------------------------------------------------------------

def edit_dates_toml(folder, old, new):
    edit_rules(folder, "dates.toml", old, new)


def test_a_new_word_in_the_table_is_read(rules_copy):
    edit_dates_toml(rules_copy, '["february", "feb", "febrero"]',
                    '["february", "feb", "febrero", "février", "fevereiro"]')
    rules = engine.load_rules(rules_copy)
    for value in ["3 février 1980", "3 de fevereiro de 1980"]:
        body = cleaner.clean({"birth_date": value}, {"reference_date": REFERENCE_DATE}, rules=rules)
        assert body["record"]["birth_date"]["value"] == "1980-02-03"


def test_the_maximum_age_comes_from_the_table(rules_copy):
    edit_dates_toml(rules_copy, "max_age = 120", "max_age = 100")
    rules = engine.load_rules(rules_copy)
    body = cleaner.clean({"birth_date": "1920-06-01"}, {"reference_date": REFERENCE_DATE},
                         rules=rules)
    assert "dates.over_max_age" in field_codes(body, "birth_date")[1]


@pytest.mark.parametrize("old, new, message", [
    ('filler_words = ["de"', 'filler_words = ["mar", "de"', "repeats the word 'mar'"),
    ('filler_words = ["de"', 'filler_words = ["Sábado", "de"', "repeats the word 'sabado'"),
    ('["may", "mayo"],', "", "month_names"),
    ('filler_words = ["de"', 'filler_words = ["d.e", "de"', "letters only"),
    ('separators = " /-.,"', 'separators = " /x"', "separators"),
    ("max_age = 120", "max_age = 0", "max_age"),
    ('"2099-12-31"]', '"2099-12-32"]', "placeholders"),
])
def test_a_broken_dates_table_stops_start_up(rules_copy, old, new, message):
    edit_dates_toml(rules_copy, old, new)
    with pytest.raises(RulesError, match=message):
        engine.load_rules(rules_copy)


def test_the_age_limit_on_a_leap_day_reference(clean):
    """On 2028-02-29 a person born 1907-02-28 turned 121 the day before; one born 1907-03-01 is 120."""
    over = clean({"birth_date": "1907-02-28"}, reference_date="2028-02-29")
    within = clean({"birth_date": "1907-03-01"}, reference_date="2028-02-29")
    assert "dates.over_max_age" in field_codes(over, "birth_date")[1]
    assert "dates.over_max_age" not in field_codes(within, "birth_date")[1]
