"""Every code the code base can emit is listed by GET /v1/reasons, and every
listed code is emitted by at least one test of this suite."""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

from cleaner.rules import CODE_PATTERN
from conftest import EMITTED

PACKAGE = Path(__file__).parent.parent / "cleaner"
# Where the code goes among the arguments of each method that records one
# (Trail.apply and .flag; the formats' Findings.write, .flag_at, .keep_as_sent).
CODE_ARGUMENT = {"apply": 1, "flag": 0, "write": 4, "flag_at": 1, "keep_as_sent": 1}


def code_literals(rules) -> dict[str, str]:
    """String literals in the package that have the shape of a code of a known kind."""
    kinds = {code.split(".")[0] for code in rules.reasons}
    found = {}
    for path in PACKAGE.rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Constant) and isinstance(node.value, str) \
                    and re.match(CODE_PATTERN, node.value) and node.value.split(".")[0] in kinds:
                found[node.value] = f"{path.name}:{node.lineno}"
    return found


def test_every_code_in_the_code_is_listed(rules):
    unlisted = {code: where for code, where in code_literals(rules).items()
                if code not in rules.reasons}
    assert unlisted == {}


def test_codes_are_never_built_at_run_time():
    """Codes are literals, so the check above sees them all: no f-string makes one."""
    for path in PACKAGE.rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if not (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute)):
                continue
            position = CODE_ARGUMENT.get(node.func.attr)
            if position is not None and len(node.args) > position:
                assert not isinstance(node.args[position], ast.JoinedStr), \
                    f"{path.name}:{node.lineno}"


@pytest.mark.after_all
def test_every_listed_code_is_emitted_by_some_test(request, rules):
    if not request.config.whole_suite_selected:
        pytest.skip("needs the whole suite: run `make test`")
    assert sorted(set(rules.reasons) - EMITTED) == []
