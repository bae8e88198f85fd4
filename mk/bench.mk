# make bench [QUICK=1]: every benchmark figure -> bench/results/latest.json and latest.md
# (docs/bench.md). Needs valgrind for the instruction counts; installed here when missing
# (Debian, as root), otherwise the counts are reported as missing.
QUICK ?=
BENCH_ARGS ?=

.PHONY: bench bench-tools

bench-tools:
	@command -v valgrind >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq valgrind >/dev/null; \
	  else echo "make bench: valgrind not found, instruction counts will be missing"; fi; }

bench: $(INSTALL_STAMP) bench-tools
	$(VPY) bench/run.py $(if $(QUICK),--quick) $(BENCH_ARGS)
