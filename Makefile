# Two commands on a fresh machine: `make demo` and `make test`.
# Both create .venv when it is absent and install what they need into it.

PYTHON ?= python3
VENV   ?= .venv
PY     := $(VENV)/bin/python
PIP    := $(PY) -m pip --disable-pip-version-check
PORT   ?= 8866
PYTEST_ARGS ?=

.PHONY: test demo demo-data benchmarks clean-venv

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
	@echo "Serving the climwidgets tour at http://localhost:$(PORT)/ (Ctrl-C to stop)"
	$(VENV)/bin/voila notebooks/tour.ipynb --port=$(PORT) --no-browser --Voila.ip=127.0.0.1
endif

benchmarks: $(VENV)/.installed-test
	cd benchmarks && for b in bench_*.py; do ../$(PY) $$b; done

clean-venv:
	rm -rf $(VENV)
