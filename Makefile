# Two entry points: `make demo` and `make test`. Both (re)create .venv as needed.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
PIP := $(PY) -m pip
DEMO_OUT ?= demo_output

.PHONY: demo test venv bench clean

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PIP) install --quiet --upgrade pip

$(VENV)/.stamp-all: pyproject.toml | $(PY)
	$(PIP) install --quiet -e '.[all]'
	touch $@

$(VENV)/.stamp-test: pyproject.toml | $(PY)
	$(PIP) install --quiet -e '.[test]'
	touch $@

venv: $(VENV)/.stamp-all

demo: $(VENV)/.stamp-all
	$(VENV)/bin/hrstage demo --out $(DEMO_OUT) --overwrite

test: $(VENV)/.stamp-test
	$(PY) -m pytest $(PYTEST_ARGS)

bench: $(VENV)/.stamp-test
	$(PY) benchmarks/run_all.py

clean:
	rm -rf $(VENV) $(DEMO_OUT) build *.egg-info .pytest_cache
