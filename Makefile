# tripsim: two commands on a fresh machine with Python 3.11 — `make demo` and `make test`.
PYTHON ?= $(shell command -v python3.11 || command -v python3)
VENV   ?= .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test lint bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/tripsim demo --out demo_out

test: $(STAMP)
	$(BIN)/ruff check tripsim tests routes_demo
	$(BIN)/lint-imports --no-cache
	$(BIN)/python -m pytest -q

lint: $(STAMP)
	$(BIN)/ruff check tripsim tests routes_demo
	$(BIN)/lint-imports --no-cache

bench: $(STAMP)
	$(BIN)/tripsim bench

clean:
	rm -rf $(VENV) demo_out .pytest_cache
