# exactband: make install | demo | test | bench | validate
# `make install` is idempotent: it (re)creates .venv at the repository root only
# when pyproject.toml changed since the last install.

PYTHON ?= python3
# test processes (pytest-xdist); `make test TEST_WORKERS=0` runs the suite in this one
TEST_WORKERS ?= 2
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed

.PHONY: install demo test bench validate clean

install: $(STAMP)

$(STAMP): pyproject.toml
	@test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	@touch $(STAMP)

demo: install
	$(PY) -m exactband.demo tables/demo.toml output/demo

test: install
	$(PY) -m ruff check src tests bench
	$(PY) -m pytest -n $(TEST_WORKERS)

bench: install
	$(PY) bench/run.py

# random designs over the whole documented range (minutes; not part of `make test`)
VALIDATE_COUNT ?= 2000
validate: install
	$(PY) bench/validate_range.py --count $(VALIDATE_COUNT) --workers 2

clean:
	rm -rf $(VENV) build dist src/*.egg-info .pytest_cache .hypothesis .ruff_cache
