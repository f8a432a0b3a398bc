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

# The benchmark suite at a million strands, on the embedded SQLite database and then on the
# local PostgreSQL server (database plantdb_bench, created when missing). See
# docs/performance.md. Building each synthetic plant takes a few minutes the first time.
BENCH_POSTGRES_URL ?= postgresql+psycopg://postgres@127.0.0.1:5432/plantdb_bench
bench: install
	$(BIN)/plantdb bench --fibers 1000000
	psql -h 127.0.0.1 -U postgres -tc "SELECT 1 FROM pg_database WHERE datname = 'plantdb_bench'" postgres | grep -q 1 || psql -h 127.0.0.1 -U postgres -c "CREATE DATABASE plantdb_bench" postgres
	$(BIN)/plantdb bench --fibers 1000000 --db $(BENCH_POSTGRES_URL)

unit: install
	$(BIN)/pytest tests/unit -q

# Regenerate the command-line reference from the commands' own --help (tests/unit/test_docs.py
# fails while docs/cli.md is out of date).
docs: install
	$(BIN)/python docs/tools/cli_reference.py -o docs/cli.md

clean:
	rm -rf $(VENV) demo .pytest_cache .mypy_cache .ruff_cache .hypothesis
