# frontshift: the two set-up commands of README (make demo, make test) and make lab.
PYTHON ?= python3
VENV   ?= .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.frontshift-installed
OUT    ?= products

.PHONY: demo test lab bench lint browser-deps clean-products

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

## Writes every shift product for the bundled sample grids into $(OUT)/ (a new
## dated sub-folder each time, so nothing earlier is overwritten).
demo: $(STAMP)
	$(VENV)/bin/frontshift shift sample_grids/runs/* --sites sample_grids/sites.csv --out $(OUT)

## The whole suite: science, products, command line, notebooks (nbval) and the
## browser check of the shift-start notebook.
test: $(STAMP) browser-deps
	$(PY) -m pytest -q tests
	$(PY) -m pytest -q --nbval-lax --nbval-cell-timeout=600 notebooks

browser-deps:
	@command -v chromium >/dev/null 2>&1 || { \
	  echo "installing Debian's chromium for the browser check"; \
	  apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; }

lab: $(STAMP)
	$(VENV)/bin/jupyter lab notebooks/

bench: $(STAMP)
	$(PY) -m benchmarks

lint: $(STAMP)
	$(VENV)/bin/ruff check kit tests benchmarks
