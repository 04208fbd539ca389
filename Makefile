# Two commands for a newcomer: `make run` and `make test`.
PYTHON ?= python3
VENV ?= .venv
BIN := $(VENV)/bin
export FLASK_APP := wsgi.py
HOST ?= 127.0.0.1
PORT ?= 5000

.PHONY: run test install install-test demo bench wheel clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml $(VENV)/.installed
	$(BIN)/pip install --quiet -e '.[test,bench]'
	touch $@

install: $(VENV)/.installed

install-test: $(VENV)/.installed-test

## Create the venv, install, migrate the SQLite database, load the demo lab if empty, serve.
run: install
	$(BIN)/flask db upgrade
	$(BIN)/flask demo load --if-empty
	$(BIN)/flask demo logins
	$(BIN)/flask run --host $(HOST) --port $(PORT)

## Install the test needs and run every test (PostgreSQL and browser tests skip when absent).
test: install-test
	$(BIN)/ruff check models webapp tests bench migrations wsgi.py
	$(BIN)/lint-imports
	$(BIN)/python -m pytest -q

## Print the performance table (issue-sized synthetic lab; see README).
bench: install-test
	$(BIN)/python -m bench

## Build the installable wheel into dist/ (the app, its domain and its migrations).
wheel: install
	$(BIN)/pip wheel --quiet --no-deps --wheel-dir dist .

clean:
	rm -rf $(VENV) instance .pytest_cache .hypothesis build dist
