# Two commands do all the set-up on a fresh machine:
#   make demo   builds the invented demo project's report into build/
#   make test   runs the whole test suite
# Each creates its own virtual environment in .venv/ on first use.

PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e '.[test,dask]'
	$(BIN)/python -m ipykernel install --sys-prefix --name python3 >/dev/null
	# bytecode for calcs/ now: where PYTHONDONTWRITEBYTECODE is set (this machine), every kernel
	# and worker would otherwise compile it from source again (≈ 0.1 s a process; a stale file is
	# simply ignored after an edit)
	$(BIN)/python -m compileall -q calcs
	touch $(STAMP)

.PHONY: venv demo test test-fast bench clean
venv: $(STAMP)

demo: $(STAMP)
	$(BIN)/freerun build demo_project

test: $(STAMP)
	$(BIN)/pytest -q tests
	$(BIN)/pytest -q --nbval-lax templates/

test-fast: $(STAMP)
	$(BIN)/pytest -q tests -m "not slow"

bench: $(STAMP)
	$(BIN)/python benchmarks/bench_build.py
	$(BIN)/python benchmarks/bench_thermal.py
	$(BIN)/python benchmarks/bench_screen.py
	$(BIN)/python benchmarks/bench_uncertainty.py

clean:
	rm -rf build/*/ .pytest_cache
