# Two commands on a fresh machine: `make demo` and `make test`.
# Both create .venv when it is absent and install what they need into it.

PYTHON ?= python3
VENV   ?= .venv
PY     := $(VENV)/bin/python
PIP    := $(PY) -m pip --disable-pip-version-check
PORT   ?= 8866
PYTEST_ARGS ?=

.PHONY: test demo demo-data benchmarks clean-venv docs lint format types lowest

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PIP) install -q --upgrade pip

# Stamps re-run the install when pyproject.toml changes.
$(VENV)/.installed-test: pyproject.toml | $(PY)
	$(PIP) install -q -e '.[test,notebook]'
	touch $@

$(VENV)/.installed-notebook: pyproject.toml | $(PY)
	$(PIP) install -q -e '.[notebook]'
	touch $@

test: $(VENV)/.installed-test
	$(PY) -m pytest $(PYTEST_ARGS)

demo-data: $(VENV)/.installed-notebook
	$(PY) -m climwidgets.demo

# DEMO_HEADLESS=1 writes the demo basin summary to out/ and exits (scripts and CI);
# otherwise the tour notebook is served on localhost and its address printed.
demo: demo-data
ifeq ($(DEMO_HEADLESS),1)
	$(PY) -m climwidgets.cli demo --headless --out out
else
	$(PY) -m climwidgets.cli demo --serve --port=$(PORT)
endif

benchmarks: $(VENV)/.installed-test
	cd benchmarks && for b in bench_*.py; do ../$(PY) $$b; done

clean-venv:
	rm -rf $(VENV)

# ------------------------------------------------------------------ developer targets
$(VENV)/.installed-docs: pyproject.toml | $(PY)
	$(PIP) install -q -e '.[docs]'
	touch $@

$(VENV)/.installed-lint: pyproject.toml | $(PY)
	$(PIP) install -q -e '.[lint]'
	touch $@

# The documentation, offline, with every warning an error (docs/_build/html/index.html).
docs: $(VENV)/.installed-docs
	$(PY) -m sphinx -W --keep-going -q -b html docs docs/_build/html

# ruff (rules and format in pyproject.toml) and mypy (strict where listed in pyproject.toml).
lint: $(VENV)/.installed-lint
	$(VENV)/bin/ruff check climwidgets tests benchmarks docs notebooks
	$(VENV)/bin/ruff format --check climwidgets tests benchmarks docs notebooks
	$(VENV)/bin/mypy

types: $(VENV)/.installed-lint
	$(VENV)/bin/mypy

# Rewrites files: run on a clean tree (see DEVELOPERS.md, "Lint, format and types").
format: $(VENV)/.installed-lint
	$(VENV)/bin/ruff format climwidgets tests benchmarks docs notebooks

# The suite at the lowest declared versions, in .venv-lowest (.ci/lowest; CI runs it too).
lowest:
	bash .ci/lowest
