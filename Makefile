# Set-up and everyday commands. Everything installs into a local virtual environment.
PYTHON ?= python3
VENV ?= .venv
BIN := $(VENV)/bin
DEMO_OUT ?= out/demo
# pytest-xdist workers: on 2 cores the suite takes about 4 minutes (6 on one worker)
TEST_WORKERS ?= 2

.PHONY: demo test lint bench install clean

$(BIN)/activate:
	@$(PYTHON) -c "import sys; sys.exit(0 if sys.version_info >= (3, 11) else 'riskreport needs Python >= 3.11')"
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(BIN)/activate
	$(BIN)/python -m pip install --quiet -e '.[dev]'
	$(BIN)/python -m riskreport.report.system_check
	@touch $@
	@echo "riskreport is installed as $(BIN)/riskreport (or: source $(BIN)/activate, then riskreport); first brief on your own data: docs/quickstart.md"

install: $(VENV)/.installed

# The main job on the bundled, invented demo scenario. --force: the demo folder is the tool's own.
demo: install
	$(BIN)/riskreport demo --out $(DEMO_OUT) --force
	@echo "Run the command line as $(BIN)/riskreport; your own data: docs/quickstart.md"

lint: install
	$(BIN)/ruff check riskreport tests bench example_inputs report_templates
	$(BIN)/ruff format --check riskreport tests bench example_inputs report_templates
	$(BIN)/mypy

test: lint
	$(BIN)/python -m pytest -q -n $(TEST_WORKERS)

bench: install
	$(BIN)/python bench/run.py
	$(BIN)/python bench/calibration.py
	$(BIN)/python bench/generation.py
	$(BIN)/python bench/cache.py

clean:
	rm -rf $(VENV) out .pytest_cache .mypy_cache .ruff_cache *.egg-info
