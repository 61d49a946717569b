"""Many records: POST /v1/clean/batch in its three formats, and the
`cleaner clean` command, end to end, with the awkward rows and encodings of
real extracts. Rows in are rows out, in order, original cells untouched."""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cleaner import batch
from cleaner.web import create_app
from conftest import REFERENCE_DATE
from test_http import Api

HEADER = "MRN,Last Name,First,DOB,Sex,Phone #,Home Phone,Street,City,ST,Zip,Note"
ROWS = [
    'A-001,QUILLFEATHER,ROWAN,02/03/80,F,(217) 555-0142,,12 north elm street apt 4b,Springfield,IL,62704,"says ""hi"", ok"',
    "",
    'A-002,"Hartwell, Jr",Elspeth,1980-02-03,M',
    'A-003,=HYPERLINK("x"),Ann,3/4/55,f,555-0199,217-555-0143,,Cobblestone,VA,22401,"two\r\nlines",surplus',
    "A-004,Brackwater,Odile,,,,,,,,,",
]
CSV_TEXT = "\r\n".join([HEADER, *ROWS]) + "\r\n"


@pytest.fixture(scope="module")
def api():
    return Api(create_app({"max_body_bytes": 64 * 1024, "max_batch_records": 5}))


def post_csv(api, body: bytes, query: str = ""):
    return api.call("POST", f"/v1/clean/batch?reference_date={REFERENCE_DATE}{query}",
                    data=body, content_type="text/csv")


def reply_rows(response) -> list[list[str]]:
    return list(csv.reader(io.StringIO(response.get_data(as_text=True), newline="")))


# --- CSV ---------------------------------------------------------------------------

def test_every_row_comes_back_in_order_with_its_own_text(api):
    response = post_csv(api, CSV_TEXT.encode())
    assert response.status_code == 200 and response.mimetype == "text/csv"
    text = response.get_data(as_text=True)
    lines = text.split("\r\n")
    assert lines[0].startswith(HEADER + ",clean_name_prefix,")
    for row in ROWS:
        if row:
            assert row in text   # the original cells, byte for byte
    rows = reply_rows(response)
    assert len(rows) == 1 + len(ROWS)
    width = len(rows[0])
    assert all(len(row) == width for row in rows[1:] if row[0] != "A-003")


def test_the_cleaned_cells_stand_under_their_names(api):
    rows = reply_rows(post_csv(api, CSV_TEXT.encode()))
    named = [dict(zip(rows[0], row)) for row in rows[1:]]
    first = named[0]
    assert (first["clean_name_given"], first["clean_name_family"]) == ("Rowan", "Quillfeather")
    assert first["clean_birth_date"] == "1980-02-03" and first["clean_sex"] == "female"
    assert first["clean_phones"] == "+12175550142"
    assert first["clean_address_line1"] == "12 N ELM ST" and first["clean_address_line2"] == "APT 4B"
    assert "dates.ambiguous" in first["clean_flags"].split()
    assert named[1]["clean_flags"] == "batch.blank_row"
    assert "batch.row_too_short" in named[2]["clean_flags"] and named[2]["clean_name_suffix"] == "Jr"


def test_a_row_with_too_many_cells_is_flagged_and_kept(api):
    rows = reply_rows(post_csv(api, CSV_TEXT.encode()))
    surplus = rows[4]
    assert surplus[:13] == ["A-003", '=HYPERLINK("x")', "Ann", "3/4/55", "f", "555-0199",
                            "217-555-0143", "", "Cobblestone", "VA", "22401", "two\r\nlines",
                            "surplus"]
    assert "batch.row_too_long" in surplus[-1].split()


# Source: OWASP, "CSV Injection": cells beginning with = + - @ tab or CR are neutralised.
def test_cleaned_cells_are_neutralised_against_formulas_originals_untouched(api):
    rows = reply_rows(post_csv(api, CSV_TEXT.encode()))
    header_width, surplus = HEADER.count(",") + 1, 1
    # The row has one cell too many, so its cleaned cells begin one cell later.
    named = dict(zip(rows[0][header_width:], rows[4][header_width + surplus:]))
    assert rows[4][1] == '=HYPERLINK("x")'
    assert named["clean_name_family"] == "'=HYPERLINK(\"x\")"
    assert "batch.formula_neutralised" in named["clean_changes"].split()
    assert named["clean_phones"].startswith("555-0199")   # two phone columns, one cell


@pytest.mark.parametrize("encoded", [
    CSV_TEXT.encode("utf-8-sig"), CSV_TEXT.encode("utf-16"),
], ids=["utf-8 with BOM", "utf-16 with BOM"])
def test_byte_order_marks(api, encoded):
    assert reply_rows(post_csv(api, encoded)) == reply_rows(post_csv(api, CSV_TEXT.encode()))


def test_bytes_that_are_not_utf8_are_read_as_windows_1252_and_flagged(api):
    body = "MRN,Last Name\nA-1,Mu\u00f1oz\nA-2,Quill\n".encode("cp1252")
    rows = reply_rows(post_csv(api, body))
    assert rows[1][1] == "Muñoz" and "batch.decoded_as_windows_1252" in rows[1][-1]
    assert "batch.decoded_as_windows_1252" not in rows[2][-1]


def test_an_explicit_mapping_overrides_the_header(api):
    body = b"Patient Ident,Apellido\nA-1,QUILLFEATHER\n"
    rows = reply_rows(post_csv(api, body, "&map.family=Apellido"))
    assert dict(zip(rows[0], rows[1]))["clean_name_family"] == "Quillfeather"


@pytest.mark.parametrize("query, pointer", [("&map.family=Nowhere", "/map/family"),
                                            ("&map.colour=Last%20Name", "/map"),
                                            ("&shoe_size=9", ""),
                                            ("&date_order=sideways", "/options/date_order")])
def test_a_bad_mapping_or_option_is_a_problem_before_any_row(api, query, pointer):
    response = post_csv(api, CSV_TEXT.encode(), query)
    assert response.status_code == 422
    assert pointer in [error["pointer"] for error in response.get_json()["errors"]]


def test_the_reply_streams_while_the_rows_are_read(rules):
    """The first reply line is written before the last input line is read."""
    read = []

    def lines():
        for line in [HEADER + "\n", *(f"A-{n},Quill\n" for n in range(1000))]:
            read.append(line)
            yield line, False
    reply = batch.csv_reply(batch.CsvJob.start(lines(), {}, rules), batch.Options(), rules)
    next(reply), next(reply)
    assert len(read) < 10


# --- NDJSON and JSON ---------------------------------------------------------------

def test_ndjson_gives_one_line_per_line_and_goes_on_after_a_bad_one(api):
    body = b'{"name": "SMITH, JOHN", "sex": "F"}\nnot json\n[1]\n{"birth_date": "02/03/80"}\n'
    response = api.call("POST", "/v1/clean/batch", data=body, content_type="application/x-ndjson")
    lines = [json.loads(line) for line in response.get_data(as_text=True).splitlines()]
    assert [line["index"] for line in lines] == [0, 1, 2, 3]
    assert lines[0]["record"]["name"]["family"] == "Smith"
    assert lines[1]["error"]["status"] == 400 and lines[2]["error"]["status"] == 422
    assert lines[3]["record"]["birth_date"]["value"] == "1980-02-03"


def test_json_gives_results_in_order_and_a_summary(api):
    response = api.call("POST", "/v1/clean/batch", json={
        "records": [{"sex": "F", "phone": "217-555-0142"}, "nope", {"sex": "x"}],
        "options": {"reference_date": REFERENCE_DATE}})
    body = response.get_json()
    assert [result["index"] for result in body["results"]] == [0, 1, 2]
    assert body["summary"] == {
        "rows": 3, "rows_changed": 1, "rows_flagged": 2, "errors": 1,
        "changes": {"sex.coded": 1, "phones.formatted_e164": 1},
        "flags": {"phones.fictional_range": 1, "sex.unrecognised": 1},
        "fill_rate": {"phones": pytest.approx(1 / 3, abs=1e-3), "sex": pytest.approx(2 / 3, abs=1e-3)}}


def test_a_json_batch_over_the_record_limit_is_too_large(api):
    response = api.call("POST", "/v1/clean/batch", json={"records": [{}] * 6})
    assert response.status_code == 413 and response.mimetype == "application/problem+json"


@pytest.mark.parametrize("body", [{"records": "x"}, {"records": [], "extra": 1}, []])
def test_a_json_batch_of_the_wrong_shape_is_refused(api, body):
    assert api.call("POST", "/v1/clean/batch", json=body).status_code == 422


def test_an_unknown_media_type_is_refused(api):
    response = api.call("POST", "/v1/clean/batch", data=b"x", content_type="text/plain")
    assert response.status_code == 415


# --- the command line ------------------------------------------------------------------

def run_cli(*args: str, stdin: bytes | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "cleaner.cli", "clean", *args,
                           "--reference-date", REFERENCE_DATE], input=stdin,
                          capture_output=True, timeout=120)


def test_the_command_cleans_a_csv_as_the_service_does(api, tmp_path):
    source, target = tmp_path / "in.csv", tmp_path / "out.csv"
    source.write_bytes(CSV_TEXT.encode())
    done = run_cli(str(source), "-o", str(target), "--jobs", "1")
    assert done.returncode == 0 and done.stderr == b""   # no progress line off a terminal
    assert target.read_bytes() == post_csv(api, CSV_TEXT.encode()).get_data()


def test_two_jobs_give_the_same_file_as_one(tmp_path):
    source = tmp_path / "in.csv"
    source.write_text(HEADER + "\n" + "".join(f"A-{n},QUILL{n % 7},ROWAN,0{n % 9 + 1}/03/80\n"
                                              for n in range(1500)), encoding="utf-8")
    outputs = []
    for jobs in ("1", "2"):
        target = tmp_path / f"out{jobs}.csv"
        assert run_cli(str(source), "-o", str(target), "--jobs", jobs).returncode == 0
        outputs.append(target.read_bytes())
    assert outputs[0] == outputs[1] and outputs[0].count(b"\n") == 1501


@pytest.mark.parametrize("fmt", ["ndjson", "json"])
def test_the_command_reads_and_writes_json_kinds(tmp_path, fmt):
    records = [{"name": "SMITH, JOHN"}, {"sex": "m"}]
    source = tmp_path / f"in.{fmt}"
    source.write_text("\n".join(map(json.dumps, records)) if fmt == "ndjson"
                      else json.dumps(records), encoding="utf-8")
    target = tmp_path / f"out.{fmt}"
    assert run_cli(str(source), "-o", str(target), "--jobs", "2").returncode == 0
    text = target.read_text(encoding="utf-8")
    results = [json.loads(line) for line in text.splitlines()] if fmt == "ndjson" \
        else json.loads(text)
    assert [result["index"] for result in results] == [0, 1]
    assert results[1]["record"]["sex"]["value"] == "male"


def test_the_command_reads_stdin_and_writes_stdout():
    done = run_cli("-", "-o", "-", "--format", "csv", stdin=b"Sex\nF\n")
    assert done.returncode == 0 and done.stdout.decode().splitlines()[1].startswith("F,female,")


def test_the_command_writes_a_self_contained_report(tmp_path):
    source, report = tmp_path / "in.csv", tmp_path / "report.html"
    source.write_bytes(CSV_TEXT.encode())
    assert run_cli(str(source), "-o", str(tmp_path / "o.csv"), "--report", str(report)).returncode == 0
    page = report.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "<svg" in page
    assert "src=" not in page and "href=" not in page and "<script" not in page
    assert "batch.row_too_long" in page and "=HYPERLINK(&quot;x&quot;)" in page
    assert "same patient" in page


@pytest.mark.parametrize("args, message", [
    (["--map", "family"], b"FIELD=COLUMN"), (["--map", "family=Nowhere"], b"/map/family"),
    (["--date-order", "sideways"], b"/date_order"), (["--format", "csv", "--country", "ZZ"], b"country"),
])
def test_the_command_says_what_is_wrong(tmp_path, args, message):
    source = tmp_path / "in.csv"
    source.write_bytes(CSV_TEXT.encode())
    done = run_cli(str(source), "-o", str(tmp_path / "o.csv"), *args)
    assert done.returncode == 2 and message in done.stderr and b"Traceback" not in done.stderr


def test_a_file_of_unknown_kind_needs_format(tmp_path):
    source = tmp_path / "in.txt"
    source.write_text("x")
    done = run_cli(str(source), "-o", "-")
    assert done.returncode == 2 and b"--format" in done.stderr


class Terminal(io.StringIO):
    def isatty(self):
        return True


def test_the_progress_line_shows_rows_rate_and_time_left_on_a_terminal_only():
    from cleaner.filejob import Progress

    screen = Terminal()
    progress = Progress(screen, total_bytes=1000, counted=lambda: 250)
    progress.update(500, final=True)
    assert "500 rows" in screen.getvalue() and "rows/s" in screen.getvalue()
    assert "25%" in screen.getvalue() and "s left" in screen.getvalue()
    quiet = io.StringIO()
    Progress(quiet, total_bytes=1000, counted=lambda: 250).update(500, final=True)
    assert quiet.getvalue() == ""


def test_lines_ended_by_cr_alone_are_rows(api):
    rows = reply_rows(post_csv(api, b"Last Name,First\rQUILLFEATHER,ROWAN\rHARTWELL,ELSPETH\r"))
    assert [row[:2] for row in rows[1:]] == [["QUILLFEATHER", "ROWAN"], ["HARTWELL", "ELSPETH"]]


# Found by fuzzing the reader. A quote inside a cell is a letter, as the csv
# module reads it; a quoted cell that never closes is no CSV, and the row it
# opens runs to the end of the file.
def test_a_row_that_is_not_csv_comes_back_as_it_was_and_flagged(api):
    body = b'Last Name,First\nQUILL"FEATHER,ROWAN\nBRACKWATER,ODILE\n"HARTWELL,ELSPETH\n'
    lines = post_csv(api, body).get_data(as_text=True).splitlines()
    assert len(lines) == 4
    assert lines[1].startswith('QUILL"FEATHER,ROWAN,,Rowan,,"Quill""feather",')
    assert lines[2].startswith("BRACKWATER,ODILE,,Odile,,Brackwater,")
    assert lines[3].startswith('"HARTWELL,ELSPETH,') and lines[3].endswith("batch.row_unreadable")


def test_a_header_that_is_not_csv_is_a_problem(api):
    response = post_csv(api, b'"Last Name,First\nQUILL,ROWAN\n')
    assert response.status_code == 422


# Any body a feed may send gets a documented answer, never a server error.
json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.text(max_size=12),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(
        st.sampled_from(["name", "address", "phone", "sex", "birth_date", "city", "x"]), inner,
        max_size=4), max_leaves=10)


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(records=st.lists(json_values, max_size=4), lines=st.lists(json_values, max_size=4))
def test_any_batch_gets_a_documented_answer(api, records, lines):
    response = api.call("POST", "/v1/clean/batch", json={"records": records})
    assert response.status_code == 200
    assert len(response.get_json()["results"]) == len(records)
    body = "\n".join(json.dumps(line) for line in lines).encode()
    # An empty stream's empty reply is right; openapi-core reads it as missing.
    response = api.call("POST", "/v1/clean/batch", data=body, content_type="application/x-ndjson",
                        documented=bool(lines))
    assert response.status_code == 200
    # NDJSON lines end at "\n" only: a value may hold U+0085 or U+2028, which splitlines() cuts at.
    assert response.get_data(as_text=True).count("\n") == len(lines)


def _json_module_reading(document):
    try:
        return batch.json.loads(document, parse_constant=batch._not_json)
    except (ValueError, RecursionError):
        return batch.NOT_JSON


_json_documents = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False) | st.text(),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=5), inner,
                                                                 max_size=4),
    max_leaves=12).map(json.dumps)


@settings(max_examples=400, deadline=None)
@given(document=_json_documents | _json_documents.map(str.encode) | st.text(max_size=30)
       | st.binary(max_size=30) | st.sampled_from(['"\\ud800"', "[" * 3000, '{"n": 1e400}']))
def test_the_fast_json_reader_reads_as_the_json_module_does(document):
    # orjson reads most documents; whatever it reads differently goes to the json module.
    fast, reference = batch.parse_line(document), _json_module_reading(document)
    assert repr(fast) == repr(reference) or fast is reference is batch.NOT_JSON
