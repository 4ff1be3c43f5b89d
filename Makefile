# Two entry points: `make demo` and `make test`. Both build the virtual
# environment themselves, so a fresh machine needs only Python >= 3.11 and make.
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin

.PHONY: demo test check venv clean

$(BIN)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $@

venv: $(BIN)/.installed

# The demo needs foldwall alone, not the test tools.
$(BIN)/.installed-core: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(BIN)/.installed-dev: $(BIN)/.installed
	$(BIN)/python -m pip install --quiet -e ".[test,dev]"
	touch $@

demo: $(BIN)/.installed-core
	$(BIN)/python recipes/breath_pilot/make_data.py
	rm -rf runs/breath_pilot
	$(BIN)/foldwall run recipes/breath_pilot/study.yaml --out runs/breath_pilot --jobs -1
	@echo "demo report: runs/breath_pilot/report.html (results.json, predictions.csv and tables beside it)"

test: venv
	$(BIN)/python -m pytest -q -p no:cacheprovider

# Formatting, lint, strict types and the import layering (the contract in pyproject.toml).
check: $(BIN)/.installed-dev
	$(BIN)/ruff format --check src tests bench recipes
	$(BIN)/ruff check src tests bench recipes
	$(BIN)/mypy
	$(BIN)/lint-imports

clean:
	rm -rf $(VENV) runs
