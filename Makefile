# Two everyday commands: `make demo` and `make test`. Both create .venv on first use.
PY ?= python3
VENV := .venv
BIN := $(VENV)/bin
STAMP := $(VENV)/.installed
TEST_STAMP := $(VENV)/.installed-test

.PHONY: demo test lint install clean

# The runtime only (what `make demo` needs): bedside and its dependencies.
$(STAMP): pyproject.toml
	$(PY) -c 'import sys; sys.exit("bedside needs Python 3.11 or newer, found " + sys.version.split()[0]) if sys.version_info < (3, 11) else None'
	test -x $(BIN)/python || $(PY) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e .
	touch $(STAMP)

# The test tools on top (pytest, MNE-Python and the other outside references, ruff, mypy).
$(TEST_STAMP): $(STAMP)
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(TEST_STAMP)

install: $(TEST_STAMP)

# The ward demo (subject DEMO-001); its setup log goes to ./bedside-logs/.
demo: $(STAMP)
	$(BIN)/bedside demo

# Lint, type-check, then the whole suite. LSL discovery stays on this machine
# (tests/lsl_api.cfg: ResolveScope = machine). pytest's exit code 5 (no tests
# collected) is non-zero, so make fails on it too.
test: $(TEST_STAMP)
	$(BIN)/ruff check bedside tests
	$(BIN)/mypy
	LSLAPICFG=$(CURDIR)/tests/lsl_api.cfg $(BIN)/python -m pytest -q -p no:cacheprovider

clean:
	rm -rf $(VENV) build *.egg-info
