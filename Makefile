# `make run` and `make test` do all set-up on a fresh machine: they create
# .venv when it is missing and install the project into it.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
PIP    := $(BIN)/python -m pip install --quiet --disable-pip-version-check -c constraints.txt
HOST   ?= 127.0.0.1
PORT   ?= 8080

.PHONY: run test install check-rules bench soak fuzz

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(VENV)/.installed-run: $(BIN)/python pyproject.toml constraints.txt
	$(PIP) -e .
	touch $@

$(VENV)/.installed-test: $(VENV)/.installed-run
	$(PIP) -e '.[test,dask]'
	touch $@

install: $(VENV)/.installed-run

run: $(VENV)/.installed-run
	$(BIN)/cleaner serve --host $(HOST) --port $(PORT)

test: $(VENV)/.installed-test
	$(BIN)/python -m pytest

check-rules: $(VENV)/.installed-run
	$(BIN)/cleaner check-rules

# wrk (Debian's package) loads the HTTP benchmark when it can be installed;
# without it a bounded Python client does.
bench: $(VENV)/.installed-test
	command -v wrk >/dev/null || apt-get install -y -q wrk >/dev/null 2>&1 || true
	$(BIN)/python bench/run.py

# A minute of mixed traffic on cleaner serve: errors, latency, and whether the
# workers' memory holds steady (SOAK_SECONDS=15 make soak for a short run).
soak: $(VENV)/.installed-test
	$(BIN)/python bench/soak.py

# The contract and property tests with many more examples than make test runs.
fuzz: $(VENV)/.installed-test
	CLEANER_FUZZ_EXAMPLES=1000 $(BIN)/python -m pytest tests/test_contract_fuzz.py tests/test_properties.py \
		tests/test_fastlane.py tests/test_fhir.py tests/test_hl7v2.py
