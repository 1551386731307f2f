# Two entry points for people: `make lab` and `make test`. Everything else is plumbing.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
PORT   ?= 8888
# JupyterLab refuses to run as root unless told; containers and CI machines often are root.
ROOT_FLAG := $(if $(filter 0,$(shell id -u)),--allow-root,)

.PHONY: lab test venv clean demo bench

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --upgrade pip

# Marker files so that a second `make` does not reinstall.
$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install -e '.[test]'
	touch $@ $(VENV)/.installed

venv: $(VENV)/.installed

lab: $(VENV)/.installed
	@echo "JupyterLab will open on notebooks/ at http://127.0.0.1:$(PORT)/lab (the token is printed below)."
	$(BIN)/jupyter lab --ServerApp.root_dir=notebooks --ServerApp.ip=127.0.0.1 --ServerApp.port=$(PORT) --no-browser $(ROOT_FLAG)

# Lint first (seconds): the import-order, unused-name and undefined-name rules of pyproject.toml,
# then the stage contract (import-linter), then the suite.
test: $(VENV)/.installed-test
	$(BIN)/ruff check kit tests bench
	$(BIN)/lint-imports
	$(BIN)/python -m pytest

demo: $(VENV)/.installed
	$(BIN)/python -m kit demo

bench: $(VENV)/.installed
	$(BIN)/python bench/run_all.py

clean:
	rm -rf $(VENV) .pytest_cache
