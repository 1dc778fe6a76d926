# carbfleet: `make demo` builds the demo fleet's reports, `make test` runs the whole suite.
# Both create the virtual environment .venv on first use.
PYTHON ?= python3
VENV   ?= .venv
PY      = $(VENV)/bin/python
STAMP   = $(VENV)/.installed

.PHONY: demo test bench check clean distclean

$(STAMP): pyproject.toml
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info >= (3, 11) else "carbfleet needs Python 3.11 or newer")'
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/carbfleet build fleet_configs/demo-fleet.yaml fleet_configs/demo-event.yaml --out out
	@echo "open out/index.html, or print out/print-pack.pdf"

test: $(STAMP)
	$(PY) -m pytest

bench: $(STAMP)
	$(PY) benchmarks/plan_bench.py
	$(PY) benchmarks/build_bench.py

clean:
	rm -rf out .pytest_cache

distclean: clean
	rm -rf $(VENV) *.egg-info
