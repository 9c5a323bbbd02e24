# Everything a fresh machine needs: `make demo` and `make test` create .venv on first use.
PYTHON ?= python3
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed

.PHONY: demo test bench clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/pip install --quiet --upgrade pip
	$(BIN)/pip install --quiet -e ".[test,store,cluster]"
	touch $(STAMP)

demo: $(STAMP)
	$(BIN)/womlab run configs/demo.toml --out out/demo

test: $(STAMP)
	$(BIN)/python -m pytest -q

bench: $(STAMP)
	$(BIN)/python benchmarks/engines.py
	$(BIN)/python benchmarks/sweeps.py
	$(BIN)/python benchmarks/calibration.py

clean:
	rm -rf $(VENV) out
