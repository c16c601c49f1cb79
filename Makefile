# Tessera: the two set-up commands are `make run` and `make test`.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.installed

.PHONY: run test bench clean screenshots

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

test: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(PY) -m pytest -q

bench: $(STAMP)
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/run.py
	QT_QPA_PLATFORM=offscreen $(PY) benchmarks/trajectory_bench.py

clean:
	rm -rf $(VENV) .pytest_cache
