# bearbound: set-up, tests, demo and checks.  `make help` lists the targets.
# Every target that runs code first runs `setup`, so a fresh machine needs only `make test`.
# `make help` prints the `## ` comment of each target's line: a target without one is not listed
# (tests/test_cli.py checks that every .PHONY target is).

PYTHON ?= python3
VENV   ?= .venv
# Lives inside the venv, so deleting the venv also forces a fresh set-up.
STAMP  := $(VENV)/bearbound-setup.stamp
PY     := $(VENV)/bin/python

MAKEFLAGS += --no-print-directory

.PHONY: help setup venv mkl test demo verify bench clean

help:  ## list these targets
	@awk -F ':.*## ' '/^[a-z][a-z ]*:.*## / { n = split($$1, names, " "); line = "make " names[1]; \
		for (i = 2; i <= n; i++) line = line ", make " names[i]; printf "%-24s %s\n", line, $$2 }' $(MAKEFILE_LIST)

setup venv: $(STAMP)  ## create .venv and install bearbound with its test tools
	@:

# Re-run when the dependencies or the set-up script change; otherwise this is a no-op.
$(STAMP): pyproject.toml scripts/setup_env.sh
	@PYTHON="$(PYTHON)" VENV="$(VENV)" bash scripts/setup_env.sh
	@touch "$@"

# Optional: MKL Pardiso for Clarabel (solver/conic.py picks it for large programs when present).
MKL_STAMP := $(VENV)/bearbound-mkl.stamp
mkl: $(MKL_STAMP)  ## also install MKL Pardiso, the faster linear solver for large meshes (~1 GB)
	@:

$(MKL_STAMP): $(STAMP)
	@echo "setup: installing the mkl extra (about 1 GB) into $(VENV)"
	@$(PY) -m pip install -q -e '.[test,mkl]'
	@touch "$@"

test: setup  ## run the test suite (3 to 5 minutes on 2 cores)
	@$(PY) -m pytest -q

demo: setup  ## solve the demo cases in examples/ (adaptive up to 60 s each; the silo on one fixed mesh with its factors of safety)
	@$(VENV)/bin/bearbound run examples/pump-house.toml
	@$(VENV)/bin/bearbound run examples/embankment-crest.toml
	@$(VENV)/bin/bearbound run examples/water-tank.toml
	@$(VENV)/bin/bearbound run examples/grain-silo.toml

verify: setup  ## run every verification case against its published value (finer meshes)
	@$(VENV)/bin/bearbound verify

bench: setup mkl  ## run the speed and accuracy benchmarks, which print their tables (installs mkl)
	@$(PY) benchmarks/run.py
	@$(PY) benchmarks/cases.py
	@$(PY) benchmarks/sweep_bench.py

clean:  ## remove out/ and caches (keeps .venv)
	@rm -rf out/ .pytest_cache/ .hypothesis/ build/ dist/ ./*.egg-info
	@find . \( -path ./$(VENV) -o -path ./.git \) -prune -o -type d -name __pycache__ -exec rm -rf {} +
