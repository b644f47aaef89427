# Set-up and everyday commands. Needs only python3 (3.11+), pip and make.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
BASE   := $(VENV)/.installed-base
TESTS  := $(VENV)/.installed-test

.PHONY: demo test bench lint clean

demo: $(BASE)            ## install and run the main job on bundled data
	$(BIN)/cabletheory demo

test: $(TESTS)           ## install with test extras, lint, type-check the core, run every test (one worker per core)
	$(BIN)/ruff check cabletheory tests benchmarks worked scripts
	$(BIN)/mypy
	$(BIN)/python -m pytest -q -n auto --dist worksteal

bench: $(BASE)           ## speed figures against their goals, one table (ROWS="startup app" for some)
	$(BIN)/python benchmarks/run_all.py $(ROWS)

lint: $(TESTS)
	$(BIN)/ruff check cabletheory tests benchmarks worked scripts
	$(BIN)/mypy

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(BASE): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(TESTS): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $@ $(BASE)

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .hypothesis
