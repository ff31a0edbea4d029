# Two entry points: `make demo` and `make test`. Both (re)create .venv as needed.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
PIP := $(PY) -m pip
DEMO_OUT ?= demo_output

.PHONY: demo test venv bench clean docs

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PIP) install --quiet --upgrade pip

$(VENV)/.stamp-all: pyproject.toml | $(PY)
	$(PIP) install --quiet -e '.[all]'
	touch $@

$(VENV)/.stamp-test: pyproject.toml | $(PY)
	$(PIP) install --quiet -e '.[test]'
	touch $@

$(VENV)/.stamp-docs: pyproject.toml | $(PY)
	$(PIP) install --quiet -e '.[docs]'
	touch $@

venv: $(VENV)/.stamp-all

demo: $(VENV)/.stamp-all
	$(VENV)/bin/hrstage demo --out $(DEMO_OUT) --overwrite

test: $(VENV)/.stamp-test
	$(PY) -m pytest $(PYTEST_ARGS)

# the documentation site (narrative pages, API reference, gallery run at build time) in docs/_build/html;
# warnings are errors
docs: $(VENV)/.stamp-docs
	MPLBACKEND=Agg $(PY) -m sphinx -W --keep-going -q -b html docs docs/_build/html

bench: $(VENV)/.stamp-test
	$(PY) benchmarks/run_all.py

clean:
	rm -rf $(VENV) $(DEMO_OUT) build *.egg-info .pytest_cache docs/_build docs/_generated
