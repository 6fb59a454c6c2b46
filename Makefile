# tonepair developer targets.  Everything installs into ./.venv from pyproject.toml.
PYTHON ?= python3
VENV   := .venv
LOWEST := .venv-lowest
BIN    := $(VENV)/bin
DEMO_CAPTURE := sample_captures/beacon_demo.sigmf-meta
DEMO_SPEC    := sample_captures/beacon_demo.spec.toml

.PHONY: venv venv-test demo test test-lowest fuzz bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

venv: $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .

venv-test: $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'

demo: venv
	MPLBACKEND=Agg $(BIN)/tonepair analyze $(DEMO_CAPTURE) --out reports --name demo --overwrite \
		--spec $(DEMO_SPEC) --pdf reports/demo.pdf

test: venv-test
	MPLBACKEND=Agg $(BIN)/python -m pytest -q

# The lowest versions pyproject.toml allows (constraints-lowest.txt), in a venv of their own.
$(LOWEST)/installed: constraints-lowest.txt pyproject.toml
	rm -rf $(LOWEST)
	$(PYTHON) -m venv $(LOWEST)
	$(LOWEST)/bin/python -m pip install --quiet --upgrade pip
	$(LOWEST)/bin/python -m pip install --quiet -c constraints-lowest.txt -e '.[test]'
	touch $@

test-lowest: $(LOWEST)/installed
	MPLBACKEND=Agg $(LOWEST)/bin/python -m pytest -q

fuzz: venv-test
	TONEPAIR_FUZZ_EXAMPLES=10000 $(BIN)/python -m pytest -q -m fuzz tests/capture/test_fuzz_loaders.py

bench: venv
	$(BIN)/python benchmarks/throughput.py

clean:
	rm -rf $(VENV) $(LOWEST) build *.egg-info
