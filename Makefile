# posekit: the two set-up commands of the README live here.
#   make demo   - create/reuse .venv, install posekit with its extras, open JupyterLab on a fresh copy of the tour (.demo/)
#   make demo-terminal - the same set-up, then a short demo of the core printed to the terminal
#   make test   - create/reuse .venv, install everything (and Debian's chromium if missing), run all tests
#   make bench  - run the benchmark scripts and print their figures
#   make mutation - mutation testing with mutmut over every module (hours on two cores; not part of make test);
#                   prints the share of mutants killed per module (MUTATION_ARGS, e.g. --module posekit/io/limits.py)

PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.posekit-installed

.PHONY: install demo demo-terminal test bench mutation clean

$(STAMP): pyproject.toml setup.py posekit/core/_loops.c
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[notebook,test]'
	touch $(STAMP)

install: $(STAMP)

demo: $(STAMP)
	$(BIN)/python -m posekit.cli tour --folder .demo

demo-terminal: $(STAMP)
	$(BIN)/python -m posekit.demo

test: $(STAMP)
	bash scripts/need-chromium
	$(BIN)/python -m pytest

bench: $(STAMP)
	@for f in benchmarks/bench_*.py; do echo "== $$f"; $(BIN)/python $$f || exit 1; done

MUTATION_ARGS ?=
mutation: $(STAMP)
	$(BIN)/python -c 'import mutmut' 2>/dev/null || $(BIN)/python -m pip install --quiet -e '.[mutation]'
	$(BIN)/python scripts/mutation_report.py $(MUTATION_ARGS)

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis build dist *.egg-info .demo
