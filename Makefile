# SPDX-License-Identifier: Apache-2.0
# Front door: `make demo` runs the demo pipeline, `make check` runs every test.
# Both install missing Debian packages first (scripts/install-deps.sh, needs root).
BUILD ?= build
JOBS ?= $(shell nproc 2>/dev/null || echo 2)
DEMO_OUT ?= demo-out

.PHONY: all deps configure build check demo bench clean

all: build

deps:
	@bash scripts/install-deps.sh

configure: deps
	@cmake -S . -B $(BUILD) -DCMAKE_BUILD_TYPE=Release

build: configure
	@cmake --build $(BUILD) -j$(JOBS)

check: build
	@cd $(BUILD) && ctest --output-on-failure -j$(JOBS)

demo: build
	@bash scripts/demo.sh $(BUILD)/recofold $(DEMO_OUT)

clean:
	rm -rf $(BUILD) $(DEMO_OUT)
