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

bench: install
	$(BIN)/python benchmarks/accuracy_speed.py

lint: install
	$(BIN)/ruff check capbench tests benchmarks examples app.py
	$(BIN)/ruff format --check capbench tests benchmarks examples app.py

clean:
	rm -rf $(VENV) .pytest_cache build *.egg-info
