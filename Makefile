# Tessera: the two set-up commands are `make run` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: run test test-desktop lint bench fuzz clean screenshots

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

# The window under a real X server (Xvfb), one run per screen size and one HiDPI run; needs the
# Debian/Ubuntu packages xvfb and xauth (and Qt's xcb libraries: README, Quick start).
# Screenshots land in docs/screenshots/desktop/ (the 1366x768 ones are kept in git).
DESKTOP_SIZES := 1280x800 1366x768 1600x900 1920x1080
XVFB_RUN = xvfb-run -a -s "-screen 0 $(1)x24 -nolisten tcp"
DESKTOP_ENV = TESSERA_DESKTOP=1 QT_QPA_PLATFORM=xcb

test-desktop: $(STAMP)
	@command -v xvfb-run >/dev/null || { echo "make test-desktop needs Xvfb: sudo apt-get install xvfb xauth"; exit 2; }
	@QT_QPA_PLATFORM=xcb $(PY) -m app.cli.display_check
	@for size in $(DESKTOP_SIZES); do \
		echo "== screen $$size"; \
		$(DESKTOP_ENV) $(call XVFB_RUN,$${size}) $(PY) -m pytest -q -p no:cacheprovider tests/desktop || exit 1; \
	done
	@echo "== screen 2560x1600, QT_SCALE_FACTOR=2"
	@$(DESKTOP_ENV) QT_SCALE_FACTOR=2 $(call XVFB_RUN,2560x1600) $(PY) -m pytest -q -p no:cacheprovider tests/desktop

# The long fuzz campaign of damaged inputs (issue 14): 10,000 seeded cases through every reader
# and the pipeline; prints the figures recorded in the README's validation section.
fuzz: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(PY) scripts/fuzz.py --cases 10000 --seed 14

bench: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/run.py
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/trajectory_bench.py
	$(PY) benchmarks/result_file_bench.py
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/window_bench.py
	$(PY) benchmarks/scan_process_bench.py
	$(PY) benchmarks/selection_memory_bench.py
	$(PY) benchmarks/gb_bench.py
	$(PY) benchmarks/hotspots_bench.py

clean:
	rm -rf $(VENV) .pytest_cache
