# Two commands do all the set-up on a fresh machine:  make demo   and   make test
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin

.PHONY: setup demo test bench browser clean

# the virtual environment, with gonogo installed (editable) and the test dependencies
$(BIN)/gonogo: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $@

setup: $(BIN)/gonogo

# the invented demo: writes its history, scenario and results under outputs/demo/
demo: setup
	$(BIN)/gonogo demo --force

# the whole test suite (installs Debian's chromium for the browser test when it can)
test: setup browser
	$(BIN)/python -m pytest

browser:
	@sh .ci/install-chromium

# benchmarks print their figures; they are never timed tests
bench: setup
	$(BIN)/python benchmarks/bench_core.py
	$(BIN)/python benchmarks/bench_operations.py
	$(BIN)/python benchmarks/bench_forecasts.py
	$(BIN)/python benchmarks/bench_sites.py --sites 50 --rule-sites 10 --replicates 2000

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .hypothesis
