PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
LINT_DIRS := $(wildcard bayes elicit tests benchmarks)

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
	$(BIN)/ruff check $(LINT_DIRS)
	$(BIN)/ruff format --check $(LINT_DIRS)

test: $(STAMP) lint
	$(BIN)/python -m pytest

bench: $(STAMP)
	$(BIN)/python benchmarks/run.py

clean:
	rm -rf $(VENV) demo-output
