# ffwd - every target is self-sufficient: it creates .venv and installs the package when needed.
#   make test    C tests (tests/c) + Python tests (tests/) + $(TEST_EXTRA)
#   make demo    the demo (python -m ffwd.demo)
#   make ctest   only the C tests;  make pytest  only the Python tests
#   make clean   build outputs;     make distclean  also .venv
# mk/*.mk files (included at the end) add targets; `TEST_EXTRA += target` adds one to `make test`.

PYTHON ?= python3
VENV ?= .venv
VPY := $(VENV)/bin/python
JOBS ?= 2
HYPOTHESIS_PROFILE ?= ci
PYTEST_ARGS ?=
TEST_EXTRA ?=
CTEST_BUILD ?= build/ctest
VENV_STAMP := $(VENV)/.ffwd-venv
INSTALL_STAMP := $(VENV)/.ffwd-installed
# what the compiled part of the package is built from: a change here means reinstall
BUILD_INPUTS := $(shell find csrc cmake -type f 2>/dev/null) CMakeLists.txt pyproject.toml
# tools the venv needs to build (no build isolation, so rebuilds are incremental) and test
VENV_TOOLS := "scikit-build-core>=0.10" "pybind11>=2.12" "cffi>=1.15" "cmake>=3.18" ninja pytest hypothesis sympy

.PHONY: venv install ctest pytest test demo clean distclean

venv: $(VENV_STAMP)
$(VENV_STAMP):
	@$(PYTHON) -c 'import sys; sys.exit(sys.version_info < (3, 11))' \
	  || { echo "ffwd needs Python >= 3.11 (set PYTHON=...)"; exit 1; }
	$(PYTHON) -m venv $(VENV)
	$(VPY) -m pip install --quiet $(VENV_TOOLS)
	touch $@

install: $(INSTALL_STAMP)
$(INSTALL_STAMP): $(VENV_STAMP) $(BUILD_INPUTS)
	$(VPY) -m pip install --quiet --no-build-isolation -e '.[test]'
	touch $@

ctest: $(VENV_STAMP)
	$(VENV)/bin/cmake -S . -B $(CTEST_BUILD) -DCMAKE_BUILD_TYPE=Release \
	  -DFFWD_BUILD_TESTS=ON -DFFWD_BUILD_PYTHON=OFF -DFFWD_WERROR=ON
	$(VENV)/bin/cmake --build $(CTEST_BUILD) -j $(JOBS)
	cd $(CTEST_BUILD) && $(CURDIR)/$(VENV)/bin/ctest --output-on-failure -j $(JOBS)

pytest: $(INSTALL_STAMP)
	HYPOTHESIS_PROFILE=$(HYPOTHESIS_PROFILE) FFWD_REQUIRE_BUILD=1 $(VPY) -m pytest -q --durations=15 tests $(PYTEST_ARGS)

# TEST_EXTRA is expanded a second time so mk/*.mk (read after this rule) can still add to it
.SECONDEXPANSION:
test: ctest pytest $$(TEST_EXTRA)

demo: $(INSTALL_STAMP)
	@if [ -f ffwd/demo.py ]; then $(VPY) -m ffwd.demo; \
	else echo "make demo: the demo is not built yet (ffwd/demo.py is missing)"; fi

clean:
	rm -rf build _skbuild dist .pytest_cache .hypothesis $(INSTALL_STAMP)
	find . -name __pycache__ -type d -not -path './$(VENV)/*' -prune -exec rm -rf {} +

distclean: clean
	rm -rf $(VENV)

-include mk/*.mk
