# beliefledger: every target sets up .venv on first use, so a fresh clone needs
# nothing but Python 3.11+ (and, for the browser test, Debian's chromium).
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed-stamp
OUT    ?= demo_output
PYTEST := $(BIN)/python -m pytest
NBVAL_DIRS := templates_nb example_cases

.PHONY: all demo test test-fast test-notebooks notebooks bench fuzz lint clean help

help:
	@echo "make demo   - run the worked example end to end (sealed notebook + offline HTML in $(OUT)/)"
	@echo "make test   - unit, property, notebook (nbval) and browser tests"
	@echo "make bench  - benchmarks; results in tests/benchmarks/RESULTS.md"
	@echo "make notebooks - re-run the shipped notebooks and store their outputs (for nbval)"
	@echo "make fuzz   - the long generated-input, tamper and crash runs"
	@echo "make lint   - ruff"

$(STAMP): pyproject.toml
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --disable-pip-version-check --upgrade pip
	$(BIN)/python -m pip install --quiet --disable-pip-version-check -e '.[all]'
	@touch $(STAMP)

demo: $(STAMP)
	$(BIN)/beliefledger demo --out $(OUT)

test: $(STAMP)
	$(PYTEST) tests -q
	$(MAKE) --no-print-directory test-notebooks

test-fast: $(STAMP)
	$(PYTEST) tests -q -m "not browser and not slow"

test-notebooks: $(STAMP)
	@if ls $(NBVAL_DIRS:%=%/*.ipynb) >/dev/null 2>&1; then \
	  $(PYTEST) -q --nbval-lax --nbval-current-env --nbval-sanitize-with tests/nbval_sanitize.cfg \
	    --nbval-cell-timeout=300 $$(ls $(NBVAL_DIRS:%=%/*.ipynb)); \
	else echo "no notebooks to check"; fi

notebooks: $(STAMP)
	$(BIN)/python tests/helpers/refresh_notebooks.py

bench: $(STAMP)
	$(BIN)/python tests/benchmarks/run.py

fuzz: $(STAMP)
	BELIEFLEDGER_FUZZ=full $(PYTEST) tests -q -m "fuzz or slow"

lint: $(STAMP)
	$(BIN)/ruff check src tests

clean:
	rm -rf $(OUT) build .pytest_cache
