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
	$(BIN)/pip install --quiet --only-binary=playwright -c constraints.txt -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/riskreg demo

lint: $(STAMP)
	$(BIN)/ruff check riskreg tests
	$(BIN)/ruff format --check riskreg tests

typecheck: $(STAMP)
	$(BIN)/mypy

# The suite on SQLite (with coverage), then again on PostgreSQL when
# RISKREG_TEST_POSTGRES_URL names a server (.ci/run starts one). The browser tests
# drive the demo on SQLite, so the PostgreSQL pass leaves them out.
unit: $(STAMP)
	env -u RISKREG_TEST_POSTGRES_URL $(BIN)/pytest --cov=riskreg --cov-report= $(PYTEST_ARGS)
	$(BIN)/coverage report --include='riskreg/engineering/*' --fail-under=95 --show-missing
	@if [ -n "$${RISKREG_TEST_POSTGRES_URL:-}" ]; then \
	  echo "--- the suite again on PostgreSQL ---"; \
	  $(BIN)/pytest -q -m "not browser" $(PYTEST_ARGS); \
	fi

# The browser tests (tests/browser) drive Debian's Chromium through the Node.js driver
# bundled in Playwright's wheel (hence --only-binary above); no browser is downloaded.
# When Chromium is missing and we are root (a fresh CI machine), install it; a
# developer who has it is left alone, one without it and without root is told how.
HAVE_CHROMIUM ?= test -x "$${RISKREG_CHROMIUM:-}" || command -v chromium >/dev/null 2>&1 \
	|| test -x /usr/bin/chromium

system-deps:
	@if $(HAVE_CHROMIUM); then \
	  :; \
	elif [ "$$(id -u)" = 0 ]; then \
	  echo "Chromium is missing; installing it for the browser tests (apt-get)."; \
	  export DEBIAN_FRONTEND=noninteractive; \
	  apt-get update && apt-get install -y chromium; \
	else \
	  echo "Chromium is missing and only root can install it; the browser tests will" \
	       "fail until you run: sudo apt-get install -y chromium" >&2; \
	fi

test: system-deps lint typecheck unit

# Seconds per page, overhead over WeasyPrint's own layout and peak memory of the PDF
# reports on synthetic sites of 50 and 500 machines; writes bench/REPORTS.md (slow).
.PHONY: bench-reports
bench-reports: $(STAMP)
	$(BIN)/python bench/reports.py

# Benchmarks at plant and enterprise scale: synthetic registers of 50, 500 and 5,000
# machines (cached in bench/out/), served over HTTP, on SQLite and, when
# BENCH_POSTGRES_URL or RISKREG_TEST_POSTGRES_URL names a server, on PostgreSQL;
# writes bench/RESULTS.md. Slow; BENCH_SIZES=50,500 limits the sizes.
bench: $(STAMP)
	$(BIN)/python bench/run.py

clean:
	rm -rf $(VENV) .pytest_cache .mypy_cache .ruff_cache .coverage
