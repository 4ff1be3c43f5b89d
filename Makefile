# Two entry points: `make demo` and `make test`. Both build the virtual
# environment themselves, so a fresh machine needs only Python >= 3.11 and make.
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin

.PHONY: demo test venv clean

$(BIN)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test,parquet]"
	touch $@

venv: $(BIN)/.installed

demo: venv
	$(BIN)/python recipes/wardnoise/make_data.py
	$(BIN)/foldwall run recipes/wardnoise/study.yaml --out runs/wardnoise --replace

test: venv
	$(BIN)/python -m pytest -q -p no:cacheprovider

clean:
	rm -rf $(VENV) runs
