# spotkit developer commands. Everything runs inside a local virtual environment (.venv).
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed
OUT    ?= out

.PHONY: setup demo lint test test-fast browser bench clean

setup: $(STAMP)

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e ".[all,test]"
	touch $(STAMP)

## Run the whole job on the bundled demo data and write the report to $(OUT)/
demo: setup
	$(VENV)/bin/spotkit demo -o $(OUT)

## Headless Chromium for the report test (skipped with a reason if it cannot be installed)
browser:
	@command -v chromium >/dev/null 2>&1 || command -v chromium-browser >/dev/null 2>&1 || \
	  ( [ "$$(id -u)" = 0 ] && (apt-get update -qq >/dev/null 2>&1; \
	    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null 2>&1) ) || \
	  echo "note: chromium not installed; the browser test will be skipped"

## ruff over the package, the tests, the benchmarks and the scripts (settings in pyproject.toml)
lint: setup
	$(PY) -m ruff check spotkit tests benchmarks scripts

## Set up, lint, and run the whole test suite (with the docstrings' examples)
test: setup browser lint
	$(PY) -m pytest -n 2 --dist loadgroup

test-fast: setup
	$(PY) -m pytest -n 2 -m "not slow and not browser and not notebook"

bench: setup
	for f in benchmarks/bench_*.py; do echo "== $$f"; $(PY) $$f || exit 1; done

clean:
	rm -rf $(VENV) $(OUT) .pytest_cache build *.egg-info
