"""The `cleaner clean` command's work on a file: read CSV, NDJSON or a JSON
array, clean every record with the batch core in order, in one process or
several, and write the same kind of file, with a progress line on a terminal
and an optional HTML report. Memory stays flat: rows stream through in
chunks, and only a few chunks per worker are ever in flight."""

from __future__ import annotations

import io
import json
import time
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from itertools import islice
from pathlib import Path
from typing import Any, BinaryIO, TextIO

from cleaner import batch
from cleaner.engine import default_rules
from cleaner.options import Options

FORMATS = {".csv": "csv", ".ndjson": "ndjson", ".jsonl": "ndjson", ".json": "json"}
CHUNK_ROWS = 500
IN_FLIGHT_PER_JOB = 3
EXAMPLES_PER_FLAG = 3


@dataclass
class Job:
    """Everything a worker needs to clean chunks, picklable. Workers read the
    rules CLEANER_RULES_DIR names (or the embedded ones), once each."""
    options: Options
    explicit: dict[str, str] = field(default_factory=dict)


_worker: dict[str, Any] = {}


def _start_worker(job: Job) -> None:
    _worker["job"], _worker["rules"] = job, default_rules()


def _csv_chunk(chunk: list[tuple[str, str, bool]], mapping: dict[int, str],
               width: int, terminator: str) -> list[tuple[str, batch.Digest]]:
    job, rules = _worker["job"], _worker["rules"]
    columns = batch.cleaned_columns(mapping)
    lines = []
    for text, row_terminator, fell_back in chunk:
        # Cells are read here, in the worker: the process that reads the file
        # is the one a run with several jobs waits on.
        cells = batch.row_cells(text)
        result = batch.clean_row(cells, text, fell_back, width, mapping, job.options, rules)
        lines.append((batch.row_line(text, row_terminator or terminator, cells, width, result,
                                     columns, rules), batch.digest(result)))
    return lines


def _record_chunk(chunk: list[tuple[int, Any, str]]) -> list[tuple[str, batch.Digest | None]]:
    job, rules = _worker["job"], _worker["rules"]
    out = []
    for index, record, _ in chunk:
        result = batch.clean_one(index, record, job.options, rules)
        out.append((json.dumps(result, ensure_ascii=False),
                    None if "error" in result else batch.digest(result)))
    return out


def _chunks(items: Iterable[Any], size: int) -> Iterator[list[Any]]:
    iterator = iter(items)
    while chunk := list(islice(iterator, size)):
        yield chunk


def ordered_map(work: Callable, chunks: Iterable[list], job: Job, jobs: int,
                *args: Any) -> Iterator[Any]:
    """work(chunk, *args) over the chunks, results in input order; with more
    than one job, in worker processes, at most a few chunks each in flight."""
    if jobs <= 1:
        _start_worker(job)
        for chunk in chunks:
            yield work(chunk, *args)
        return
    with ProcessPoolExecutor(jobs, initializer=_start_worker, initargs=(job,)) as pool:
        pending: deque = deque()
        for chunk in chunks:
            pending.append(pool.submit(work, chunk, *args))
            if len(pending) >= jobs * IN_FLIGHT_PER_JOB:
                yield pending.popleft().result()
        while pending:
            yield pending.popleft().result()


class Progress:
    """Rows done, rows per second and time left, on one line of a terminal."""

    def __init__(self, stream: TextIO, total_bytes: int | None, counted: Callable[[], int]):
        self.stream, self.total, self.counted = stream, total_bytes, counted
        self.active = stream.isatty()
        self.start = self.last = time.monotonic()

    def update(self, rows: int, final: bool = False) -> None:
        now = time.monotonic()
        if not self.active or (now - self.last < 0.5 and not final):
            return
        self.last = now
        elapsed = max(now - self.start, 1e-9)
        line = f"\r{rows:,} rows  {rows / elapsed:,.0f} rows/s"
        done = self.counted()
        if self.total and done:
            left = elapsed * (self.total - done) / done
            line += f"  {min(done / self.total, 1):.0%}  {left:,.0f} s left"
        self.stream.write(line + ("\n" if final else ""))
        self.stream.flush()


class CountingReader(io.RawIOBase):
    """A binary stream that counts the bytes read, for the progress line."""

    def __init__(self, raw: BinaryIO):
        self.raw, self.count = raw, 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        data = self.raw.read(len(buffer))
        buffer[:len(data)] = data
        self.count += len(data)
        return len(data)


@dataclass
class Outcome:
    summary: batch.Summary
    examples: dict[str, list[str]]   # flag code -> the first rows that raised it


def run(source: BinaryIO, sink: TextIO, fmt: str, job: Job, jobs: int,
        progress: Progress | None = None) -> Outcome:
    summary = batch.Summary()
    examples: dict[str, list[str]] = {}

    def account(rows: Iterable[tuple[str, batch.Digest | None]],
                originals: Iterable[str]) -> Iterator[str]:
        for (line, row_digest), original in zip(rows, originals):
            summary.add_digest(row_digest)
            for code in dict.fromkeys(row_digest.flags if row_digest else ()):
                if len(examples.setdefault(code, [])) < EXAMPLES_PER_FLAG:
                    examples[code].append(original)
            if progress:
                progress.update(summary.rows)
            yield line

    lines = batch.text_lines(source)
    if fmt == "csv":
        reader = batch.CsvReader(lines)
        mapping = batch.map_columns(reader.header, job.explicit, default_rules()["batch"])
        header = batch.CsvJob(reader, mapping, batch.cleaned_columns(mapping)).header_line()
        sink.write(header)
        width = len(reader.header)
        for chunk, results in _paired(_chunks(reader.records(), CHUNK_ROWS), _csv_chunk, job, jobs,
                                      mapping, width, reader.terminator):
            sink.writelines(account(results, (row[0] for row in chunk)))
    else:
        records = _records(lines, fmt)
        if fmt == "json":
            sink.write("[")
        first = True
        for chunk, results in _paired(_chunks(records, CHUNK_ROWS), _record_chunk, job, jobs):
            for line in account(results, (original for _, _, original in chunk)):
                if fmt == "json":
                    sink.write(("\n" if first else ",\n") + line)
                else:
                    sink.write(line + "\n")
                first = False
        if fmt == "json":
            sink.write("\n]\n")
    if progress:
        progress.update(summary.rows, final=True)
    return Outcome(summary, examples)


def _paired(chunks: Iterable[list], work: Callable, job: Job, jobs: int,
            *args: Any) -> Iterator[tuple[list, list]]:
    """Each chunk with its results; chunks are kept until their results come back."""
    kept: deque = deque()

    def keeping() -> Iterator[list]:
        for chunk in chunks:
            kept.append(chunk)
            yield chunk
    for results in ordered_map(work, keeping(), job, jobs, *args):
        yield kept.popleft(), results


def _records(lines: Iterable[tuple[str, bool]], fmt: str) -> Iterator[tuple[int, Any, str]]:
    """(index, record, its text) of NDJSON lines or of a JSON array (or of its
    `records` member); a line that is not JSON comes back as an error line."""
    if fmt == "json":
        document = batch.parse_line("".join(line for line, _ in lines) or "[]")
        records = document.get("records", []) if isinstance(document, dict) else document
        for index, record in enumerate(records if isinstance(records, list) else [records]):
            yield index, record, "" if isinstance(record, batch.NotJson) else json.dumps(record)
        return
    for index, (line, _) in enumerate(lines):
        yield index, batch.parse_line(line), line.rstrip("\r\n")


def detect_format(path: str, given: str | None) -> str:
    if given:
        return given
    suffix = Path(path).suffix.lower()
    if suffix not in FORMATS:
        raise ValueError(f"cannot tell the format of {path!r}: name it with --format")
    return FORMATS[suffix]
