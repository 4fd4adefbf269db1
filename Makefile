# Two commands do all the set-up on a fresh machine with Python 3.11+:
#   make run    create .venv, install the locked versions and arena_studio, open the app
#   make test   create .venv, install the locked versions and arena_studio, run the whole suite
# Both install exactly requirements/lock.txt (versions and hashes, every extra), so a fresh
# machine gets what CI tested. `make lock` refreshes the lock from pyproject.toml's ranges;
# `make test-latest` runs the suite on the newest versions those ranges allow.
SHELL := /bin/bash
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
LOCK := requirements/lock.txt
LATEST := .venv-latest
# uv resolves for every Python pyproject allows (--universal) and writes pip's own format
UV_COMPILE = $(BIN)/uv pip compile pyproject.toml --all-extras --generate-hashes --universal \
	--custom-compile-command "make lock" --quiet -o $(LOCK)

# name==version lines with names normalised (lower case, - for . and _) and sorted
NAME_VERSION = awk -F== '{n = tolower($$1); gsub(/[._]/, "-", n); print n "==" $$2}' | sort

.PHONY: run test lint bench fuzz demos clean lock lock-upgrade test-latest

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)

# the lock first (hash-checked, nothing unpinned), then the project itself without deps;
# --no-build-isolation builds it with the locked hatchling instead of a fresh download
$(STAMP): $(LOCK) pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet --require-hashes -r $(LOCK)
	$(BIN)/python -m pip install --quiet --no-deps --no-build-isolation -e .
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

# demo tapes from the demo scenes, scripted agents, fixed seeds: byte-identical when run again
# on the same versions and machine; across versions and CPUs the same in meaning (poses within
# 1e-6 m; tests/core/sim/test_rollout.py)
DEMO_SCENES := greenhouse parking-level lab-wing
demos: $(STAMP)
	for s in $(DEMO_SCENES); do \
	  $(BIN)/arena-studio rollout scenes/$$s.scene.json -o scenes/$$s-shared.tape \
	    --episodes 12 --seed 11 --goals shared --par-limit 0.8,1.6 --goal-pool 3 --quiet && \
	  $(BIN)/arena-studio rollout scenes/$$s.scene.json -o scenes/$$s-independent.tape \
	    --episodes 12 --seed 12 --goals independent --every-other shared --goal-pool 3 \
	    --quiet && \
	  $(BIN)/arena-studio rollout scenes/$$s.scene.json -o scenes/$$s-greedy.tape \
	    --episodes 20 --seed 13 --goals greedy --every-other shared --par-limit 0.8,2.0 \
	    --goal-pool 3 --quiet || exit 1; \
	done
	# announcements before each episode: one tape where the others mostly follow the scout,
	# one where the scout is just as clear and the others ignore it
	$(BIN)/arena-studio rollout scenes/parking-level.scene.json \
	  -o scenes/parking-level-followed.tape --episodes 40 --seed 21 --goals independent \
	  --announce scout --word-error 0.1 --adopt 0.9 --quiet
	$(BIN)/arena-studio rollout scenes/parking-level.scene.json \
	  -o scenes/parking-level-ignored.tape --episodes 40 --seed 22 --goals independent \
	  --announce scout --word-error 0.05 --adopt 0.1 --quiet
	# a small sweep (conditions x seeds x checkpoints) for `arena-studio runs`
	rm -rf scenes/sweep-demo
	$(BIN)/python -m arena_studio.core.runs.demo scenes/sweep-demo scenes/parking-level.scene.json

# the lock tool lives in .venv, outside the lock (it only writes the lock)
$(BIN)/uv: | $(BIN)/python
	$(BIN)/python -m pip install --quiet 'uv>=0.5'

# refresh the lock after pyproject.toml changed: keeps every pin that still fits
lock: | $(BIN)/uv
	$(UV_COMPILE)

# move every pin to the newest version pyproject.toml allows
lock-upgrade: | $(BIN)/uv
	$(UV_COMPILE) --upgrade

# the suite on the newest allowed versions, in a venv of its own, so a breaking release
# shows up here before users meet it (the lock and .venv stay as they are)
test-latest:
	rm -rf $(LATEST)
	$(PYTHON) -m venv $(LATEST)
	$(LATEST)/bin/python -m pip install --quiet --upgrade pip
	extras=$$($(LATEST)/bin/python -c "import tomllib; \
	  print(','.join(tomllib.load(open('pyproject.toml', 'rb'))['project']['optional-dependencies']))"); \
	  $(LATEST)/bin/python -m pip install --quiet --upgrade --upgrade-strategy eager -e ".[$$extras]"
	$(LATEST)/bin/python -m pip list --format=freeze > $(LATEST)/versions.txt
	@echo "versions tested: $(LATEST)/versions.txt (differences from the lock:)"
	@diff <(grep -i -E '^[a-z0-9._-]+==' $(LOCK) | sed 's/ .*//' | $(NAME_VERSION)) \
	  <(grep -v -i -E '^(-e |#|arena.studio==|pip==|setuptools==)' $(LATEST)/versions.txt \
	    | $(NAME_VERSION)) | grep '^>' || true
	QT_QPA_PLATFORM=$${QT_QPA_PLATFORM:-offscreen} $(LATEST)/bin/python -m pytest -q -p no:cacheprovider

clean:
	rm -rf $(VENV) $(LATEST) .pytest_cache .ruff_cache
