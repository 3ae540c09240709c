# Two entry points: `make demo` and `make test`. Both create .venv if needed.
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
DEMO_STUDY := example_studies/anions-drinking-water/study.toml
DEMO_OUT := demo-output

.PHONY: demo test install benchmark clean

$(PY):
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip

$(VENV)/.installed: $(PY) pyproject.toml
	$(PY) -m pip install --quiet -e '.[test]'
	touch $@

install: $(VENV)/.installed

demo: install
	$(PY) -m validator run $(DEMO_STUDY) --out $(DEMO_OUT) --force; rc=$$?; \
	  if [ $$rc -le 1 ]; then echo "dossier and results.json written to $(CURDIR)/$(DEMO_OUT)/"; fi; \
	  exit $$(( rc == 1 ? 0 : rc ))

test: install
	$(PY) -m pytest $(PYTEST_ARGS)

benchmark: install
	$(PY) benchmarks/bench_dossier.py

clean:
	rm -rf $(DEMO_OUT) build *.egg-info .pytest_cache
