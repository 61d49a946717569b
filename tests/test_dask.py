"""cleaner.dask on a local distributed cluster of two worker processes gives
exactly what `cleaner clean` gives on the same file."""

from __future__ import annotations

import csv
import subprocess
import sys

import pytest

from conftest import REFERENCE_DATE

distributed = pytest.importorskip("distributed")
dd = pytest.importorskip("dask.dataframe")

ROWS = 400


def extract(path):
    names = ["QUILLFEATHER, ROWAN J", "Elspeth Hartwell", "maria lopez garcia", "BABY GIRL JONES",
             'William "Bill" Brackwater Jr', "WANG Xiaoming", "=cmd", "Odile Penwarden"]
    streets = ["12 north elm street apt 4b, springfield il 62704", "POB 12, Springfield IL 62701",
               "45 OAK ST EAST COBBLESTONE VA 22401", "HOMELESS", "Ten Old Mill Pkwy, Dunmorrow, TX 75201"]
    with path.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["MRN", "Patient Name", "DOB", "Sex", "Phone #", "Address"])
        for number in range(ROWS):
            writer.writerow([f"A-{number:04d}", names[number % len(names)],
                             ["02/03/80", "1980-02-03", "3/4/55", ""][number % 4],
                             ["F", "m", "U", ""][number % 4],
                             ["(217) 555-0142", "555-0199", ""][number % 3],
                             streets[number % len(streets)]])


@pytest.fixture(scope="module")
def client():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as connected:
        yield connected


def test_a_cluster_of_two_workers_gives_what_the_command_gives(tmp_path, client):
    from cleaner.dask import clean_frame

    source, target = tmp_path / "extract.csv", tmp_path / "cleaned.csv"
    extract(source)
    done = subprocess.run([sys.executable, "-m", "cleaner.cli", "clean", str(source), "-o",
                           str(target), "--jobs", "1", "--reference-date", REFERENCE_DATE],
                          capture_output=True, timeout=120)
    assert done.returncode == 0, done.stderr
    with target.open(encoding="utf-8", newline="") as handle:
        expected = list(csv.reader(handle))

    frame = dd.read_csv(str(source), dtype=str, keep_default_na=False, blocksize=8_000)
    assert frame.npartitions >= 2
    cleaned = clean_frame(frame, {"reference_date": REFERENCE_DATE}).compute()
    assert list(cleaned.columns) == expected[0]
    assert cleaned.astype(str).values.tolist() == expected[1:]


def test_an_explicit_mapping_works_on_frames(client):
    import pandas as pd

    from cleaner.dask import clean_frame

    frame = dd.from_pandas(pd.DataFrame({"Apellido": ["QUILLFEATHER", "HARTWELL"]}),
                           npartitions=2)
    cleaned = clean_frame(frame, mapping={"family": "Apellido"}).compute()
    assert cleaned["clean_name_family"].tolist() == ["Quillfeather", "Hartwell"]
