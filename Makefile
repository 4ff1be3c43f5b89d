# Two entry points: `make demo` and `make test`. Both build the virtual
# environment themselves, so a fresh machine needs only Python >= 3.11 and make.
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin

.PHONY: demo test venv clean

$(BIN)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $@

venv: $(BIN)/.installed

demo: venv
	$(BIN)/python recipes/breath_pilot/make_data.py
	rm -rf runs/breath_pilot
	$(BIN)/foldwall run recipes/breath_pilot/study.yaml --out runs/breath_pilot
	@echo "demo results: runs/breath_pilot/results.json (tables: runs/breath_pilot/*.csv)"

test: venv
	$(BIN)/python -m pytest -q -p no:cacheprovider

clean:
	rm -rf $(VENV) runs
