"""schemathesis against openapi.yaml on a running `cleaner serve`: requests
generated from the document (and requests that break it) never get a server
error, and every response matches the document: status, content type, headers
and body. `make test` runs a few examples per operation; `make fuzz` many."""

from __future__ import annotations

from pathlib import Path

import pytest
import schemathesis
from schemathesis import GenerationMode
from hypothesis import HealthCheck, given, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (content_type_conformance,
                                               response_headers_conformance,
                                               response_schema_conformance,
                                               status_code_conformance)

from conftest import fuzz_examples, serving

SPEC_PATH = Path(__file__).parent.parent / "openapi.yaml"
EXAMPLES = fuzz_examples(30)
# What is checked of every answer. Not checked: that a request the document
# allows is accepted (the service also refuses what is well-shaped but unknown,
# a region "ZQ", with a 422 the document lists), nor that one it does not allow
# is refused (any bytes are a CSV body; a record may hold keys of its own).
CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance,
          response_headers_conformance, response_schema_conformance]


SCHEMA = schemathesis.openapi.from_path(SPEC_PATH)
OPERATIONS = [result.ok() for result in SCHEMA.get_all_operations()]


@pytest.fixture(scope="module")
def base_url(tmp_path_factory):
    with serving(tmp_path_factory.mktemp("served")) as (_, port, _):
        yield f"http://127.0.0.1:{port}"


# Requests that break the document, for the operations that take something to break.
CASES = [(operation, mode) for operation in OPERATIONS for mode in GenerationMode
         if mode is GenerationMode.POSITIVE or operation.body or operation.query]


@pytest.mark.parametrize("operation, mode", CASES,
                         ids=[f"{operation.label} {mode.value}" for operation, mode in CASES])
def test_the_running_service_keeps_its_contract(base_url, operation, mode):
    """Positive requests follow the document; negative ones break it, and must
    be refused with a documented problem."""
    @given(case=operation.as_strategy(generation_mode=mode))
    @settings(max_examples=EXAMPLES, deadline=None, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
    def call(case):
        sent.append(case)
        case.call_and_validate(base_url=base_url, timeout=30, checks=CHECKS)
    sent: list = []
    call()
    print(f"\n{operation.label}, {mode.value}: {len(sent)} requests generated and checked")
