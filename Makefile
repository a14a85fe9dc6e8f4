# Two entry points, both self-contained on a fresh machine with Python 3.11+:
#   make demo   build the environment, run the demo job (writes reports/)
#   make test   build the environment, run the test suite
#   make docs   build the documentation site into build/site (warnings are errors)
PYTHON ?= python3
VENV   ?= .venv
PY      = $(VENV)/bin/python
STAMP   = $(VENV)/.cctkit-installed

.PHONY: demo test docs bench clean

$(STAMP): pyproject.toml
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info >= (3, 11) else "cctkit needs Python 3.11 or newer")'
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test,docs,lint]'
	@touch $(STAMP)

demo: $(STAMP)
	$(PY) -m cctkit.demo_job --out reports

test: $(STAMP)
	$(PY) -m pytest

docs: $(STAMP)
	$(VENV)/bin/mkdocs build --strict --quiet

bench: $(STAMP)
	$(PY) benchmarks/bench_cct.py
	$(PY) benchmarks/bench_rendering.py
	$(PY) benchmarks/bench_full.py
	$(PY) benchmarks/bench_batch.py
	$(PY) benchmarks/bench_report.py
	$(PY) benchmarks/bench_uncertainty.py

clean:
	rm -rf $(VENV) build *.egg-info .pytest_cache
