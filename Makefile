# Set-up and everyday commands. Only Python 3.11+ and make are needed.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin
# The demo records tell a story set on this date, so the demo shows every state.
DEMO_AS_OF ?= 2026-12-01

.PHONY: demo test clean

$(BIN)/recordkit: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $@

demo: $(BIN)/recordkit  ## build the demo site from records/ into site/
	$(BIN)/recordkit check -r records --as-of $(DEMO_AS_OF)
	$(BIN)/recordkit build -r records --as-of $(DEMO_AS_OF) -o site

test: $(BIN)/recordkit  ## run the whole test suite
	$(BIN)/python -m pytest

clean:
	rm -rf $(VENV) site artifacts .pytest_cache
