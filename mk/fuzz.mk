# Fuzzing (docs/reliability.md).
#   make fuzz-short   libFuzzer over the C API (30 s) + atheris over the loaders and CSV
#                     readers in one process (40 s) (part of `make test`)
#   make fuzz         the long run: FUZZ_RUNS executions per target (default 1,000,000)
# Corpora are seeded from fuzz/corpus/<target> (the examples) into build/fuzz/corpus.
# clang and its libFuzzer runtime come from Debian's packages (installed here when
# missing, as root); atheris from PyPI into .venv (a plain mutation loop if it fails).
FUZZ_DIR ?= build/fuzz
FUZZ_CC ?= clang
FUZZ_SHORT_API ?= 30
FUZZ_SHORT_LOADER ?= 40
FUZZ_RUNS ?= 1000000
FUZZ_LOADERS := toml dh urdf path_csv log_csv
FUZZ_PKGS := clang libclang-rt-14-dev
FUZZ_CFLAGS := -std=c11 -O1 -g -fsanitize=fuzzer,address,undefined -fno-sanitize-recover=all \
               -Wall -Wextra -Icsrc/include -Icsrc
FUZZ_ENV := ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1

.PHONY: fuzz fuzz-short fuzz-tools fuzz-corpus

fuzz-tools: $(INSTALL_STAMP)
	@mkdir -p $(dir $(FUZZ_DIR)); command -v $(FUZZ_CC) >/dev/null 2>&1 && echo 'int LLVMFuzzerTestOneInput(const unsigned char*d,unsigned long n){(void)d;(void)n;return 0;}' \
	  | $(FUZZ_CC) -x c -fsanitize=fuzzer - -o $(FUZZ_DIR)-probe 2>/dev/null || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    echo "installing $(FUZZ_PKGS)"; apt-get update -qq && \
	    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $(FUZZ_PKGS) >/dev/null; \
	  else echo "make fuzz: needs clang with libFuzzer ($(FUZZ_PKGS))"; exit 1; fi; }
	@rm -f $(FUZZ_DIR)-probe
	@$(VPY) -c 'import atheris' 2>/dev/null || $(VPY) -m pip install --quiet atheris \
	  || echo "atheris did not install: the loaders get the plain mutation fuzzer"

$(FUZZ_DIR)/fuzz_api: fuzz/fuzz_api.c $(wildcard csrc/*.c csrc/*.h csrc/include/*.h csrc/programs/model_build.h) | fuzz-tools
	@mkdir -p $(FUZZ_DIR)
	$(FUZZ_CC) $(FUZZ_CFLAGS) fuzz/fuzz_api.c csrc/*.c -o $@

fuzz-corpus: $(VENV_STAMP)
	@for t in api $(FUZZ_LOADERS); do mkdir -p $(FUZZ_DIR)/corpus/$$t; \
	  cp -n fuzz/corpus/$$t/* $(FUZZ_DIR)/corpus/$$t/ 2>/dev/null || true; done
	@$(PYTHON) fuzz/fuzz_loaders.py --seed-all $(FUZZ_DIR)/corpus/all >/dev/null

# $(1): loader targets, $(2): libFuzzer limit option
define fuzz_loaders
	@for t in $(1); do \
	  (cd $(FUZZ_DIR) && $(CURDIR)/$(VPY) $(CURDIR)/fuzz/fuzz_loaders.py $$t $(2) \
	    -print_final_stats=1 corpus/$$t > $$t.log 2>&1); rc=$$?; \
	  echo "loader $$t: $$(grep -hE '^(stat::number_of_executed_units|stat::average_exec_per_sec|fuzz_loaders)' $(FUZZ_DIR)/$$t.log | tr '\n' ' ')"; \
	  if [ $$rc -ne 0 ]; then grep -vE '^#[0-9]+ ' $(FUZZ_DIR)/$$t.log | tail -25; exit 1; fi; \
	done
endef

define fuzz_api_run
	@(cd $(FUZZ_DIR) && $(FUZZ_ENV) ./fuzz_api $(1) -timeout=25 -print_final_stats=1 corpus/api > api.log 2>&1); rc=$$?; \
	  echo "C API: $$(grep -hE '^stat::number_of_executed_units' $(FUZZ_DIR)/api.log)"; \
	  if [ $$rc -ne 0 ]; then grep -vE '^#[0-9]+ ' $(FUZZ_DIR)/api.log | tail -40; exit 1; fi
endef

fuzz-short: $(FUZZ_DIR)/fuzz_api fuzz-corpus
	$(call fuzz_api_run,-max_total_time=$(FUZZ_SHORT_API))
	$(call fuzz_loaders,all,-max_total_time=$(FUZZ_SHORT_LOADER))
	@echo "fuzz-short: no finding"

fuzz: $(FUZZ_DIR)/fuzz_api fuzz-corpus
	$(call fuzz_api_run,-runs=$(FUZZ_RUNS))
	$(call fuzz_loaders,$(FUZZ_LOADERS),-runs=$(FUZZ_RUNS))
	@echo "fuzz: no finding in $(FUZZ_RUNS) executions per target"

TEST_EXTRA += fuzz-short
