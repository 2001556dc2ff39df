# `make demo` and `make test` work on a fresh machine: they create .venv and install
# the project into it first.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed-stamp
ROWS ?= 20000

.PHONY: setup demo test lint typecheck unit bench clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $(STAMP)

setup: $(STAMP)

demo: $(STAMP)
	$(BIN)/curate demo --rows $(ROWS) --out demo

test: lint typecheck unit

lint: $(STAMP)
	$(BIN)/ruff check curate tests benchmarks examples schemas

typecheck: $(STAMP)
	$(BIN)/mypy curate

unit: $(STAMP)
	OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 MKL_NUM_THREADS=1 $(BIN)/python -m pytest -n 2 --durations=15 curate tests

bench: $(STAMP)
	$(BIN)/python benchmarks/run_all.py

clean:
	rm -rf demo runs data .pytest_cache .mypy_cache .ruff_cache
