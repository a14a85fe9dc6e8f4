# Two entry points, both self-contained on a fresh machine with Python 3.11+:
#   make demo   build the environment, run the demo job (writes reports/)
#   make test   build the environment, run lint (ruff, mypy), the docs build, then the test suite
#   make lint   ruff (lint and format check) and mypy only
#   make docs   build the documentation site into build/site (warnings are errors)
#   make wheel-check   build the wheel, install it in a clean venv, run cctkit from it (CI runs it)
PYTHON ?= python3
VENV   ?= .venv
PY      = $(VENV)/bin/python
STAMP   = $(VENV)/.cctkit-installed

.PHONY: demo test lint docs wheel-check bench clean

$(STAMP): pyproject.toml
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info >= (3, 11) else "cctkit needs Python 3.11 or newer")'
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test,docs,lint]'
	@touch $(STAMP)

demo: $(STAMP)
	$(PY) -m cctkit.demo_job --out reports

test: $(STAMP) lint docs
	$(PY) -m pytest

lint: $(STAMP)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/ruff format --check .
	$(VENV)/bin/mypy

docs: $(STAMP)
	$(VENV)/bin/mkdocs build --strict

WHEEL_DIR = build/wheel-check
wheel-check: $(STAMP)
	rm -rf $(WHEEL_DIR)
	$(PY) -m build --wheel --outdir $(WHEEL_DIR) . > /dev/null
	$(PYTHON) -m venv $(WHEEL_DIR)/venv
	$(WHEEL_DIR)/venv/bin/python -m pip install --quiet $(WHEEL_DIR)/cctkit-*.whl
	cd $(WHEEL_DIR) && venv/bin/cctkit --help > /dev/null
	cd $(WHEEL_DIR) && CCTKIT_CACHE_DIR=cache venv/bin/cctkit inspect $(CURDIR)/spectra/northbeam-nb-3000-95.csv > inspect.txt
	grep -q "Ra (CIE 13.3)" $(WHEEL_DIR)/inspect.txt
	@echo "wheel-check: the wheel installs in a clean venv and runs cctkit --help and cctkit inspect"

bench: $(STAMP)
	$(PY) benchmarks/bench_startup.py
	$(PY) benchmarks/bench_cct.py
	$(PY) benchmarks/bench_rendering.py
	$(PY) benchmarks/bench_full.py
	$(PY) benchmarks/bench_batch.py
	$(PY) benchmarks/bench_report.py
	$(PY) benchmarks/bench_uncertainty.py

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache
