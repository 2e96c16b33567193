# tripsim: two commands on a fresh machine with Python 3.11 — `make demo` and `make test`.
PYTHON ?= $(shell command -v python3.11 || command -v python3)
VENV   ?= .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
# Leaflet for the map pages and Swagger UI for the service's /docs, from the npm registry
# (web/package-lock.json; no install scripts run), copied into the packages (not committed):
# pages from the CLI carry Leaflet inline, the service sends every file itself.
LEAFLET := tripsim/data/leaflet/leaflet.js

.PHONY: demo test lint bench clean assets serve bench-service

$(STAMP): pyproject.toml | $(LEAFLET)
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

$(LEAFLET): web/package.json web/package-lock.json
	npm ci --prefix web --ignore-scripts --no-audit --no-fund --loglevel=error
	rm -rf tripsim/data/leaflet api/static/swagger
	mkdir -p tripsim/data/leaflet/images api/static/swagger
	cp web/node_modules/swagger-ui-dist/swagger-ui-bundle.js web/node_modules/swagger-ui-dist/swagger-ui.css \
	   web/node_modules/swagger-ui-dist/favicon-32x32.png web/node_modules/swagger-ui-dist/LICENSE api/static/swagger/
	cp web/node_modules/leaflet/dist/leaflet.css web/node_modules/leaflet/LICENSE tripsim/data/leaflet/
	cp web/node_modules/leaflet/dist/images/*.png tripsim/data/leaflet/images/
	cp web/node_modules/leaflet/dist/leaflet.js tripsim/data/leaflet/

assets: $(LEAFLET)

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
	$(BIN)/ruff check tripsim api tests routes_demo
	$(BIN)/lint-imports --no-cache
	$(BIN)/python -m pytest -q
	NUMBA_DISABLE_JIT=1 $(BIN)/python -m pytest -q -p no:cacheprovider $(KERNEL_TESTS) \
		--cov=tripsim --cov-report=
	$(BIN)/python -m coverage report --show-missing --include='$(KERNEL_MODULES)'

lint: $(STAMP)
	$(BIN)/ruff check tripsim api tests routes_demo
	$(BIN)/lint-imports --no-cache

serve: $(STAMP)
	$(BIN)/tripsim serve

bench-service: $(STAMP)
	$(BIN)/python -m tripsim_api.bench

bench: $(STAMP)
	$(BIN)/tripsim bench

clean:
	rm -rf $(VENV) demo_out .pytest_cache .coverage web/node_modules tripsim/data/leaflet api/static/swagger
