# Two commands do everything on a fresh machine: `make run` and `make test`.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test quick fuzz bench lint install clean

$(STAMP): pyproject.toml
	test -d $(VENV) || $(PY) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[app,test,cluster]"
	touch $(STAMP)

install: $(STAMP)

# The main job: solve the demo fixture and print the result.
run: install
	$(BIN)/python -m capbench

# The whole test suite (CI runs this through .ci/run).
test: install
	$(BIN)/python -m pytest -q

# Everything but the slow checks.
quick: install
	$(BIN)/python -m pytest -q -m "not slow"

# The property tests with the long hypothesis profile ("fuzz": 400 examples a test, a
# tenth of that where each example solves a field), with how many inputs each tried.
PROPERTY_TESTS := tests/test_properties.py tests/test_properties_files.py \
	tests/test_properties_extract.py
fuzz: install
	HYPOTHESIS_PROFILE=fuzz $(BIN)/python -m pytest -q -p no:cacheprovider \
		--hypothesis-show-statistics $(PROPERTY_TESTS)

bench: install
	$(BIN)/python benchmarks/accuracy_speed.py

lint: install
	$(BIN)/ruff check capbench tests benchmarks examples app.py
	$(BIN)/ruff format --check capbench tests benchmarks examples app.py

clean:
	rm -rf $(VENV) .pytest_cache build *.egg-info
