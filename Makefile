# familywise: `make run` and `make test` each set up .venv from nothing (through `make install`).
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: install run test lint openapi validate bench fuzz load clean

install: $(STAMP)

$(STAMP): pyproject.toml clients/python/pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test]" -e ./clients/python
	touch $(STAMP)

run: install
	$(BIN)/familywise serve --host 127.0.0.1 --port 8000

test: install
	$(BIN)/ruff check service tests clients/python
	$(BIN)/python -m pytest

lint: install
	$(BIN)/ruff check service tests clients/python

openapi: install
	$(BIN)/familywise openapi --output openapi/openapi.json
	$(BIN)/python clients/python/tools/generate_models.py

validate: install
	$(BIN)/familywise validate

bench: install
	$(BIN)/python -m tests.benchmarks

fuzz: install
	FAMILYWISE_FUZZ_EXAMPLES=5000 $(BIN)/python -m pytest tests/fuzz -q

load: install
	$(BIN)/python -m tests.load

clean:
	rm -rf $(VENV) .pytest_cache .ruff_cache .hypothesis
