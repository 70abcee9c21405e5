# lostwork: the two commands a new user needs are `make demo` and `make test`.
PYTHON ?= python3
VENV ?= .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed-stamp

.PHONY: demo test lint bench install clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[dev]'
	touch $(STAMP)

install: $(STAMP)

## Start the product with a demo plant on the embedded SQLite database.
demo: $(STAMP)
	$(BIN)/lostwork demo

## Run the whole test suite (pytest's "no tests collected", exit 5, is an error here too).
test: $(STAMP)
	$(BIN)/python -m pytest -q

lint: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .

bench: $(STAMP)
	$(BIN)/python bench/engine.py

clean:
	rm -rf $(VENV) .pytest_cache lostwork.db
