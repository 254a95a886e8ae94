# geomelt developer entry points. Every target builds or refreshes the project's own
# virtual environment in .venv, so a fresh clone needs nothing but python3 (>= 3.10).
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
DEMO_OUT ?= demo_output

.PHONY: venv demo test lint format sample-layers bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml $(wildcard geomelt/*/*.pyx) $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[dev]"
	touch $(STAMP)

venv: $(STAMP)

demo: $(STAMP)
	$(BIN)/geomelt run sample_layers/region.toml --out $(DEMO_OUT) --overwrite

test: $(STAMP)
	$(BIN)/ruff check geomelt processing_scripts tests
	$(BIN)/ruff format --check geomelt processing_scripts tests
	$(BIN)/python -m pytest -q

format: $(STAMP)
	$(BIN)/ruff check --fix geomelt processing_scripts tests
	$(BIN)/ruff format geomelt processing_scripts tests

bench: $(STAMP)
	$(BIN)/python processing_scripts/benchmark.py --sizes 4096 8192 --repeats 3 1 --out benchmark_output

sample-layers: $(STAMP)
	$(BIN)/python processing_scripts/make_sample_layers.py --out sample_layers

clean:
	rm -rf $(VENV) $(DEMO_OUT) .pytest_cache build *.egg-info
