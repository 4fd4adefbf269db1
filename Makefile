# Two commands do all the set-up on a fresh machine with Python 3.11+:
#   make run    create .venv, install arena_studio, open the app on the bundled demo
#   make test   create .venv, install arena_studio with test extras, run the whole suite
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

run: $(STAMP)
	$(BIN)/arena-studio

test: $(STAMP)
	QT_QPA_PLATFORM=$${QT_QPA_PLATFORM:-offscreen} $(BIN)/python -m pytest -q

lint: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/lint-imports

bench: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(BIN)/python -m pytest tests/bench -s -q -p no:cacheprovider

clean:
	rm -rf $(VENV) .pytest_cache .ruff_cache
