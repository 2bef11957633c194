# tamis: the two commands a newcomer needs are `make run` and `make test`.
# Both install what they need (Debian packages, Python packages in .venv, npm
# packages in node_modules) from the package registries, and nothing else.

PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
PORT   ?= 8765
HOST   ?= 127.0.0.1
export PIP_DISABLE_PIP_VERSION_CHECK := 1

.PHONY: setup system build run test lint test-core test-fuzz test-pyodide test-e2e test-engines bench regenerate check-generated screenshots clean

## setup: Debian packages, the Python virtual environment and npm packages
setup: system $(VENV)/.stamp node_modules/.stamp

system:
	@bash scripts/system-deps.sh

$(VENV)/.stamp: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q --upgrade pip
	$(PY) -m pip install -q -e '.[test]'
	@touch $@

node_modules/.stamp: package.json package-lock.json
	npm ci --no-audit --no-fund --loglevel=error
	@touch $@

## build: lay out webapp/ as the whole static site (Pyodide, wheels, manifest)
build: setup
	$(PY) scripts/build_webapp.py

## run: build, then serve the app on http://$(HOST):$(PORT)/
run: build
	$(PY) scripts/serve.py --host $(HOST) --port $(PORT)

## test: everything: the linter, core on CPython, golden files in Pyodide, the app in chromium,
## and the engine suite in chromium, firefox-esr and WebKitGTK
test: lint build test-core test-pyodide test-e2e test-engines

## lint: ruff (pinned in the test extra; rules in pyproject.toml) over every Python file we write
LINTED := pycore tests e2e bench scripts demo_data
lint: setup
	$(PY) -m ruff check $(LINTED)

test-core: setup
	$(PY) -m pytest -q tests

## test-fuzz: the contract property test (tests/test_contract_fuzz.py) with 10,000 examples per op (5 to 30
## minutes, as loaded as the machine is), and the design-band property; `make test` runs 40 per op
test-fuzz: setup
	TAMIS_FUZZ_EXAMPLES=10000 $(PY) -m pytest -q -s -p no:cacheprovider --timeout=0 \
	  tests/test_contract_fuzz.py tests/test_design_band.py -k "every_reply or never_inverted"

test-pyodide: build
	node tests/pyodide/replay_golden.mjs
	node tests/pyodide/stdlib_complete.mjs

test-e2e: build
	$(PY) -m pytest -q -p no:cacheprovider --ignore=e2e/engines e2e

## test-engines: the app's main paths in chromium (Playwright), firefox-esr (WebDriver
## BiDi) and WebKitGTK (WebKitWebDriver under Xvfb); prints the time it adds
test-engines: build
	@start=$$(date +%s); status=0; \
	$(PY) -m pytest -q -p no:cacheprovider e2e/engines || status=$$?; \
	echo "engine suite: $$(( $$(date +%s) - start )) s added to make test"; exit $$status

## regenerate: rewrite every generated file from the sources, in dependency order: golden
## responses, the demo project (its CSV carries computed columns), docs/criteria.md.
## Read the diff before committing it. Screenshots are apart: `make screenshots`.
regenerate: setup
	$(PY) tests/golden/regenerate.py
	$(PY) demo_data/make_demo.py
	$(PY) scripts/gen_criteria_docs.py

## check-generated: write nothing; fail when a generated file is stale
check-generated: setup
	$(PY) tests/golden/regenerate.py --check
	$(PY) demo_data/make_demo.py --check
	$(PY) scripts/gen_criteria_docs.py --check

## screenshots: docs/img/*.png from the built app in chromium (needs the build; pixels vary by platform)
screenshots: build
	$(PY) e2e/screenshots.py

## bench: performance figures (printed, never asserted)
## bench: every benchmark, each figure beside its target and beside BASELINE (a git revision, measured in the
## same run; default: the start of the performance work, issue 17). BASELINE= runs without one.
BASELINE ?= 82407df
bench: build
	$(PY) bench/run_all.py $(if $(BASELINE),--baseline $(BASELINE),)

clean:
	rm -rf $(VENV) node_modules webapp/vendor build dist pycore/*.egg-info
