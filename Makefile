# Two commands do all the set-up on a fresh machine:  make demo   and   make test
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin

.PHONY: setup demo test bench browser clean

# the virtual environment, with gonogo installed (editable) and the test dependencies
# One line per step. pip's -qq keeps its errors and drops its chatter (including warnings that some
# machines' pip configuration causes); setuptools' notice that an editable install is editable is
# silenced by its text only, so any other packaging warning still shows.
PIP := PYTHONWARNINGS="ignore:Editable installation" $(BIN)/python -m pip -qq --disable-pip-version-check

$(BIN)/gonogo: pyproject.toml
	@echo "setup: creating the virtual environment in $(VENV)/"
	@$(PYTHON) -m venv $(VENV)
	@echo "setup: upgrading pip"
	@$(PIP) install --upgrade pip
	@echo "setup: installing gonogo and its test dependencies (about a minute the first time)"
	@$(PIP) install -e ".[test]"
	@touch $@
	@echo "setup: done; run gonogo as $(BIN)/gonogo, or first: . $(BIN)/activate"

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
	$(BIN)/python benchmarks/bench_reading.py
	$(BIN)/python benchmarks/bench_forecasts.py
	$(BIN)/python benchmarks/bench_sites.py --sites 50 --rule-sites 10 --replicates 2000

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache .hypothesis
