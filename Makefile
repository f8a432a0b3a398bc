# plantdb: the two set-up commands are `make demo` and `make test`.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
DEMO_DB := demo/quillmere.sqlite

.PHONY: demo test lint typecheck unit install bench docs-cli clean

$(BIN)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e ".[test]"
	touch $@

install: $(BIN)/.installed

# Build a fresh embedded database with the invented demo town and run the main job on it.
demo: install
	mkdir -p demo
	rm -f $(DEMO_DB) $(DEMO_DB)-wal $(DEMO_DB)-shm
	$(BIN)/plantdb init --db sqlite:///$(DEMO_DB)
	$(BIN)/plantdb demo --db sqlite:///$(DEMO_DB)
	$(BIN)/plantdb summary --db sqlite:///$(DEMO_DB)

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

clean:
	rm -rf $(VENV) demo .pytest_cache .mypy_cache .ruff_cache .hypothesis
