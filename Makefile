PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test lint env clean bench

$(STAMP): pyproject.toml
	$(PY) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e ".[test]"
	touch $(STAMP)

env: $(STAMP)

demo: $(STAMP)
	$(BIN)/bayes demo --out demo-output

lint: $(STAMP)
	$(BIN)/ruff check bayes elicit tests benchmarks
	$(BIN)/ruff format --check bayes elicit tests benchmarks

test: $(STAMP) lint
	$(BIN)/python -m pytest

bench: $(STAMP)
	$(BIN)/python benchmarks/run.py

clean:
	rm -rf $(VENV) demo-output
