# The two commands a new machine needs: `make demo` and `make test`.
# Each creates .venv when missing and installs netopt into it first.
# `make test` runs ruff (lint and format), mypy and then pytest on both cores (pytest-xdist); any finding fails it.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test lint bench install clean

$(PY):
	$(PYTHON) -m venv $(VENV)

$(STAMP): $(PY) pyproject.toml
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e ".[test,dev]"
	touch $(STAMP)

install: $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/netopt check cases/brackenholt
	$(VENV)/bin/netopt baseline cases/brackenholt --out out/brackenholt-baseline
	$(VENV)/bin/netopt run cases/brackenholt --out out/brackenholt
	$(VENV)/bin/netopt stress cases/brackenholt --out out/brackenholt-stress
	$(VENV)/bin/netopt run cases/brackenholt-growth --out out/brackenholt-growth
	$(VENV)/bin/netopt classify cases/brackenholt --out out/brackenholt-classes --xyz \
		--service-by-class A=express,B=standard,C=standard --csl-by-class A=0.98,B=0.95,C=0.90
	$(VENV)/bin/netopt solve out/brackenholt-classes/case --out out/brackenholt-classes-solved -q
	$(VENV)/bin/netopt sites cases/brackenholt --out out/brackenholt-sites --k 4 --k-sweep 8 --max-dcs 6
	$(VENV)/bin/netopt robust cases/brackenholt --out out/brackenholt-robust

lint: $(STAMP)
	$(PY) -m ruff check netopt tests benchmarks
	$(PY) -m ruff format --check netopt tests benchmarks
	$(PY) -m mypy netopt

test: lint
	$(PY) -m pytest -q -n 2

fuzz: $(STAMP)
	$(PY) -m pytest -q -m fuzz_long tests/test_fuzz.py

bench: $(STAMP)
	$(PY) benchmarks/run.py

clean:
	rm -rf $(VENV) out .pytest_cache
