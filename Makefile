# Tessera: the two set-up commands are `make run` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: run test lint bench fuzz clean screenshots

$(PY):
	$(PYTHON) -m venv $(VENV)

$(STAMP): pyproject.toml | $(PY)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e ".[test]"
	@echo "compiling the energy kernels (once; cached by numba)..."
	$(PY) -c "from energy.warmup import prepare_kernels; prepare_kernels()"
	touch $(STAMP)

run: $(STAMP)
	@$(VENV)/bin/tessera; status=$$?; [ $$status -eq 3 ] || exit $$status

# The habits that check themselves: ruff (style, pyflakes, import order) and the import-linter
# contracts in pyproject.toml (energy imports no app/Qt/matplotlib/argparse; no cycles).
lint: $(STAMP)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/lint-imports --no-cache

test: lint
	QT_QPA_PLATFORM=offscreen $(PY) -m pytest -q

# The long fuzz campaign of damaged inputs (issue 14): 10,000 seeded cases through every reader
# and the pipeline; prints the figures recorded in the README's validation section.
fuzz: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(PY) scripts/fuzz.py --cases 10000 --seed 14

bench: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/run.py
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/trajectory_bench.py

clean:
	rm -rf $(VENV) .pytest_cache
