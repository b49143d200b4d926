# Quick start: `make demo` audits the bundled demo design, `make test` runs the test suite.
# Both create .venv and install what they need on first use.

PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed-stamp

.PHONY: demo test bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

# The demo design has defects on purpose: exit status 1 (error findings) is its normal result.
demo: $(STAMP)
	$(BIN)/schemcheck audit fixtures/demo/frontend.kicad_sch \
		--format markdown || test $$? -eq 1

test: $(STAMP)
	$(BIN)/python -m pytest

bench: $(STAMP)
	for b in benchmarks/bench_*.py; do $(BIN)/python $$b || exit 1; done

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis
