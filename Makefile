# Two entry points: `make serve` and `make test`. Each builds .venv as needed.
# `make bench` runs the benchmarks (README, "Performance").
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
PORT   ?= 8000

.PHONY: serve test bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[plot]"
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test,plot]"
	touch $@ $(VENV)/.installed

serve: $(VENV)/.installed
	PORT=$(PORT) $(BIN)/gunicorn --config deploy/gunicorn.conf.py "service.app:create_app()"

test: $(VENV)/.installed-test
	$(BIN)/ruff check model service tests bench scripts
	$(BIN)/python -m pytest

$(VENV)/.installed-bench: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test,plot,bench]"
	touch $@ $(VENV)/.installed-test $(VENV)/.installed

bench: $(VENV)/.installed-bench
	$(BIN)/python -m bench

clean:
	rm -rf $(VENV) .pytest_cache
