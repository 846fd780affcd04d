# SPDX-License-Identifier: Apache-2.0
# Front door: `make demo` runs the demo pipeline, `make check` runs every test.
# Both install missing Debian packages first (scripts/install-deps.sh, needs root).
BUILD ?= build
JOBS ?= $(shell nproc 2>/dev/null || echo 2)
DEMO_OUT ?= demo-out
# check-sanitize: AddressSanitizer + UndefinedBehaviorSanitizer build without
# the learn module (RECOFOLD_WITH_LIBTORCH=OFF). It doubles as CI's build
# without libtorch: everything except `train`, learned methods and their
# tests must build and pass there.
SAN_BUILD ?= build-sanitize
# fuzz: libFuzzer targets (tests/fuzz) built with clang-14, ASan and UBSan,
# each run FUZZ_SECONDS from its seed corpus tests/fuzz/corpus/<name>/,
# FUZZ_JOBS targets at a time. clang-14 cannot compile Debian's ITK 5.2
# headers: the files including them are built with g++ (cmake/RecofoldGccObjects.cmake).
FUZZ_BUILD ?= build-fuzz
FUZZ_SECONDS ?= 60
FUZZ_JOBS ?= 2

.PHONY: all deps configure build check check-sanitize fuzz demo bench clean

all: build

deps:
	@bash scripts/install-deps.sh

configure: deps
	@cmake -S . -B $(BUILD) -DCMAKE_BUILD_TYPE=Release

build: configure
	@cmake --build $(BUILD) -j$(JOBS)

check: build
	@cd $(BUILD) && ctest --output-on-failure -j$(JOBS)

check-sanitize: deps
	@cmake -S . -B $(SAN_BUILD) -DCMAKE_BUILD_TYPE=Release -DRECOFOLD_WITH_LIBTORCH=OFF \
	  -DRECOFOLD_SANITIZE=address,undefined
	@t0=$$(date +%s); cmake --build $(SAN_BUILD) -j$(JOBS) && \
	  echo "check-sanitize: build done in $$(( $$(date +%s) - t0 )) s"
	@bash scripts/check-sanitize.sh $(SAN_BUILD) $(JOBS)

fuzz: deps
	@CC=clang-14 CXX=clang++-14 cmake -S . -B $(FUZZ_BUILD) -DCMAKE_BUILD_TYPE=Release \
	  -DRECOFOLD_WITH_LIBTORCH=OFF -DRECOFOLD_BUILD_TESTS=OFF -DRECOFOLD_FUZZ=ON \
	  -DRECOFOLD_SANITIZE=address,undefined
	@t0=$$(date +%s); cmake --build $(FUZZ_BUILD) -j$(JOBS) --target fuzz_targets && \
	  echo "fuzz: build done in $$(( $$(date +%s) - t0 )) s"
	@bash scripts/run-fuzz.sh $(FUZZ_BUILD) $(FUZZ_SECONDS) $(FUZZ_JOBS)

demo: build
	@bash scripts/demo.sh $(BUILD)/recofold $(DEMO_OUT)

# Every side-by-side benchmark -> bench/results.json + bench/results.md (idle machine; see bench/README.md).
bench: build
	@/usr/bin/python3 bench/run_all.py $(BUILD)

clean:
	rm -rf $(BUILD) $(SAN_BUILD) $(FUZZ_BUILD) $(DEMO_OUT)
