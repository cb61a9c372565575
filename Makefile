# presscycle: `make run` serves the app, `make test` runs every test. Both set up .venv.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
HOST   ?= 127.0.0.1
PORT   ?= 8000

.PHONY: run test lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet --disable-pip-version-check -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet --disable-pip-version-check -e '.[test]'
	touch $(VENV)/.installed $@

run: $(VENV)/.installed
	$(BIN)/uvicorn server.app:app --host $(HOST) --port $(PORT)

test: $(VENV)/.installed-test
	$(BIN)/python -m pytest

lint: $(VENV)/.installed-test
	$(BIN)/ruff check server tests bench

bench: $(VENV)/.installed-test
	$(BIN)/python bench/run.py

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis
