# reportgen: two set-up commands, `make demo` and `make test`. Everything installs into .venv.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
DEMO_OUT := out/demo

.PHONY: demo test lint clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

# Installs are stamped on pyproject.toml so repeated runs skip pip when nothing changed.
$(VENV)/.installed: pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml $(VENV)/.installed
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@

demo: $(VENV)/.installed
	$(BIN)/reportgen run manifests/demo.yaml --out $(DEMO_OUT)
	@echo "The demo dossier is in $(abspath $(DEMO_OUT)): dossier.html, dossier.pdf, results.json, tables/"

test: $(VENV)/.installed-test
	$(BIN)/python -m ruff check reportgen tests manifests tools
	$(BIN)/python -m pytest -q

clean:
	rm -rf $(VENV) out build *.egg-info
