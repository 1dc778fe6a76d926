# carbfleet: `make demo` builds the demo fleet's reports, `make test` lints (ruff) and runs the
# whole suite. Both create the virtual environment .venv on first use; `make demo` installs only
# what carbfleet needs to run, `make test` adds the test extra.
PYTHON ?= python3
VENV   ?= .venv
PY      = $(VENV)/bin/python
STAMP   = $(VENV)/.installed
TESTSTAMP = $(VENV)/.installed-test

.PHONY: demo test bench wheel-check messages clean distclean

$(VENV)/bin/python:
	@$(PYTHON) -c 'import sys; sys.exit(0 if (3, 11) <= sys.version_info[:2] <= (3, 13) else "carbfleet needs Python 3.11 to 3.13")'
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(VENV)/bin/python
	$(PY) -m pip install --quiet -e .
	touch $(STAMP)

$(TESTSTAMP): pyproject.toml | $(VENV)/bin/python
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP) $(TESTSTAMP)

# The demo's history goes to out-history/ (not beside the shipped demo fleet file, in the package).
DEMO_HISTORY = --history out-history/demo-history.sqlite

demo: $(STAMP)
	mkdir -p out-history
	$(VENV)/bin/carbfleet build tuning/demo/demo-fleet.yaml tuning/demo/demo-event.yaml --out out $(DEMO_HISTORY)
	$(VENV)/bin/carbfleet build tuning/demo/demo-fleet.yaml tuning/demo/demo-event.yaml --out out-us --units us $(DEMO_HISTORY)
	$(VENV)/bin/carbfleet build tuning/demo/demo-fleet.yaml tuning/demo/demo-event.yaml --out out-de --language de $(DEMO_HISTORY)
	$(VENV)/bin/carbfleet build tuning/demo/demo-fleet.yaml tuning/demo/demo-trail-event.yaml --out out-trail $(DEMO_HISTORY)
	@echo "open out/index.html (metric, English), out-us/index.html (US units), out-de/index.html (German),"
	@echo "     out-trail/index.html (a trail day over a GPX route and a range of heights);"
	@echo "the plans are recorded in out-history/demo-history.sqlite (carbfleet history --history out-history/demo-history.sqlite)"

test: $(TESTSTAMP)
	$(PY) -m ruff check tuning tests benchmarks
	$(PY) -m ruff format --check tuning tests benchmarks
	$(PY) -m pytest

bench: $(TESTSTAMP)
	$(PY) benchmarks/plan_bench.py
	$(PY) benchmarks/build_bench.py

# A wheel installed into a fresh virtual environment builds the demo from a folder outside the checkout.
wheel-check:
	PYTHON=$(PYTHON) bash .ci/wheel-check

# The message catalogue: extract every marked text, then merge it into the German catalogue
# (translate the new entries in tuning/locale/de/LC_MESSAGES/carbfleet.po; tests fail on any left empty).
messages: $(STAMP)
	$(VENV)/bin/pybabel extract -F tuning/locale/babel.cfg -k _ -k N_ -k n_:1,2 --no-location --sort-output \
		--omit-header -o tuning/locale/carbfleet.pot .
	$(VENV)/bin/pybabel update -i tuning/locale/carbfleet.pot -d tuning/locale -D carbfleet -l de \
		--no-fuzzy-matching

clean:
	rm -rf out out-us out-de out-trail out-history .pytest_cache

distclean: clean
	rm -rf $(VENV) .venv-* *.egg-info build dist
