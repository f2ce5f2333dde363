# dxftruss - make demo: check the sample drawings; make test: the whole suite; make lint: ruff and mypy.
# Both create .venv from pyproject.toml on a fresh machine; nothing is installed by hand.
PYTHON ?= python3
VENV   := .venv
PY     := $(VENV)/bin/python
STAMP  := $(VENV)/.installed

.PHONY: demo test lint bench fuzz samples clean

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $(STAMP)

samples: $(STAMP)
	$(PY) samples/make_samples.py

demo: $(STAMP)
	$(PY) samples/make_samples.py
	mkdir -p out
	-$(VENV)/bin/dxftruss check samples/farm_shed_truss.dxf --loads samples/farm_shed_truss.toml \
		--pdf out/farm_shed_truss.check.pdf --dxf out/farm_shed_truss.check.dxf --json out/farm_shed_truss.check.json
	-$(VENV)/bin/dxftruss check samples/footbridge_truss.dxf --loads samples/footbridge_truss.toml \
		--pdf out/footbridge_truss.check.pdf --json out/footbridge_truss.check.json
	-$(VENV)/bin/dxftruss check samples/hoist_bracket.dxf --loads samples/hoist_bracket.toml \
		--pdf out/hoist_bracket.check.pdf --json out/hoist_bracket.check.json
	-$(VENV)/bin/dxftruss check samples/drafting_slips.dxf \
		--pdf out/drafting_slips.check.pdf --json out/drafting_slips.check.json
	-$(VENV)/bin/dxftruss check samples/farm_shed_truss.dxf --loads samples/farm_shed_truss.toml \
		--csv out/farm_shed_truss.cutlist.csv --quiet
	-$(VENV)/bin/dxftruss compare samples/farm_shed_truss.dxf samples/farm_shed_truss_rev_b.dxf \
		--loads samples/farm_shed_truss.toml --new-loads samples/farm_shed_truss_rev_b.toml \
		--pdf out/farm_shed_truss.compare.pdf --json out/farm_shed_truss.compare.json
	@echo "demo outputs are in out/"

test: $(STAMP)
	CI=$${CI:-} $(PY) -m pytest

lint: $(STAMP)
	$(VENV)/bin/ruff check dxftruss tests bench samples
	$(VENV)/bin/ruff format --check dxftruss tests bench samples
	$(VENV)/bin/mypy dxftruss

bench: $(STAMP)
	$(PY) bench/run_bench.py

fuzz: $(STAMP)
	$(PY) tests/fuzz/fuzz_long.py

clean:
	rm -rf $(VENV) out bench/generated .pytest_cache
