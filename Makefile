# Two commands do all the set-up: `make run` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
PIP_FLAGS := --quiet --disable-pip-version-check

.PHONY: run test test-fast test-postgres lint migrate demo clean bench

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(VENV)/.installed-run: pyproject.toml | $(BIN)/python
	$(BIN)/pip install $(PIP_FLAGS) -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/pip install $(PIP_FLAGS) -e '.[test]'
	touch $@ $(VENV)/.installed-run

## run: install, migrate, load the invented demo study into an empty database, serve on 127.0.0.1:8000
run: $(VENV)/.installed-run
	$(BIN)/tallyroom migrate
	$(BIN)/tallyroom load-demo
	$(BIN)/tallyroom serve

## test: install with the test extra and run every test layer
test: $(VENV)/.installed-test
	$(BIN)/ruff check app tests migrations bench
	$(BIN)/mypy
	$(BIN)/pytest

## test-fast: the pure likelihood layer only, without the heavy plugins
test-fast: $(VENV)/.installed-test
	PYTEST_DISABLE_PLUGIN_AUTOLOAD=1 $(BIN)/pytest -p hypothesis tests/likelihood

## test-postgres: every layer but the browser one, on a throwaway PostgreSQL cluster (needs
## Debian's postgresql package; the cluster is removed at the end, also on failure)
test-postgres: $(VENV)/.installed-test
	.ci/throwaway-postgres $(BIN)/pytest -q --ignore=tests/browser

lint: $(VENV)/.installed-test
	$(BIN)/ruff check app tests migrations bench

## bench: invented studies of 1,000, 10,000 and 50,000 scenarios, served and measured against
## issue 14's targets (BENCH_SIZES=1000,10000 to limit); not part of `make test`
bench: $(VENV)/.installed-test
	$(BIN)/python -m bench.run

## clean: remove the virtual environment and test output; never the data/ folder, which holds
## the database and its backups
clean:
	rm -rf $(VENV) test-artifacts
