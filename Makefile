# Two commands do all the set-up on a fresh machine: `make demo` and `make test`.
# Both create .venv if missing and install the pinned dependencies once; the stamp file
# makes the second run quick.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test lint pytest bench gallery fuzz clean

$(STAMP): pyproject.toml
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test,cluster]"
	@touch $(STAMP)

demo: $(STAMP)
	$(BIN)/genfield demo

test: $(STAMP) lint pytest

lint: $(STAMP)
	$(BIN)/ruff check genfield tests

pytest: $(STAMP)
	$(BIN)/python -m pytest

bench: $(STAMP)
	$(BIN)/genfield bench

gallery: $(STAMP)
	$(BIN)/python gallery/make_gallery.py

fuzz: $(STAMP)
	$(BIN)/python -m tests.fuzz_recipes --count 10000

clean:
	rm -rf $(VENV) build dist .pytest_cache .ruff_cache
