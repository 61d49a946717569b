"""The `cleaner` command: the service under gunicorn, and the rules check."""

from __future__ import annotations

import http.client
import json
import re
import signal
import subprocess
import time
import urllib.request

import pytest

from cleaner.cli import main
from conftest import COMMAND, free_port, serving

@pytest.fixture
def service(tmp_path):
    with serving(tmp_path) as (process, port, _):
        yield process, f"http://127.0.0.1:{port}"


def test_serve_answers_and_stops_gracefully_on_sigterm(service):
    process, base = service
    request = urllib.request.Request(
        f"{base}/v1/clean", method="POST", headers={"Content-Type": "application/json"},
        data=json.dumps({"record": {"sex": "F", "email": "ruth.q@Example.org"}}).encode())
    with urllib.request.urlopen(request, timeout=10) as response:
        body = json.load(response)
    assert body["record"]["sex"]["value"] == "female"
    process.send_signal(signal.SIGTERM)
    assert process.wait(timeout=60) == 0


def test_serve_reads_a_chunked_body_whole(service):
    # Such a body has no Content-Length: the Flask app, not the fast lane, reads it.
    _, base = service
    parts = [b'{"record": {"sex": ', b'"F", "name": "Wren Penhallow"}}']
    connection = http.client.HTTPConnection(base.removeprefix("http://"), timeout=10)
    connection.request("POST", "/v1/clean", body=iter(parts), encode_chunked=True,
                       headers={"Content-Type": "application/json"})
    response = connection.getresponse()
    assert response.status == 200 and json.load(response)["record"]["sex"]["value"] == "female"
    connection.close()


def test_serve_sums_the_metrics_of_its_workers_and_sends_no_version(service):
    process, base = service
    body = json.dumps({"record": {"sex": "F"}}).encode()
    for _ in range(12):
        request = urllib.request.Request(f"{base}/v1/clean", data=body, method="POST",
                                         headers={"Content-Type": "application/json"})
        with urllib.request.urlopen(request, timeout=10) as response:
            assert response.headers["Cache-Control"] == "no-store"
            assert response.headers["X-Content-Type-Options"] == "nosniff"
            # The server may name itself, never its version.
            assert not any(ch.isdigit() for ch in response.headers.get("Server", ""))
    # Whichever worker answers a scrape reports both, once each has pushed its
    # counts (at most a second after its requests).
    deadline = time.monotonic() + 30
    while True:
        with urllib.request.urlopen(f"{base}/metrics", timeout=10) as response:
            counted = re.search(r'^cleaner_requests_total\{route="/v1/clean",status="200"\} (\S+)$',
                                response.read().decode(), re.M)
        if counted and counted[1] == "12.0" or time.monotonic() > deadline:
            break
        time.sleep(0.2)
    assert counted and counted[1] == "12.0"
    for _ in range(4):
        with urllib.request.urlopen(f"{base}/metrics", timeout=10) as response:
            assert 'cleaner_requests_total{route="/v1/clean",status="200"} 12.0' \
                in response.read().decode()


def test_serve_refuses_to_start_on_broken_rules(tmp_path):
    (tmp_path / "manifest.toml").write_text('version = "one"\n')
    completed = subprocess.run([*COMMAND, "serve", "--port", str(free_port())],
                               env={"CLEANER_RULES_DIR": str(tmp_path), "PATH": ""},
                               capture_output=True, text=True, timeout=60)
    assert completed.returncode == 2 and "cannot start" in completed.stderr


def test_check_rules_prints_the_version(capsys, rules):
    assert main(["check-rules"]) == 0
    assert rules.version in capsys.readouterr().out


def test_check_rules_reports_a_broken_folder(tmp_path, capsys):
    assert main(["check-rules", "--dir", str(tmp_path)]) == 1
    assert "not valid" in capsys.readouterr().err


@pytest.mark.parametrize("flag", ["--workers", "--timeout"])
def test_serve_refuses_a_count_below_one(flag, capsys):
    with pytest.raises(SystemExit):
        main(["serve", flag, "0"])
    assert "must be 1 or more" in capsys.readouterr().err
