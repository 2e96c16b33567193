# tripsim: two commands on a fresh machine with Python 3.11 — `make demo` and `make test`.
PYTHON ?= $(shell command -v python3.11 || command -v python3)
VENV   ?= .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test lint bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/tripsim demo --out demo_out

# The tests that run the compiled kernels (speed profile, segment pass, state of charge,
# planner sweep and the physics functions compiled into them), run a second time with numba
# off so that the kernels run as Python and coverage sees them.
KERNEL_TESTS := tests/test_battery.py tests/test_drive.py tests/test_simulate.py \
	tests/test_fleet.py tests/test_planner.py tests/test_one_model.py tests/test_roadload.py \
	tests/test_powertrain.py tests/test_cabin.py tests/reference/test_energy_vs_solve_ivp.py \
	tests/reference/test_potential_energy.py tests/reference/test_range_to_empty.py \
	tests/reference/test_planner_optimality.py
KERNEL_MODULES := tripsim/battery.py,tripsim/energy.py,tripsim/drive.py,tripsim/plan/kernel.py,tripsim/compiled.py

test: $(STAMP)
	$(BIN)/ruff check tripsim tests routes_demo
	$(BIN)/lint-imports --no-cache
	$(BIN)/python -m pytest -q
	NUMBA_DISABLE_JIT=1 $(BIN)/python -m pytest -q -p no:cacheprovider $(KERNEL_TESTS) \
		--cov=tripsim --cov-report=
	$(BIN)/python -m coverage report --show-missing --include='$(KERNEL_MODULES)'

lint: $(STAMP)
	$(BIN)/ruff check tripsim tests routes_demo
	$(BIN)/lint-imports --no-cache

bench: $(STAMP)
	$(BIN)/tripsim bench

clean:
	rm -rf $(VENV) demo_out .pytest_cache .coverage
