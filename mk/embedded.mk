# make embedded: Cortex-M7 (double) and Cortex-M4F (single) builds of the core with code
# size, worst-case stack and a no-heap/no-stdio check, plus the C tests cross-built for
# aarch64 and run under qemu-aarch64 -> build/embedded/report.json (docs/embedded.md).
# The cross compilers and qemu come from Debian's packages, installed here when missing.
EMBEDDED_PKGS := gcc-arm-none-eabi libnewlib-arm-none-eabi gcc-aarch64-linux-gnu \
                 libc6-dev-arm64-cross qemu-user

.PHONY: embedded embedded-tools

embedded-tools:
	@if ! command -v arm-none-eabi-gcc >/dev/null 2>&1 || ! command -v aarch64-linux-gnu-gcc >/dev/null 2>&1 \
	    || ! command -v qemu-aarch64 >/dev/null 2>&1; then \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    echo "installing $(EMBEDDED_PKGS)"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $(EMBEDDED_PKGS) >/dev/null; \
	  else echo "make embedded: install $(EMBEDDED_PKGS) first"; exit 1; fi; fi

embedded: embedded-tools
	$(PYTHON) bench/embedded.py --out build/embedded
