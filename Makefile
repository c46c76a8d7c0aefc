# Two commands do all set-up on a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV   ?= .venv
PY      = $(VENV)/bin/python
PORT   ?= 8866

.PHONY: demo test bench clean-venv

$(VENV)/.installed: pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[test]'
	touch $@

demo: $(VENV)/.installed
	$(VENV)/bin/diskexplorer demo --port $(PORT)

test: $(VENV)/.installed
	$(PY) -m pytest

bench: $(VENV)/.installed
	for b in benchmarks/bench_*.py; do echo "== $$b"; $(PY) $$b || exit 1; done

clean-venv:
	rm -rf $(VENV)
