# The C tests built for the CPU level x86-64-v3 with fused multiply-add contraction: the
# build that bench/run.py measures beside the portable one (its flags are bench/cbuild.py's
# CPU_LEVELS, one list for the bench and the tests). Part of `make test` where this machine
# can run such code; skipped, with the reason, where not.
#   make ctest-cpu-level
CPULEVEL_BUILD ?= build/ctest-x86-64-v3

.PHONY: ctest-cpu-level

ctest-cpu-level: $(VENV_STAMP)
	@why=$$($(VPY) -c "from bench import cbuild; print(cbuild.cpu_level_runs('x86-64-v3'))"); \
	if [ -n "$$why" ]; then echo "ctest-cpu-level: skipped ($$why)"; exit 0; fi; \
	flags=$$($(VPY) -c "from bench import cbuild; print(' '.join(cbuild.CPU_LEVELS['x86-64-v3']))"); \
	$(VENV)/bin/cmake -S . -B $(CPULEVEL_BUILD) -DCMAKE_BUILD_TYPE=Release -DFFWD_BUILD_TESTS=ON \
	  -DFFWD_BUILD_PYTHON=OFF -DFFWD_BUILD_PROGRAMS=OFF -DFFWD_WERROR=ON \
	  -DCMAKE_C_FLAGS="$$flags" >/dev/null && \
	$(VENV)/bin/cmake --build $(CPULEVEL_BUILD) -j $(JOBS) >/dev/null && \
	cd $(CPULEVEL_BUILD) && $(CURDIR)/$(VENV)/bin/ctest --output-on-failure -j $(JOBS) && \
	echo "ctest-cpu-level: C tests passed built with $$flags"

TEST_EXTRA += ctest-cpu-level
