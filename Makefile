# bearbound: set-up, tests, demo and checks.  `make help` lists the targets.
# Every target that runs code first runs `setup`, so a fresh machine needs only `make test`.

PYTHON ?= python3
VENV   ?= .venv
# Lives inside the venv, so deleting the venv also forces a fresh set-up.
STAMP  := $(VENV)/bearbound-setup.stamp
PY     := $(VENV)/bin/python

MAKEFLAGS += --no-print-directory

.PHONY: help setup venv mkl test demo verify bench clean

help:
	@echo "make setup   create $(VENV) and install bearbound with test tools"
	@echo "make mkl     also install MKL Pardiso, the faster linear solver for large meshes (~1 GB)"
	@echo "make test    run the test suite"
	@echo "make demo    solve the demo cases in examples/"
	@echo "make verify  run the verification cases"
	@echo "make bench   run the benchmarks"
	@echo "make clean   remove out/ and caches (keeps $(VENV))"

setup venv: $(STAMP)
	@:

# Re-run when the dependencies or the set-up script change; otherwise this is a no-op.
$(STAMP): pyproject.toml scripts/setup_env.sh
	@PYTHON="$(PYTHON)" VENV="$(VENV)" bash scripts/setup_env.sh
	@touch "$@"

# Optional: MKL Pardiso for Clarabel (solver/conic.py picks it for large programs when present).
MKL_STAMP := $(VENV)/bearbound-mkl.stamp
mkl: $(MKL_STAMP)
	@:

$(MKL_STAMP): $(STAMP)
	@echo "setup: installing the mkl extra (about 1 GB) into $(VENV)"
	@$(PY) -m pip install -q -e '.[test,mkl]'
	@touch "$@"

test: setup
	@$(PY) -m pytest -q

demo: setup
	@$(VENV)/bin/bearbound run examples/pump-house.toml
	@$(VENV)/bin/bearbound run examples/embankment-crest.toml
	@$(VENV)/bin/bearbound run examples/water-tank.toml

verify: setup
	@$(VENV)/bin/bearbound verify

bench: setup mkl
	@$(PY) benchmarks/run.py
	@$(PY) benchmarks/cases.py
	@$(PY) benchmarks/sweep_bench.py

clean:
	@rm -rf out/ .pytest_cache/ .hypothesis/ build/ dist/ ./*.egg-info
	@find . \( -path ./$(VENV) -o -path ./.git \) -prune -o -type d -name __pycache__ -exec rm -rf {} +
