# Two commands on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: demo test venv bench clean compiled

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

$(STAMP): $(PY) pyproject.toml
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

venv: $(STAMP)

# partpick's modules compiled ahead (an editable install leaves that to the
# first run, and with PYTHONDONTWRITEBYTECODE set every run would compile
# them again); quick when nothing changed.
compiled: $(STAMP)
	$(PY) -m compileall -q partpick

demo: compiled
	$(VENV)/bin/partpick demo

test: compiled
	$(PY) -m pytest

bench: compiled
	$(PY) tests/bench/bench_design.py --sizes small,medium --repeat 1 --solve-limit 120

clean:
	rm -rf $(VENV) build *.egg-info
