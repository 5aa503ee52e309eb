# leapwright: every set-up step lives here, so a fresh machine needs only `make demo` / `make test`.
SHELL := /bin/bash
.DEFAULT_GOAL := help

# bpy 5.1+ is built for CPython 3.13 only; bpy 4.2-5.0 for CPython 3.11 only.
PY313 ?= $(shell command -v python3.13 2>/dev/null && python3.13 -V >/dev/null 2>&1 || ls -d $$HOME/.pyenv/versions/3.13*/bin/python3.13 /usr/local/bin/python3.13 /usr/bin/python3.13 2>/dev/null | head -n 1)
PY311 ?= $(shell command -v python3.11 2>/dev/null && python3.11 -V >/dev/null 2>&1 || ls -d $$HOME/.pyenv/versions/3.11*/bin/python3.11 /usr/local/bin/python3.11 /usr/bin/python3.11 2>/dev/null | head -n 1)
PY313 := $(lastword $(PY313))
PY311 := $(lastword $(PY311))

BPY_NEWEST ?= 5.3.0
BPY_42 ?= 4.2.23
BPY_45 ?= 4.5.15
STAMP := .make

VENV := .venv
VPY := $(VENV)/bin/python
# Shared libraries that `import bpy` needs on Debian (4.2 also libxxf86vm1 libgomp1).
BPY_SYSLIBS := libx11-6 libxrender1 libxfixes3 libxi6 libxkbcommon0 libsm6 libice6 libgl1 libxxf86vm1 libgomp1

.PHONY: typecheck help setup setup-core setup-blender demo plan-demo docs-pictures test test-demo test-core test-blender test-blender-4.2 test-blender-4.5 test-blender-newest build fuzz bench clean

help:
	@echo "make demo   - build the demo scene and write a jump through the extension (sets itself up)"
	@echo "make test   - every test: core, CLI, and real Blender $(BPY_42) / $(BPY_45) / $(BPY_NEWEST)"
	@echo "make setup  - create .venv (Python 3.13, bpy $(BPY_NEWEST)), .venv-4.2 and .venv-4.5 (Python 3.11)"
	@echo "make build  - write dist/leapwright-<version>.zip (the Blender extension)"
	@echo "make fuzz   - the long property-based profile (not part of make test)"
	@echo "make bench  - benchmarks (ratios printed from one run)"

$(STAMP)/syslibs:
	@mkdir -p $(STAMP)
	@missing=""; for p in $(BPY_SYSLIBS); do dpkg -s $$p >/dev/null 2>&1 || missing="$$missing $$p"; done; \
	if [ -n "$$missing" ]; then echo "installing system libraries for bpy:$$missing"; \
	  apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $$missing; fi
	@touch $@

$(STAMP)/core: pyproject.toml
	@mkdir -p $(STAMP)
	@test -n "$(PY313)" || { echo "Python 3.13 not found (needed for bpy $(BPY_NEWEST)); set PY313=/path/to/python3.13"; exit 1; }
	test -x $(VPY) || $(PY313) -m venv $(VENV)
	$(VPY) -m pip install -q -e ".[dev]"
	@touch $@

$(STAMP)/bpy-newest: $(STAMP)/core $(STAMP)/syslibs
	$(VPY) -m pip install -q "bpy==$(BPY_NEWEST)"
	@touch $@

$(STAMP)/bpy-4.2: $(STAMP)/syslibs pyproject.toml
	@test -n "$(PY311)" || { echo "Python 3.11 not found (needed for bpy $(BPY_42))"; exit 1; }
	test -x .venv-4.2/bin/python || $(PY311) -m venv .venv-4.2
	.venv-4.2/bin/pip install -q "bpy==$(BPY_42)" pytest pygltflib scipy
	# the command line from this checkout (leapwright = addon/, leapwright.core = core/), for the tests that run it
	.venv-4.2/bin/pip install -q --no-deps -e .
	@touch $@

$(STAMP)/bpy-4.5: $(STAMP)/syslibs pyproject.toml
	@test -n "$(PY311)" || { echo "Python 3.11 not found (needed for bpy $(BPY_45))"; exit 1; }
	test -x .venv-4.5/bin/python || $(PY311) -m venv .venv-4.5
	.venv-4.5/bin/pip install -q "bpy==$(BPY_45)" pytest pygltflib scipy
	# the command line from this checkout (leapwright = addon/, leapwright.core = core/), for the tests that run it
	.venv-4.5/bin/pip install -q --no-deps -e .
	@touch $@

setup-core: $(STAMP)/core
setup-blender: $(STAMP)/bpy-newest $(STAMP)/bpy-4.2 $(STAMP)/bpy-4.5
setup: setup-core setup-blender

build: $(STAMP)/bpy-newest
	$(VPY) tools/build_extension.py --out dist

plan-demo: $(STAMP)/core
	$(VENV)/bin/leapwright plan --height 0.4 --fps 24 --chart blend_examples/out/plan_force.png

demo: build
	$(VPY) blend_examples/run_demo.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)" --out blend_examples/out

test-core: $(STAMP)/core
	$(VPY) -m pytest tests/core tests/cli

test-blender-newest: build
	$(VPY) tests/blender/run.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)"

test-blender-4.2: build $(STAMP)/bpy-4.2
	.venv-4.2/bin/python tests/blender/run.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)"

test-blender-4.5: build $(STAMP)/bpy-4.5
	.venv-4.5/bin/python tests/blender/run.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)"

test-blender: test-blender-newest test-blender-4.2 test-blender-4.5

# The demo runs once and its outputs are checked (the slow tier).
test-demo: demo
	$(VPY) -m pytest tests/blender_demo -q

test: test-core typecheck test-blender test-demo

# Refresh the committed README pictures from a demo run.
docs-pictures: build
	$(VPY) blend_examples/run_demo.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)" --out blend_examples/out --docs docs
	$(VENV)/bin/leapwright plan --height 0.4 --fps 24 --chart docs/plan_force.png > /dev/null
	$(VPY) blend_examples/docs_pictures.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)" --docs docs
	$(VPY) blend_examples/docs_gif.py --blend blend_examples/out/jump_demo.blend --docs docs
	$(VPY) blend_examples/docs_rigify.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)" --docs docs

typecheck: $(STAMP)/core
	PY311="$(PY311)" bash tools/typecheck.sh

fuzz: $(STAMP)/core
	$(VPY) tests/fuzz/run_fuzz.py

bench: build
	$(VPY) bench/run.py --zip "$$(ls -t dist/leapwright-*.zip | head -n 1)"

clean:
	rm -rf dist build $(STAMP) blend_examples/out .pytest_cache
