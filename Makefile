# Two commands do all set-up: `make run` and `make test`.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed

.PHONY: run test bench load clean

$(BIN)/python:
	$(PY) -m venv $(VENV)

$(STAMP): $(BIN)/python pyproject.toml
	$(BIN)/pip install -q --upgrade pip
	$(BIN)/pip install -q -e '.[test]'
	touch $(STAMP)

run: $(STAMP)
	$(BIN)/ohmpick serve --data .data

test: $(STAMP)
	$(BIN)/python -m pytest -q

bench: $(STAMP)
	$(BIN)/python -m bench

load: $(STAMP)
	$(BIN)/python -m bench load_lan

clean:
	rm -rf $(VENV) .data
