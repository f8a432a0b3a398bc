# plantdb: the two set-up commands are `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
DEMO_DB := demo/quillmere.sqlite

.PHONY: demo test lint typecheck unit install bench docs clean

$(BIN)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e ".[test]"
	touch $@

install: $(BIN)/.installed

# Build a fresh embedded database with the invented demo town and serve it at
# http://127.0.0.1:5000 (the map, the pages, the JSON API) until Ctrl+C.
demo: install
	mkdir -p demo
	rm -f $(DEMO_DB) $(DEMO_DB)-wal $(DEMO_DB)-shm
	$(BIN)/plantdb init --db sqlite:///$(DEMO_DB)
	$(BIN)/plantdb demo --db sqlite:///$(DEMO_DB)
	$(BIN)/plantdb serve --db sqlite:///$(DEMO_DB)

lint: install
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .

typecheck: install
	$(BIN)/mypy

# Lint, type checks and the whole suite. PostgreSQL tests run when PLANTDB_TEST_POSTGRES_URL
# is set (CI sets it and PLANTDB_REQUIRE_POSTGRES=1, so a missing server fails loudly).
test: lint typecheck
	$(BIN)/pytest -n 2 --dist loadgroup

unit: install
	$(BIN)/pytest tests/unit -q

# Regenerate the command-line reference from the commands' own --help (tests/unit/test_docs.py
# fails while docs/cli.md is out of date).
docs: install
	$(BIN)/python docs/tools/cli_reference.py -o docs/cli.md

clean:
	rm -rf $(VENV) demo .pytest_cache .mypy_cache .ruff_cache .hypothesis
