"""Shared fixtures, and the bookkeeping behind the reasons coverage check:
every code listed in rules/ must be emitted by at least one test."""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import strategies as st

import cleaner
from cleaner import engine
from cleaner.rules import default_directory
from cleaner.trail import Trail

REFERENCE_DATE = "2026-12-02"
EMITTED: set[str] = set()


def _record_codes(method):
    def wrapper(self, *args, **kwargs):
        before = len(self.changes), len(self.flags)
        result = method(self, *args, **kwargs)
        EMITTED.update(c["reason"] for c in self.changes[before[0]:])
        EMITTED.update(f["code"] for f in self.flags[before[1]:])
        return result
    return wrapper


Trail.apply = _record_codes(Trail.apply)
Trail.flag = _record_codes(Trail.flag)


@pytest.fixture(scope="session")
def rules():
    return engine.default_rules()


@pytest.fixture
def rules_copy(tmp_path):
    """A writable copy of the embedded rules folder."""
    target = tmp_path / "rules"
    shutil.copytree(default_directory(), target)
    return target


def edit_rules(folder, name, old, new):
    """Replace the first `old` in rules file `name` of `folder` with `new`."""
    path = folder / name
    content = path.read_text(encoding="utf-8")
    assert old in content
    path.write_text(content.replace(old, new, 1), encoding="utf-8")


@pytest.fixture
def clean():
    """cleaner.clean with a fixed reference date, options as keywords."""
    def run(record, **options):
        options.setdefault("reference_date", REFERENCE_DATE)
        return cleaner.clean(record, options)
    return run


def field_codes(body, field):
    """(change reasons, flag codes) recorded for one field of a response."""
    return ([c["reason"] for c in body["changes"] if c["field"] == field],
            [f["code"] for f in body["flags"] if f["field"] == field])


def assert_formed_text_is_tidy(values, record):
    """Every value the service formed is non-empty text without outer or
    double spaces; a value that could not be cleaned is exactly what was sent."""
    for value in values:
        if value is not None and value not in record.values():
            assert value and value == value.strip() and "  " not in value, value


def today() -> dt.date:
    return dt.date.fromisoformat(REFERENCE_DATE)


def pytest_collection_modifyitems(session, config, items):
    """Run the reasons coverage check last, after every other test has emitted its codes."""
    last = [item for item in items if item.get_closest_marker("after_all")]
    items[:] = [item for item in items if item not in last] + last
    config.whole_suite_selected = not (config.getoption("keyword") or config.getoption("markexpr")
                                       or config.getoption("lf") or config.getoption("deselect")) \
        and all(arg.rstrip("/").endswith("tests") for arg in config.args)


def pytest_configure(config):
    config.addinivalue_line("markers", "after_all: run after every other collected test")


# A record of distinctive invented values: none may reach a log line, a metric
# or a problem body.
SECRETS = {"ssn": "219-45-0172", "email": "zephyrine.quillfeather@clinic-mail.org",
           "sex": "Zorblax", "birth_date": "1931-07-19", "phone": "(217) 555-0188",
           "mother_maiden_name": "Ravensworth", "name": "QUILLFEATHER, ZEPHYRINE \"ZEPH\" MD",
           "address": "77 Wexley Harbor Rd Bldg 3, Cobblestone, VA 22401"}


def secret_fragments() -> list[str]:
    """Each value of SECRETS, and the forms cleaning makes of them."""
    return [*SECRETS.values(), "219450172", "Quillfeather", "5550188", "Zephyrine", "ZEPH",
            "Q413", "WEXLEY", "22401", "COBBLESTONE"]


# Any JSON value (no NaN or infinity, which JSON has not), nested a little.
def fuzz_examples(default: int) -> int:
    """Examples for a property or fuzz test: `default` in make test, and
    CLEANER_FUZZ_EXAMPLES (or a share of it) in make fuzz."""
    return int(os.environ.get("CLEANER_FUZZ_EXAMPLES", default))


json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(), lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(), inner,
                                                                             max_size=4),
    max_leaves=12)


# --- a running `cleaner serve` -----------------------------------------------------

COMMAND = [sys.executable, "-m", "cleaner.cli"]
WORKERS = 2
STOP_SECONDS = 30.0


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def wait_until_up(url: str, process: subprocess.Popen, seconds: float = 60) -> None:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise AssertionError(f"the service exited with {process.returncode}")
        try:
            with urllib.request.urlopen(url, timeout=2):
                return
        except OSError:
            time.sleep(0.2)
    raise AssertionError("the service did not come up")


@contextlib.contextmanager
def serving(folder: Path, *options: str) -> Iterator[tuple[subprocess.Popen, int, Path]]:
    """`cleaner serve` with WORKERS workers on a free loopback port, up and
    answering: (its process, its port, its log file)."""
    port = free_port()
    log = folder / "service.log"
    with log.open("wb") as sink:
        # The log goes to a file: a pipe nobody reads fills up and stalls the
        # workers. Its own session lets teardown reach workers a fault left behind.
        process = subprocess.Popen([*COMMAND, "serve", "--port", str(port),
                                    "--workers", str(WORKERS), *options],
                                   stdout=sink, stderr=subprocess.STDOUT, start_new_session=True)
    try:
        wait_until_up(f"http://127.0.0.1:{port}/healthz", process)
        yield process, port, log
    finally:
        if process.poll() is None:
            # Stopped, not killed: a killed master leaves its metrics folder behind.
            process.terminate()
            with contextlib.suppress(subprocess.TimeoutExpired):
                process.wait(timeout=STOP_SECONDS)
        with contextlib.suppress(ProcessLookupError):
            os.killpg(process.pid, signal.SIGKILL)   # whatever a fault left running
        process.wait(timeout=STOP_SECONDS)
