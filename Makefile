# Two commands do all set-up on a fresh Debian machine with Python 3.11:
#   make demo   installs what is missing, then runs derate on the shipped example board
#   make test   installs what is missing, then runs the whole test suite
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed-stamp
EXAMPLE := examples/irrigation-controller

.PHONY: demo test bench bench-grid bench-mc mutation deps system-deps clean

deps: system-deps $(STAMP)

system-deps:
	@scripts/install-system-deps.sh $(SYSDEPS_FLAGS)

$(STAMP): pyproject.toml
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install -q --disable-pip-version-check -e ".[test]"
	@$(BIN)/python -c "import derate, PySpice, yaml, rich, jsonschema, numpy, kiutils, networkx"
	@touch $(STAMP)

# The example board fails its review on purpose (exit 1): that is the demo, not an error.
demo: deps
	@cd $(EXAMPLE) && code=0; ../../$(BIN)/derate check || code=$$?; \
	if [ $$code -gt 1 ]; then exit $$code; fi; \
	echo "HTML report: $(EXAMPLE)/out/review.html (derate exited $$code: 1 means findings, as designed)"

test: SYSDEPS_FLAGS = --browser
test: deps
	$(BIN)/python -m pytest -q

bench: deps
	$(BIN)/python benchmarks/run.py

# boards of 200 / 1,000 / 3,000 capacitors x short / long runs (hours in all; GRID_ARGS narrows it)
bench-grid: deps
	$(BIN)/python benchmarks/grid.py $(GRID_ARGS)

# 100 Monte Carlo samples of the example board's hot corner on 2 workers (several minutes)
bench-mc: deps
	$(BIN)/python benchmarks/montecarlo.py

# mutation testing of the judgement core (checks, thermal, policy, measure, gate): score and survivors
mutation: deps
	$(BIN)/python -m pip install -q --disable-pip-version-check -e ".[mutation]"
	$(BIN)/python scripts/mutation.py $(if $(MUTATE),--mutate $(MUTATE),)

clean:
	rm -rf $(VENV) .derate-cache build *.egg-info .pytest_cache
