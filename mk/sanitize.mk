# The C tests under AddressSanitizer + UndefinedBehaviorSanitizer and under valgrind
# memcheck; both are part of `make test` and must report nothing (docs/reliability.md).
#   make sanitize   ASan + UBSan build of the core and tests/c (build/asan), then ctest
#   make memcheck   every C test of the ctest build under valgrind memcheck
# Slow programs get a smaller workload under instrumentation (same code paths).
ASAN_BUILD ?= build/asan
SAN_FLAGS := -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer -g -O1
MEMCHECK_ENV := FFWD_STRESS_READS=20000
MEMCHECK_ARGS_test_trig := 200000
VALGRIND := valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite,indirect \
            --track-origins=yes

.PHONY: sanitize memcheck valgrind-tool

sanitize: $(VENV_STAMP)
	$(VENV)/bin/cmake -S . -B $(ASAN_BUILD) -DCMAKE_BUILD_TYPE=Debug -DFFWD_BUILD_TESTS=ON \
	  -DFFWD_BUILD_PYTHON=OFF -DFFWD_BUILD_PROGRAMS=OFF -DFFWD_WERROR=ON \
	  -DCMAKE_C_FLAGS="$(SAN_FLAGS)" -DCMAKE_EXE_LINKER_FLAGS="-fsanitize=address,undefined" \
	  -DCMAKE_SHARED_LINKER_FLAGS="-fsanitize=address,undefined" >/dev/null
	$(VENV)/bin/cmake --build $(ASAN_BUILD) -j $(JOBS)
	cd $(ASAN_BUILD) && FFWD_STRESS_READS=200000 \
	  ASAN_OPTIONS=detect_leaks=1:abort_on_error=0:halt_on_error=1 \
	  UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
	  $(CURDIR)/$(VENV)/bin/ctest --output-on-failure -j $(JOBS)
	@echo "sanitize: C tests passed under ASan + UBSan with no report"

valgrind-tool:
	@command -v valgrind >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq valgrind >/dev/null; \
	  else echo "make memcheck: valgrind is needed (apt-get install valgrind)"; exit 1; fi; }

memcheck: ctest valgrind-tool
	@fail=0; n=0; for t in $(CTEST_BUILD)/test_*; do \
	  [ -x "$$t" ] && [ -f "$$t" ] || continue; name=$$(basename $$t); n=$$((n+1)); \
	  case $$name in test_trig) args="$(MEMCHECK_ARGS_test_trig)";; *) args="";; esac; \
	  if env $(MEMCHECK_ENV) $(VALGRIND) $$t $$args >/dev/null 2>$(CTEST_BUILD)/$$name.memcheck; then \
	    echo "memcheck $$name: clean"; \
	  else echo "memcheck $$name: FAILED"; cat $(CTEST_BUILD)/$$name.memcheck; fail=1; fi; \
	done; [ $$n -gt 0 ] || { echo "memcheck: no C tests found in $(CTEST_BUILD)"; exit 1; }; exit $$fail

TEST_EXTRA += sanitize memcheck
