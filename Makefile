# Two commands for a fresh machine with only python3:
#   make demo   - create .venv, install tractive, run the bundled example study
#   make test   - install with test extras into the same .venv, run the whole suite
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
DEMO_OUT ?= out

.PHONY: demo test bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: $(BIN)/python pyproject.toml
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@

demo: $(VENV)/.installed
	$(BIN)/tractive cycles
	$(BIN)/tractive energy examples/vehicles/hatchback.yaml --cycle udds --cycle hwfet --cycle wltc3b
	mkdir -p $(DEMO_OUT)
	$(BIN)/tractive compare examples/ev-van-conversion/study.yaml -o $(DEMO_OUT)/demo-study.xlsx -o $(DEMO_OUT)/demo-study.csv

test: $(VENV)/.installed
	$(BIN)/python -m pytest

# make bench BENCH_ARGS=--quick  - a short run
bench: $(VENV)/.installed
	$(BIN)/python benchmarks/run.py $(BENCH_ARGS)

clean:
	rm -rf $(VENV) build src/*.egg-info $(DEMO_OUT)
