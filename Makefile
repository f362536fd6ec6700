# Two commands do all the set-up on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test setup lint golden bench clean

$(STAMP): pyproject.toml
	@bash scripts/system-deps.sh
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[dev]"
	@touch $(STAMP)

setup: $(STAMP)

demo: $(STAMP)
	$(BIN)/reportgen demo -o demo-output --jobs 2

test: $(STAMP)
	$(BIN)/python -m pytest -q

lint: $(STAMP)
	$(BIN)/ruff check reportgen tests scripts benchmarks
	$(BIN)/mypy
	$(BIN)/lint-imports --no-cache

golden: $(STAMP)
	$(BIN)/python scripts/regenerate_golden.py

bench: $(STAMP)
	$(BIN)/python benchmarks/bench_scoring.py
	$(BIN)/python benchmarks/bench_metad.py
	$(BIN)/python benchmarks/bench_render.py

clean:
	rm -rf $(VENV) demo-output
