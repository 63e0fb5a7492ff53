# The two commands of the README: `make demo` and `make test`.
# Both build the virtual environment they need from pinned versions.
PY      ?= python3
VENV    := .venv
BIN     := $(VENV)/bin
STAMP   := $(VENV)/.installed

.PHONY: demo test lint typecheck unit bench clean system-deps

$(STAMP): pyproject.toml constraints.txt
	$(PY) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -c constraints.txt -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/riskreg demo

lint: $(STAMP)
	$(BIN)/ruff check riskreg tests
	$(BIN)/ruff format --check riskreg tests

typecheck: $(STAMP)
	$(BIN)/mypy

unit: $(STAMP)
	$(BIN)/pytest --cov=riskreg --cov-report= $(PYTEST_ARGS)
	$(BIN)/coverage report --include='riskreg/engineering/*' --fail-under=95 --show-missing

test: lint typecheck unit

clean:
	rm -rf $(VENV) .pytest_cache .mypy_cache .ruff_cache .coverage
