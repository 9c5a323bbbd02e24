# Everything a fresh machine needs: `make demo` and `make test` create .venv on first use.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
EXTRAS := test,viz,cluster

# The second environment: the newest Python >= 3.12 found on PATH (.ci/newest-python) with
# the newest Mesa it installs, for the tests of the Mesa model and the browser view.
NEWEST      := .venv-newest
NEWEST_TESTS := tests/dynamics/test_mesa_model.py tests/view
# A clean environment the built wheel is installed into (make package-check).
WHEEL_VENV  := .venv-wheel

.PHONY: demo test test-newest lint typecheck package-check bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e ".[$(EXTRAS)]"
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/womlab run demo --out out/demo

test: $(STAMP)
	$(BIN)/python -m pytest -q
	@$(MAKE) --no-print-directory test-newest

test-newest: $(STAMP)
	@newest="$$(.ci/newest-python)"; \
	if [ -z "$$newest" ]; then \
		echo "make test: no Python >= 3.12 on PATH (python3.14, python3.13, python3.12): the Mesa-model and view tests ran only on $$($(BIN)/python -c 'import platform, mesa; print("Python", platform.python_version(), "with Mesa", mesa.__version__)')"; \
		exit 0; \
	fi; \
	if [ ! -f $(NEWEST)/.installed ] || [ pyproject.toml -nt $(NEWEST)/.installed ] \
	   || [ "$$(cat $(NEWEST)/.installed)" != "$$newest" ]; then \
		rm -rf $(NEWEST) && "$$newest" -m venv $(NEWEST) && \
		$(NEWEST)/bin/pip install --quiet --upgrade pip && \
		$(NEWEST)/bin/pip install --quiet --upgrade -e ".[test,viz]" && \
		echo "$$newest" > $(NEWEST)/.installed || exit 1; \
	fi; \
	echo "make test: the Mesa-model and view tests again on $$($(NEWEST)/bin/python -c 'import platform, mesa; print("Python", platform.python_version(), "with Mesa", mesa.__version__)')"; \
	$(NEWEST)/bin/python -m pytest -q -p no:cacheprovider $(NEWEST_TESTS)

lint: $(STAMP)
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .

typecheck: $(STAMP)
	$(BIN)/mypy

# Build the wheel, install it (not editable, no extras) into a clean environment, run shipped
# demos: a batch and a sweep (the base install writes Parquet).
package-check: $(STAMP)
	rm -rf dist $(WHEEL_VENV) out/package-check
	$(BIN)/pip wheel --quiet --no-deps --wheel-dir dist .
	$(PYTHON) -m venv $(WHEEL_VENV)
	$(WHEEL_VENV)/bin/pip install --quiet --upgrade pip
	$(WHEEL_VENV)/bin/pip install --quiet dist/womlab-*.whl
	mkdir -p out && cd out && ../$(WHEEL_VENV)/bin/womlab --version
	mkdir -p out/package-check && cd out/package-check && ../../$(WHEEL_VENV)/bin/womlab init demo \
		&& ../../$(WHEEL_VENV)/bin/womlab run demo --replicates 2 --jobs 1 --quiet --out run-demo \
		&& ../../$(WHEEL_VENV)/bin/womlab check demo.toml \
		&& test -f run-demo/curves.csv && test -f run-demo/adoption.png \
		&& ../../$(WHEEL_VENV)/bin/womlab sweep sweep-demo --out sweep-demo --jobs 2 --quiet \
		&& test -f sweep-demo/runs.parquet && test -f sweep-demo/report.html

bench: $(STAMP)
	$(BIN)/python benchmarks/engines.py
	$(BIN)/python benchmarks/sweeps.py
	$(BIN)/python benchmarks/networks.py
	$(BIN)/python benchmarks/seeding.py
	$(BIN)/python benchmarks/calibration.py

clean:
	rm -rf $(VENV) $(NEWEST) $(WHEEL_VENV) dist out
