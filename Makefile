# Two commands do everything on a fresh machine: `make run` and `make test`.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test quick fuzz bench bench-peer lint install clean browser

$(STAMP): pyproject.toml
	test -d $(VENV) || $(PY) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[app,test,cluster]"
	touch $(STAMP)

install: $(STAMP)

# The main job: the workbench page on localhost, the demo fixture and readings loaded.
PORT ?= 8501
run: install
	@echo "capbench workbench: open http://localhost:$(PORT) (Ctrl+C stops it)"
	$(BIN)/streamlit run app.py --server.headless true --server.port $(PORT) \
		--server.address localhost --browser.gatherUsageStats false

# Debian's chromium and chromium-driver for the browser test (tests/test_app_browser.py);
# where apt-get cannot install them the test is skipped and says why.
browser:
	@if command -v chromium >/dev/null 2>&1 && command -v chromedriver >/dev/null 2>&1; then \
		:; \
	elif command -v apt-get >/dev/null 2>&1 && [ "$$(id -u)" = 0 ]; then \
		(apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq \
			chromium chromium-driver >/dev/null) \
		|| echo "browser: apt-get could not install chromium; the browser test will skip"; \
	else \
		echo "browser: no apt-get as root here; the browser test will skip"; \
	fi

# The whole test suite (CI runs this through .ci/run).
test: install browser
	$(BIN)/python -m pytest -q

# Everything but the slow checks.
quick: install
	$(BIN)/python -m pytest -q -m "not slow"

# The property tests with the long hypothesis profile ("fuzz": 400 examples a test, a
# tenth of that where each example solves a field), with how many inputs each tried.
PROPERTY_TESTS := tests/test_properties.py tests/test_properties_files.py \
	tests/test_properties_extract.py tests/test_page_text.py tests/test_tolerant_geometry.py
fuzz: install
	HYPOTHESIS_PROFILE=fuzz $(BIN)/python -m pytest -q -p no:cacheprovider \
		--hypothesis-show-statistics $(PROPERTY_TESTS)

bench: install
	$(BIN)/python benchmarks/accuracy_speed.py

# capbench beside a general-purpose hp finite-element library (NGSolve) on the same
# fixtures. The peer lives in its own environment and is never a capbench dependency.
PEER := .venv-peer
bench-peer: install
	test -d $(PEER) || $(PY) -m venv $(PEER)
	$(PEER)/bin/python -m pip install --quiet ngsolve numpy
	OMP_NUM_THREADS=1 $(BIN)/python benchmarks/peer.py

lint: install
	$(BIN)/ruff check capbench tests benchmarks examples app.py bench_pages
	$(BIN)/ruff format --check capbench tests benchmarks examples app.py bench_pages

clean:
	rm -rf $(VENV) .pytest_cache build *.egg-info
