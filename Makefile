# Kinfill developer commands. Every target sets up .venv first (only when
# pyproject.toml changed since the last install), so a fresh clone needs nothing else.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.kinfill-installed
DEMO   := sample_sheets/river_survey.xlsx
DEMO_OUT := build/demo/river_survey.filled.xlsx

.PHONY: setup run test lint bench clean

setup: $(STAMP)

$(STAMP): pyproject.toml
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test,dev]'
	@touch $(STAMP)

run: setup
	@if [ -n "$$DISPLAY$$WAYLAND_DISPLAY" ]; then \
		$(BIN)/kinfill-gui $(DEMO); \
	else \
		echo "No display found (DISPLAY and WAYLAND_DISPLAY are empty): running the headless fill of the demo sheet instead."; \
		mkdir -p build/demo && $(BIN)/kinfill fill $(DEMO) --out $(DEMO_OUT) --force; \
	fi

lint: setup
	$(BIN)/ruff check imputer_app tests benchmarks sample_sheets
	$(BIN)/mypy
	$(BIN)/lint-imports

test: lint
	QT_QPA_PLATFORM=offscreen $(BIN)/python -m pytest -q

bench: setup
	$(BIN)/python -m benchmarks

clean:
	rm -rf build .pytest_cache .mypy_cache .ruff_cache
