# make coverage: line and branch coverage of csrc/ (gcov + lcov) from the C tests and a
# replay of the fuzz corpus, and line coverage of ffwd/ (coverage.py) from the Python
# tests; prints the totals and, file by file, what never ran
# (build/coverage/summary.json). Goals: C lines >= 95%, C branches >= 90%, Python >= 90%.
COV_DIR ?= build/coverage
COV_PYTEST_ARGS ?= -q -p no:cacheprovider
LCOV := lcov --quiet --rc lcov_branch_coverage=1

.PHONY: coverage coverage-c coverage-py coverage-tools

coverage-tools: $(VENV_STAMP)
	@command -v lcov >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq lcov >/dev/null; \
	  else echo "make coverage: needs lcov"; exit 1; fi; }
	@$(VPY) -c 'import coverage' 2>/dev/null || $(VPY) -m pip install --quiet coverage

coverage-c: coverage-tools
	@rm -rf $(COV_DIR)/c && mkdir -p $(COV_DIR)/c
	$(VENV)/bin/cmake -S . -B $(COV_DIR)/c -DCMAKE_BUILD_TYPE=Debug -DFFWD_BUILD_TESTS=ON \
	  -DFFWD_BUILD_PYTHON=OFF -DFFWD_BUILD_PROGRAMS=OFF -DFFWD_WERROR=ON \
	  -DCMAKE_C_FLAGS="--coverage -O0 -g" -DCMAKE_EXE_LINKER_FLAGS=--coverage \
	  -DCMAKE_SHARED_LINKER_FLAGS=--coverage >/dev/null
	$(VENV)/bin/cmake --build $(COV_DIR)/c -j $(JOBS)
	@# a failing C test is reported by `make test`; coverage is still measured here
	cd $(COV_DIR)/c && FFWD_STRESS_READS=200000 $(CURDIR)/$(VENV)/bin/ctest -j $(JOBS) >/dev/null \
	  || echo "coverage-c: some C tests failed (run make test); coverage measured anyway"
	gcc --coverage -O0 -g -std=c11 -DFUZZ_REPLAY_MAIN -Icsrc/include -Icsrc fuzz/fuzz_api.c csrc/*.c \
	  -lm -o $(COV_DIR)/c/fuzz_replay
	cd $(COV_DIR)/c && find $(CURDIR)/fuzz/corpus/api $(CURDIR)/$(FUZZ_DIR)/corpus/api -type f 2>/dev/null \
	  | head -5000 | xargs -r ./fuzz_replay >/dev/null
	$(LCOV) --capture --directory $(COV_DIR)/c --output-file $(COV_DIR)/c-run.info 2>/dev/null
	$(LCOV) --capture --initial --directory $(COV_DIR)/c --output-file $(COV_DIR)/c-zero.info 2>/dev/null
	$(LCOV) -a $(COV_DIR)/c-zero.info -a $(COV_DIR)/c-run.info --output-file $(COV_DIR)/c-all.info 2>/dev/null
	$(LCOV) --extract $(COV_DIR)/c-all.info '$(CURDIR)/csrc/*' --output-file $(COV_DIR)/c-core.info 2>/dev/null
	$(LCOV) --remove $(COV_DIR)/c-core.info '$(CURDIR)/csrc/programs/*' --output-file $(COV_DIR)/c.info 2>/dev/null

coverage-py: coverage-tools $(INSTALL_STAMP)
	HYPOTHESIS_PROFILE=$(HYPOTHESIS_PROFILE) $(VPY) -m coverage run --branch --source=ffwd \
	  --data-file=$(COV_DIR)/.coverage -m pytest tests $(COV_PYTEST_ARGS) || true
	$(VPY) -m coverage json --data-file=$(COV_DIR)/.coverage -o $(COV_DIR)/py.json >/dev/null

coverage: coverage-c coverage-py
	$(VPY) bench/coverage_report.py --lcov $(COV_DIR)/c.info --py $(COV_DIR)/py.json \
	  --root $(CURDIR) --out $(COV_DIR)/summary.json
