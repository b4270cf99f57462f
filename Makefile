# widgetkit: the two commands of the README, and a few for developers.
#   make demo   set up .venv and open the quick-start notebook in JupyterLab
#   make test   set up .venv and run the whole test suite (unit, widgets, notebooks, browser)
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test setup lint bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e ".[test,dev]"
	touch $(STAMP)

setup: $(STAMP)

demo: $(STAMP)
	$(BIN)/widgetkit demo

# pytest exits 5 when it collects no test; that is not a failure of the suite itself
test: $(STAMP)
	$(BIN)/python -m pytest --nbval-lax tests sample_notebooks; rc=$$?; [ $$rc -eq 5 ] && rc=0; exit $$rc

lint: $(STAMP)
	$(BIN)/ruff check widgetkit tests benchmarks

bench: $(STAMP)
	$(BIN)/python benchmarks/run_all.py

clean:
	rm -rf $(VENV) .pytest_cache build *.egg-info
