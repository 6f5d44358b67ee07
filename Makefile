# The two set-up commands of the README. Each works on a fresh machine with
# only Python 3.11+ and pip: it builds .venv, installs, then does its job.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test lint bench fuzz clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test,reference]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/workpack check plants/demo-vessel.yaml
	$(BIN)/workpack diagnose plants/demo-vessel.yaml plants/demo-vessel-findings.yaml
	$(BIN)/workpack plan plants/demo-vessel.yaml plants/demo-vessel-findings.yaml \
		--crew-hours 40 --out out/demo-vessel

lint: $(STAMP)
	$(BIN)/ruff check workpack tests bench
	$(BIN)/mypy

test: lint
	$(BIN)/pytest

bench: $(STAMP)
	for script in bench/bench_*.py; do echo "== $$script"; $(BIN)/python $$script || exit 1; done

# Structure-aware fuzzing of every input through the command line (tests/fuzz/).
N ?= 2000
fuzz: $(STAMP)
	$(BIN)/python tests/fuzz/fuzz_inputs.py -n $(N) --jobs 2

clean:
	rm -rf $(VENV) out
