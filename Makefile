# The two set-up commands: `make demo` and `make test`. Both create or reuse .venv and
# install the project from its own files first.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: demo test install bench clean

$(STAMP): pyproject.toml
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

install: $(STAMP)

demo: $(STAMP)
	$(BIN)/bandgate demo

test: $(STAMP)
	$(BIN)/python -m pytest $(PYTEST_ARGS)

bench: $(STAMP)
	$(BIN)/bandgate bench

clean:
	rm -rf $(VENV) var .pytest_cache
