# The two commands of the README: `make demo` and `make test`. Both build .venv from pyproject.toml.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test bench lint clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q -e '.[test,reference]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/phasewise demo

test: $(STAMP)
	$(PY) -m pytest -q

# Every benchmark, each beside its peer (medians of interleaved repetitions, BLAS threads pinned);
# BENCH_ARGS=--quick for a fast look, --full for more repetitions and the 16-site nights sweep.
bench: $(STAMP)
	for b in benchmarks/bench_*.py; do echo "== $$b"; $(PY) $$b $(BENCH_ARGS) || exit 1; done

lint: $(STAMP)
	$(PY) -m ruff format --check planner tests benchmarks scripts conftest.py
	$(PY) -m ruff check planner tests benchmarks scripts conftest.py

clean:
	rm -rf $(VENV) build *.egg-info
