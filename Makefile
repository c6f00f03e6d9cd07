# linktriage: set-up and checks. `make demo` and `make test` are all a newcomer needs.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test check lint typecheck unit golden bench model clean

$(STAMP): pyproject.toml constraints.txt
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -c constraints.txt -e '.[test]'
	touch $(STAMP)

## demo: set up, then show the whole job on the built-in demo network
demo: $(STAMP)
	$(BIN)/linktriage demo

## test: set up, then run every check (format, lint, types, tests)
test: check

check: lint typecheck unit

lint: $(STAMP)
	$(BIN)/ruff format --check .
	$(BIN)/ruff check .

typecheck: $(STAMP)
	$(BIN)/mypy src

unit: $(STAMP)
	$(BIN)/pytest

## golden: rewrite the golden Block Kit messages in fixtures/golden/ (review their diff after)
golden: $(STAMP)
	LINKTRIAGE_UPDATE_GOLDEN=1 $(BIN)/pytest tests/test_golden_blocks.py

## bench: throughput, model quality, sweep, SNMP walk, store growth and Prometheus round
## benchmarks (prints their figures with their targets)
bench: $(STAMP)
	$(BIN)/python bench/diagnose_throughput.py
	$(BIN)/python bench/model_quality.py
	$(BIN)/python bench/sweep_restconf.py
	$(BIN)/python bench/walk_snmp.py
	$(BIN)/python bench/store_growth.py
	$(BIN)/python bench/prometheus_round.py

## model: rebuild the packaged model from the simulated prior, on numpy's AVX2 paths so that
## every x86-64 machine rebuilds it bit for bit (AVX-512 rounds exp and log differently)
model: $(STAMP)
	NPY_DISABLE_CPU_FEATURES="X86_V4 AVX512_ICL AVX512_SPR" $(BIN)/linktriage train --out src/linktriage/engine/model/default.json

clean:
	rm -rf $(VENV) .pytest_cache .mypy_cache .ruff_cache
