# Two commands on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test venv bench clean

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

$(STAMP): $(PY) pyproject.toml
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/partpick demo

test: $(STAMP)
	$(PY) -m pytest

bench: $(STAMP)
	$(PY) tests/bench/bench_design.py --sizes small,medium --repeat 1 --solve-limit 120

clean:
	rm -rf $(VENV) build *.egg-info
