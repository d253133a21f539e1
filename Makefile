# Two entry points, both self-contained on a fresh clone (they create .venv first):
#   make demo   evaluate the demo lab's budgets headless and print them
#   make test   run the whole test suite: unit, property, doctest and notebook (nbval) tests
# See README.md.
SHELL := /bin/bash
VENV := .venv
export PYTHONHASHSEED := 0
export TQDM_DISABLE := 1

.PHONY: setup demo test lab bench refresh-notebooks

setup:
	@scripts/bootstrap.sh

demo: setup
	@$(VENV)/bin/viscometry demo

test:
	@scripts/bootstrap.sh --browser
	@scripts/run_tests.sh

lab: setup
	@$(VENV)/bin/jupyter lab workbooks

bench: setup
	@$(VENV)/bin/python benchmarks/run_all.py

refresh-notebooks: setup
	@$(VENV)/bin/python scripts/refresh_notebooks.py
