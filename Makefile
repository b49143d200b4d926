# Quick start: `make demo` audits the bundled demo design, `make test` runs the test suite.
# Both create .venv and install what they need on first use: `make demo` the tool alone,
# `make test` the tool and the test tools.

PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
TOOL_STAMP := $(VENV)/.tool-stamp
TEST_STAMP := $(VENV)/.test-stamp

.PHONY: demo test lint benchmarks bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(TOOL_STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	touch $(TOOL_STAMP)

$(TEST_STAMP): pyproject.toml $(TOOL_STAMP)
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(TEST_STAMP)

# The demo design has defects on purpose: exit status 1 is its normal result, accepted only
# when the checklist really lists an error finding.
demo: $(TOOL_STAMP)
	@$(BIN)/schemcheck audit fixtures/demo/frontend.kicad_sch --format markdown \
		--no-cache --output $(VENV)/demo-checklist.md; status=$$?; \
	cat $(VENV)/demo-checklist.md; \
	if [ $$status -eq 1 ] && grep -q '\*\*error\*\*' $(VENV)/demo-checklist.md; then exit 0; fi; \
	exit $$status

test: $(TEST_STAMP)
	$(BIN)/python -m pytest

lint: $(TEST_STAMP)
	$(BIN)/ruff check schemcheck api tests benchmarks scripts
	$(BIN)/mypy

benchmarks: $(TEST_STAMP)
	for b in benchmarks/bench_*.py; do $(BIN)/python $$b || exit 1; done

bench: benchmarks

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis .mypy_cache .ruff_cache
