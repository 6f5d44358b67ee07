# The two set-up commands of the README. Each works on a fresh machine with
# only Python 3.11+ and pip: it builds .venv, installs, then does its job.
# `make demo` installs the runtime dependencies only (the main job needs nothing more);
# `make test` and the other developer targets add the test and reference extras.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
RUNTIME_STAMP := $(VENV)/.installed-runtime

.PHONY: demo test coverage lint bench bench-scale bench-store-pg bench-sync fuzz clean

$(RUNTIME_STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet -e .
	touch $(RUNTIME_STAMP)

# The full install holds the runtime one: make demo after make test installs nothing.
$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test,reference]'
	touch $(STAMP) $(RUNTIME_STAMP)

demo: $(RUNTIME_STAMP)
	$(BIN)/workpack check plants/demo-vessel.yaml
	$(BIN)/workpack diagnose plants/demo-vessel.yaml plants/demo-vessel-findings.yaml
	$(BIN)/workpack plan plants/demo-vessel.yaml plants/demo-vessel-findings.yaml \
		--crew-hours 40 --out out/demo-vessel

lint: $(STAMP)
	$(BIN)/ruff check workpack tests bench
	$(BIN)/mypy

# Every core at once (pytest-xdist). Work stealing keeps both cores busy to the end:
# a few slow files (generated plants, long texts) would otherwise finish on one core.
PYTEST_PARALLEL := -n logical --dist worksteal

test: lint
	$(BIN)/pytest $(PYTEST_PARALLEL)

coverage: $(STAMP)
	$(BIN)/pytest $(PYTEST_PARALLEL) --cov=workpack --cov-report=term

# Every bench with a target runs, even after one misses, then the run fails if any did.
# bench_scale.py here stops at 10,000 items; bench-scale adds 50,000 (the issue's slope).
BENCHES := bench/bench_startup.py bench/bench_plan.py bench/bench_render.py bench/bench_scale.py \
	bench/bench_locate.py bench/bench_search.py bench/bench_diagnose.py bench/bench_store.py \
	bench/bench_week.py

bench: $(STAMP)
	@failed=""; for script in $(BENCHES); do echo "== $$script"; \
		$(BIN)/python $$script || failed="$$failed $$script"; done; \
	if [ -n "$$failed" ]; then echo "== targets missed in:$$failed"; exit 1; fi

bench-scale: $(STAMP)
	$(BIN)/python bench/bench_scale.py --full

# Needs a PostgreSQL server's programs (initdb, pg_ctl); takes a few minutes.
bench-store-pg: $(STAMP)
	$(BIN)/python bench/bench_store_pg.py

# A fleet's records shipped ashore: 40 plants x 2,500 records in signed bundles imported
# into PostgreSQL, then verify and audit (needs PostgreSQL's programs); a few minutes.
bench-sync: $(STAMP)
	$(BIN)/python bench/bench_sync.py

# Structure-aware fuzzing of every input through the command line (tests/fuzz/).
N ?= 2000
fuzz: $(STAMP)
	$(BIN)/python tests/fuzz/fuzz_inputs.py -n $(N) --jobs 2

clean:
	rm -rf $(VENV) out .coverage
