# Two commands do all the set-up on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test setup lint golden bench clean

$(STAMP): pyproject.toml scripts/system-deps.sh tests/browser/package-lock.json
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

# The registry's reference meta-d′ fit (metadpy) is a benchmark-only dependency, kept out of the
# package: installed into .venv/bench-deps, never imported by reportgen.
BENCH_DEPS := $(VENV)/bench-deps

bench: $(STAMP)
	@test -d $(BENCH_DEPS)/metadpy || $(BIN)/python -m pip install --quiet --no-deps \
		--target $(BENCH_DEPS) metadpy==0.1.2 numba llvmlite tqdm pandas-flavor
	$(BIN)/python benchmarks/bench_scale.py --reference-path $(BENCH_DEPS)
	$(BIN)/python benchmarks/bench_metad_coverage.py
	$(BIN)/python benchmarks/bench_certificates.py
	$(BIN)/python benchmarks/bench_scoring.py
	$(BIN)/python benchmarks/bench_metad.py

clean:
	rm -rf $(VENV) demo-output
