# The two commands README.md names: `make run` and `make test`.
# Both do all set-up themselves on a fresh Debian machine with Python 3.11.
VENV ?= .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed
SUDO := $(shell [ "$$(id -u)" = 0 ] || echo sudo)
DATA ?= instance

.PHONY: run test lint bench chromium clean

$(STAMP): pyproject.toml
	@python3 -m venv --help >/dev/null 2>&1 || ($(SUDO) apt-get update && $(SUDO) apt-get install -y python3-venv)
	python3 -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

chromium:
	@command -v chromium >/dev/null 2>&1 || ($(SUDO) apt-get update && $(SUDO) apt-get install -y chromium)

run: $(STAMP)
	$(VENV)/bin/rondo serve --demo --data $(DATA)

test: $(STAMP) chromium
	$(PY) -m ruff check solver webapp tests
	$(PY) -m pytest

bench: $(STAMP)
	$(PY) tests/benchmarks/bench_loop.py
	$(PY) tests/benchmarks/bench_day.py
	$(PY) tests/benchmarks/bench_week.py

clean:
	rm -rf $(VENV) .pytest_cache .hypothesis
