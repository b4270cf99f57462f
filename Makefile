# widgetkit: the two commands of the README, and a few for developers.
#   make demo   set up .venv with what the demo needs and open the quick-start notebook
#   make test   set up .venv with the test tools too and run the whole test suite
# Both work as root (most containers) and as an ordinary user: as root, `widgetkit demo`
# passes Jupyter's --allow-root itself and says so in one line.
PYTHON ?= python3
VENV   ?= .venv
BIN    := $(VENV)/bin
# one stamp per set of extras, so `make demo` never installs the test tools
DEMO_STAMP := $(VENV)/.installed-demo
TEST_STAMP := $(VENV)/.installed-test
DEV_STAMP  := $(VENV)/.installed-dev

.PHONY: demo test setup lint bench clean

$(BIN)/python:
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(DEMO_STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e .
	touch $@

$(TEST_STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test]"
	touch $@ $(DEMO_STAMP)

$(DEV_STAMP): pyproject.toml | $(BIN)/python
	$(BIN)/python -m pip install --quiet -e ".[test,dev]"
	touch $@ $(TEST_STAMP) $(DEMO_STAMP)

setup: $(DEV_STAMP)

demo: $(DEMO_STAMP)
	$(BIN)/widgetkit demo $(DEMO_ARGS)

# pytest exits 5 when it collects no test; that is not a failure of the suite itself
test: $(TEST_STAMP)
	$(BIN)/python -m pytest --nbval-lax tests sample_notebooks; rc=$$?; [ $$rc -eq 5 ] && rc=0; exit $$rc

lint: $(DEV_STAMP)
	$(BIN)/ruff check widgetkit tests benchmarks

bench: $(DEMO_STAMP)
	$(BIN)/python benchmarks/run_all.py

clean:
	rm -rf $(VENV) .pytest_cache build dist *.egg-info
