# Two commands do all the set-up on a fresh machine with Python 3.11+:
#   make run    create .venv, install arena_studio, open the app on the bundled demo
#   make test   create .venv, install arena_studio with test extras, run the whole suite
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test lint bench fuzz demos clean

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
	$(BIN)/mypy

bench: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(BIN)/python -m pytest tests/bench -s -q -p no:cacheprovider

# hostile-input fuzz suite, long profile (minutes; `make test` runs the short one);
# FUZZ_EXAMPLES=N sets the examples per test
FUZZ_EXAMPLES ?= 300
fuzz: $(STAMP)
	ARENA_FUZZ=long ARENA_FUZZ_EXAMPLES=$(FUZZ_EXAMPLES) QT_QPA_PLATFORM=offscreen \
	  nice $(BIN)/python -m pytest tests/fuzz -q -p no:cacheprovider --hypothesis-show-statistics

# demo tapes from the demo scenes, scripted agents, fixed seeds (reproducible bit for bit)
DEMO_SCENES := greenhouse parking-level lab-wing
demos: $(STAMP)
	for s in $(DEMO_SCENES); do \
	  $(BIN)/arena-studio rollout scenes/$$s.scene.json -o scenes/$$s-shared.tape \
	    --episodes 12 --seed 11 --goals shared --quiet && \
	  $(BIN)/arena-studio rollout scenes/$$s.scene.json -o scenes/$$s-independent.tape \
	    --episodes 12 --seed 12 --goals independent --quiet && \
	  $(BIN)/arena-studio rollout scenes/$$s.scene.json -o scenes/$$s-greedy.tape \
	    --episodes 20 --seed 13 --goals greedy --par-limit 0.8,2.0 --quiet || exit 1; \
	done

clean:
	rm -rf $(VENV) .pytest_cache .ruff_cache
