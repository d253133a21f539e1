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

# make lab: copy the workbooks, examples and docs into the git-ignored lab/ (missing files only;
# your edited copies are kept), then serve the whole repository in JupyterLab and open the
# start page. Saves into workbooks/ are refused: its stored outputs are the regression tests'.
# Extra JupyterLab options: make lab LAB_ARGS="--no-browser --port=8890".
LAB_START := lab/workbooks/00_start_here.ipynb
LAB_ARGS ?=
lab: setup
	@$(VENV)/bin/viscometry workspace lab
	@start=$(LAB_START); [ -f "$$start" ] || start=lab/workbooks; \
	root=; [ "$$(id -u)" = 0 ] && root=--allow-root; \
	exec $(VENV)/bin/jupyter lab --ServerApp.root_dir="$(CURDIR)" $$root \
		--LabApp.default_url="/lab/tree/$$start" \
		--ContentsManager.pre_save_hook=viscometry.workspace.guard_shipped_workbooks $(LAB_ARGS)

bench: setup
	@$(VENV)/bin/python benchmarks/run_all.py

refresh-notebooks: setup
	@$(VENV)/bin/python scripts/refresh_notebooks.py
