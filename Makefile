# presscycle: `make run` serves the app, `make test` runs every test. Both set up .venv.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
HOST   ?= 127.0.0.1
PORT   ?= 8000

.PHONY: run test lint bench bench-store clean browser postgresql

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet --disable-pip-version-check -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/pip install --quiet --disable-pip-version-check -e '.[test]'
	touch $(VENV)/.installed $@

run: $(VENV)/.installed
	$(BIN)/uvicorn --factory server.app:create_app --host $(HOST) --port $(PORT)

# Debian's Chromium for the browser tests (playwright drives it; its own browser download
# does not work here). Installed when missing and we may install packages.
browser:
	@command -v chromium >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ]; then SUDO=; elif command -v sudo >/dev/null 2>&1; then SUDO=sudo; else SUDO=none; fi; \
	  if [ "$$SUDO" = none ]; then echo "chromium is missing and cannot be installed: browser tests will skip (fail in CI)"; \
	  else echo "installing Debian's chromium for the browser tests"; \
	    $$SUDO apt-get update -qq && DEBIAN_FRONTEND=noninteractive $$SUDO apt-get install -y -qq chromium >/dev/null; fi; }

# Debian's PostgreSQL server for the store tests (each run starts a throwaway server: initdb
# in a temporary folder, a Unix socket, a random port). Installed when missing and we may.
postgresql:
	@{ command -v initdb >/dev/null 2>&1 || ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1; } || { \
	  if [ "$$(id -u)" = 0 ]; then SUDO=; elif command -v sudo >/dev/null 2>&1; then SUDO=sudo; else SUDO=none; fi; \
	  if [ "$$SUDO" = none ]; then echo "postgresql is missing and cannot be installed: PostgreSQL tests will skip (fail in CI)"; \
	  else echo "installing Debian's postgresql for the store tests"; \
	    $$SUDO apt-get update -qq && DEBIAN_FRONTEND=noninteractive $$SUDO apt-get install -y -qq postgresql >/dev/null; fi; }

test: $(VENV)/.installed-test browser postgresql
	$(BIN)/python -m pytest

lint: $(VENV)/.installed-test
	$(BIN)/ruff check server tests bench

bench: $(VENV)/.installed-test
	$(BIN)/python bench/run.py
	$(BIN)/python bench/server_cpu.py
	$(BIN)/python bench/presslog.py

# 100,000 saved scenarios on SQLite and on a throwaway PostgreSQL: size, list, search, save
bench-store: $(VENV)/.installed-test postgresql
	$(BIN)/python bench/store_scale.py

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis
