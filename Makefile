# Two commands set everything up on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test lint bench bench-seconds clean-venv

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/pumpscreen scan configs/demo_plant.toml --out reports/demo

test: $(STAMP)
	$(BIN)/python -m pytest -q

lint: $(STAMP)
	$(BIN)/ruff check screening tests benchmarks demo_exports
	$(BIN)/ruff format --check screening tests benchmarks demo_exports

# The scan benchmark at full size (500 pumps x 30 days of one-minute data): every measure run
# three times, median and least printed with the machine and its load (docs/scale.md). Takes
# 2-3 minutes (104-180 s on the project's shared 2-core machine, 2026-12-03 16:43-16:59 UTC,
# the longest in a slow spell; most of it the naive CoolProp loop and the command line), and
# 10 s more the first time (it builds the synthetic plant under benchmarks/_data/).
# `--repeat 1` for a third of that.
bench: $(STAMP)
	$(BIN)/python benchmarks/bench_scan.py

clean-venv:
	rm -rf $(VENV)

# One-second data (docs/scale.md, "One-second data"): 50 pumps x 30 days at 1 s on 2 cores, a
# pump-year through scan and onset within 1 GB, chunked tables against one piece; three runs
# of each. Takes 3-6 minutes (3 min 15 s on 2026-12-03), and about 1.5 minutes and 1.3 GB of disk more the first time
# (it builds the plants under benchmarks/_data/). `--runs 1` for a third of that.
bench-seconds: $(STAMP)
	$(BIN)/python benchmarks/bench_seconds.py
